"""The verification harness: the reference solver, the benches, running them in every simulator
and judging the results, and the verification report."""
