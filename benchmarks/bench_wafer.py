"""Time the per-device fits of `compactgen wafer-stats` on a SYNTHETIC wafer of 500 devices (25 dies x
4 sizes x 5 devices of the stt-mtj demo card, R-V and one R-H loop each), against the goal of 60 s on
2 cores; then the population analysis and, unless --no-mc, the Monte Carlo proof in ngspice.

    PYTHONPATH=. python3 benchmarks/bench_wafer.py [--dies 25] [--per-size 5] [--workers 2] [--no-mc]

Prints wall time, devices/s and the CPU time of this process and its children (the machine may be
shared: CPU time shows how much of the wall time was this job).  No test asserts a time.
"""
from __future__ import annotations

import argparse
import os
import resource
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _cpu() -> float:
    s, c = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return s.ru_utime + s.ru_stime + c.ru_utime + c.ru_stime


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--dies", type=int, default=25)
    ap.add_argument("--per-size", type=int, default=5)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--bootstrap", type=int, default=300)
    ap.add_argument("--no-mc", action="store_true")
    args = ap.parse_args()
    from compactgen.jobs.wafer.commands import DEMO_CARD, run_wafer_stats
    from compactgen.jobs.wafer.synthetic import make_wafer
    from compactgen.model.card import load_card

    with tempfile.TemporaryDirectory(prefix="bench-wafer-") as tmp:
        folder = Path(tmp) / "wafer"
        t0 = time.perf_counter()
        truth = make_wafer(load_card(DEMO_CARD), folder, n_dies=args.dies, per_size=args.per_size, seed=2026)
        print(f"synthetic wafer: {truth['devices']} devices ({len(truth['bad_devices'])} planted bad) written in "
              f"{time.perf_counter() - t0:.1f} s", flush=True)
        c0, t0 = _cpu(), time.perf_counter()
        run = run_wafer_stats(DEMO_CARD, folder, Path(tmp) / "out", workers=args.workers, bootstrap=args.bootstrap,
                              mc=not args.no_mc, truth=folder / "truth.json", say=lambda m: None)
        wall, cpu = time.perf_counter() - t0, _cpu() - c0
    s = run.seconds
    n_fit = len(run.fits)
    print(f"machine: {os.cpu_count()} cores; workers {args.workers}; load average {os.getloadavg()[0]:.2f}")
    print(f"per-device fits: {n_fit} devices in {s['fits']:.1f} s wall = {n_fit / s['fits']:.1f} devices/s "
          f"(goal: 500 in 60 s on 2 cores)")
    print(f"population analysis ({args.bootstrap} bootstrap resamples): {s['population']:.1f} s")
    if "mc" in s:
        print(f"Monte Carlo proof: {run.proof.instances} instances x 2 states in ngspice: {s['mc']:.1f} s; "
              f"{'passed' if run.proof.passed else 'FAILED'}")
    print(f"whole command: {wall:.1f} s wall, {cpu:.1f} s CPU (this process and its children)")
    from compactgen.jobs.wafer.report import true_sigmas

    pop = run.population
    print(f"\nrecovered versus true (95 % bootstrap intervals over {pop.n_dies} dies; mismatch at area_ref = "
          f"{pop.area_ref * 1e18:.0f} nm^2):")
    for n, st in pop.params.items():
        if n not in truth["parameters"]:
            continue
        sg, sm = true_sigmas(truth, n, pop.area_ref)
        t = truth["parameters"][n]
        print(f"  {n:5s} mean {st.mean:.5g} [{st.ci_mean[0]:.5g}, {st.ci_mean[1]:.5g}] true {t['mean']:.5g}; "
              f"sigma_global {st.sigma_global:.4f} [{st.ci_global[0]:.4f}, {st.ci_global[1]:.4f}] true {sg:.4f}; "
              f"sigma_mismatch {st.sigma_mismatch:.4f} [{st.ci_mismatch[0]:.4f}, {st.ci_mismatch[1]:.4f}] true {sm:.4f}")
    names = pop.names
    tc = truth["correlation"]
    for i, a in enumerate(names):
        for j in range(i + 1, len(names)):
            b = names[j]
            if a in tc["parameters"] and b in tc["parameters"]:
                tv = tc["population"][tc["parameters"].index(a)][tc["parameters"].index(b)]
                print(f"  correlation {a}-{b}: {pop.correlation[i, j]:+.3f} [{pop.correlation_ci[0][i, j]:+.3f}, "
                      f"{pop.correlation_ci[1][i, j]:+.3f}] true {tv:+.3f}")
    print(f"  diameter offset {pop.offset * 1e9:.3g} nm [{pop.offset_ci[0] * 1e9:.3g}, {pop.offset_ci[1] * 1e9:.3g}] "
          f"true {truth['diameter_offset_m'] * 1e9:.3g} nm")
    flagged = set(run.excluded) | set(pop.outliers)
    print(f"  planted bad devices flagged: {sum(d in flagged for d in truth['bad_devices'])}/{len(truth['bad_devices'])}; "
          f"good devices flagged: {len(flagged - set(truth['bad_devices']))}")
    if run.proof is not None:
        print("\nMonte Carlo proof (sd of ln q, measured [95 %] vs simulated [95 %], KS p):")
        for r in run.proof.rows:
            print(f"  {r.quantity:5s} {r.drawn * 1e9:4.0f} nm: {r.sd_measured:.4f} [{r.sd_ci[0]:.4f}, {r.sd_ci[1]:.4f}] "
                  f"vs {r.sd_simulated:.4f} [{r.sd_sim_ci[0]:.4f}, {r.sd_sim_ci[1]:.4f}]  KS p = {r.ks_p:.3g}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
