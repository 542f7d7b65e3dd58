"""Ensemble throughput: 1e4 macrospins x 20 ns at 1 ps steps (2e8 trajectory-steps), stochastic
LLG with Brown's field, compiled (numba) kernel and numpy engine measured side by side.

Run: python benchmarks/bench_ensemble.py [n_spins] [t_ns]
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"

if __name__ == "__main__":
    import numba

    from compactgen.model.card import load_card
    from compactgen.model.evaluate import figures
    from compactgen.statistics.stochastic import StochasticModel

    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000
    t_end = (float(sys.argv[2]) if len(sys.argv) > 2 else 20.0) * 1e-9
    dt = 1e-12
    ir = load_card(EXAMPLES / "pmtj35_demo.toml").ir()
    sm = StochasticModel(ir, temperature=300.15, drive="current")
    current = 1.5 * figures(ir)["i_c0"]
    t0 = time.perf_counter()
    sm.run(8, 10e-12, dt, lambda t: current, seed=0, engine="compiled")
    print(f"numba compile (once per model structure): {time.perf_counter() - t0:.2f} s")
    steps = int(round(t_end / dt))
    rates = {}
    for engine, nn in (("compiled", n), ("numpy", min(n, 10_000))):
        t0 = time.perf_counter()
        res = sm.run(nn, t_end if engine == "compiled" else min(t_end, 2e-9), dt, lambda t: current, seed=1,
                     engine=engine)
        el = time.perf_counter() - t0
        rate = nn * res.steps / el
        rates[engine] = rate
        print(f"{engine:8s}: {nn} spins x {res.steps} steps in {el:.2f} s = {rate / 1e6:.2f} M trajectory-steps/s "
              f"({numba.get_num_threads()} numba threads)" if engine == "compiled" else
              f"{engine:8s}: {nn} spins x {res.steps} steps in {el:.2f} s = {rate / 1e6:.2f} M trajectory-steps/s")
    print(f"compiled / numpy = {rates['compiled'] / rates['numpy']:.1f}x; "
          f"goal 1e4 x 20 ns at 1 ps in <= 10 s needs 20 M trajectory-steps/s")
