"""Ensemble throughput: 1e4 macrospins x 20 ns at 1 ps steps (2e8 trajectory-steps), stochastic
LLG with Brown's field; the compiled kernel before the speed-up ("compiled-legacy": numba's
Mersenne-Twister normals, parameter-only sub-expressions evaluated at every call) and after it
("compiled": xoshiro256+ with Marsaglia's polar method, hoisted coefficients) measured side by side,
then where the time of each goes (normals, right-hand side, the rest), and the numpy engine.

Run: python3 benchmarks/bench_ensemble.py [n_spins] [t_ns]
"""
from __future__ import annotations

import sys
import time
from pathlib import Path

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def _normals_only(numba, legacy: bool):
    """A kernel that only draws the 3 normals per step of each spin (same loop shape)."""
    import numpy as np

    from compactgen.statistics.stochastic import _rng_functions

    rng = _rng_functions(numba)
    seed_, polar = rng["_seed"], rng["_polar"]
    if legacy:
        @numba.njit(parallel=True)
        def kernel(n, steps, seeds, out):
            for j in numba.prange(n):
                np.random.seed(seeds[j])
                acc = 0.0
                for k in range(steps):
                    acc += np.random.standard_normal() + np.random.standard_normal() + np.random.standard_normal()
                out[j] = acc
    else:
        @numba.njit(parallel=True)
        def kernel(n, steps, seeds, out):
            for j in numba.prange(n):
                st = np.empty(4, np.uint64)
                seed_(st, seeds[j])
                acc = 0.0
                spare = 0.0
                has = False
                for k in range(steps):
                    if has:
                        g1, g2 = polar(st)
                        acc += spare + g1 + g2
                        has = False
                    else:
                        g1, g2 = polar(st)
                        g3, spare = polar(st)
                        acc += g1 + g2 + g3
                        has = True
                out[j] = acc
    return kernel


if __name__ == "__main__":
    import numba
    import numpy as np

    from compactgen.model.card import load_card
    from compactgen.model.evaluate import figures
    from compactgen.statistics.stochastic import StochasticModel

    n = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000
    t_end = (float(sys.argv[2]) if len(sys.argv) > 2 else 20.0) * 1e-9
    dt = 1e-12
    ir = load_card(EXAMPLES / "pmtj35_demo.toml").ir()
    sm = StochasticModel(ir, temperature=300.15, drive="current")
    current = 1.5 * figures(ir)["i_c0"]
    drive = lambda t: current  # noqa: E731
    steps = int(round(t_end / dt))
    threads = numba.get_num_threads()
    print(f"{n} spins x {steps} steps ({n * steps / 1e6:.0f} M trajectory-steps), {threads} numba threads")
    for engine in ("compiled-legacy", "compiled"):
        el, _ = _timed(lambda: sm.run(8, 10e-12, dt, drive, seed=0, engine=engine))
        print(f"  compile {engine}: {el:.2f} s (once per model structure)")
    seeds = np.arange(n, dtype=np.int64) + 1
    out = np.zeros(n)
    rows = {}
    for engine in ("compiled-legacy", "compiled"):
        total, res = _timed(lambda: sm.run(n, t_end, dt, drive, seed=1, engine=engine))
        quiet, _ = _timed(lambda: sm.run(n, t_end, dt, drive, seed=1, engine=engine, thermal_field=False))
        kern = _normals_only(numba, engine == "compiled-legacy")
        kern(8, 10, seeds[:8], out[:8])
        draws, _ = _timed(lambda: kern(n, steps, seeds, out))
        rows[engine] = (total, quiet, draws, res)
    print(f"\n{'':16s} {'total':>8s} {'normals':>8s} {'rhs+Heun':>9s} {'other':>7s}  M steps/s  P_sw(end)")
    for engine, (total, quiet, draws, res) in rows.items():
        # "rhs+Heun": the deterministic run (no normals drawn); "normals": the draw-only kernel;
        # "other": what is left (field scaling, table set-up, threads)
        other = max(total - quiet - draws, 0.0)
        print(f"{engine:16s} {total:7.2f}s {draws:7.2f}s {quiet:8.2f}s {other:6.2f}s  {n * steps / total / 1e6:8.1f}"
              f"   {res.switched_by(t_end)[0]:.4f}")
    old, new = rows["compiled-legacy"][0], rows["compiled"][0]
    print(f"\nspeed-up (legacy / new, measured side by side in this run): {old / new:.2f}x; "
          f"goal 1e4 x 20 ns at 1 ps in <= 10 s needs {2e8 / 10 / 1e6:.0f} M trajectory-steps/s")
    nn = min(n, 10_000)
    el, res = _timed(lambda: sm.run(nn, min(t_end, 2e-9), dt, drive, seed=1, engine="numpy"))
    rate = nn * res.steps / el
    print(f"numpy engine: {nn} spins x {res.steps} steps in {el:.2f} s = {rate / 1e6:.2f} M trajectory-steps/s; "
          f"compiled / numpy = {n * steps / new / rate:.1f}x")
