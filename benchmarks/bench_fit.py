"""Benchmark of `compactgen fit` on the bundled synthetic example (goal: <= 10 s on the project machine).

    python benchmarks/bench_fit.py [--seeds N]

Prints, measured in this one run:
1. the full example fit (R-V, two R-H files, switching counts; 10 free parameters): wall time of
   reading, fitting and writing, the number of model evaluations and the time per evaluation,
   with each stage's share;
2. the same data fitted one measurement type at a time, side by side with the joint fit (ratio);
3. the domain-wall velocity fit of the example wall files;
4. with --seeds N: N fresh synthetic data sets from the truth card, fitted from the demo card:
   the fraction of estimates within 1 and 2 standard errors of the truth (expected ~68 % and ~95 %)
   and, per parameter, the scatter of the estimates divided by the mean reported standard error.
"""
from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", type=int, default=0, help="coverage study over this many noise seeds")
    args = ap.parse_args()
    from compactgen.calibrate.commands import DEMO_CARD, DEMO_TRUTH, demo_data_files
    from compactgen.calibrate.data import read_all
    from compactgen.calibrate.models import nuisance_from
    from compactgen.calibrate.result import write_fitted_card
    from compactgen.calibrate.runner import fit_card, fit_wall_data
    from compactgen.calibrate.synthetic import TRUTH_WALL, make_stt_data
    from compactgen.card import load_card

    files = demo_data_files()
    t0 = time.perf_counter()
    card = load_card(DEMO_CARD)
    data = read_all(files)
    t1 = time.perf_counter()
    cf = fit_card(card, data)
    t2 = time.perf_counter()
    with tempfile.TemporaryDirectory() as d:
        write_fitted_card(cf, Path(d) / "fitted.toml")
    t3 = time.perf_counter()
    total = t3 - t0
    print(f"full example fit: {len(files)} files, {sum(len(ds) for ds in data)} rows, {len(cf.free)} free parameters")
    print(f"  read card + data {t1 - t0:6.2f} s | fit {t2 - t1:6.2f} s | write card {t3 - t2:6.2f} s | total "
          f"{total:6.2f} s (goal <= 10 s: {'met' if total <= 10 else 'NOT met'})")
    stages = ", ".join(f"{s['name']}: {s['nfev']}" for s in cf.stages)
    print(f"  model evaluations {cf.nfev} ({stages}); "
          f"{1e3 * (t2 - t1) / cf.nfev:.2f} ms per evaluation of all datasets")

    # one measurement type at a time, same code, same run
    by_kind: dict[str, list] = {}
    for ds in data:
        by_kind.setdefault(ds.kind, []).append(ds)
    sep = 0.0
    print("  separately:", end="")
    for kind, group in by_kind.items():
        t = time.perf_counter()
        r = fit_card(card, group)
        dt = time.perf_counter() - t
        sep += dt
        print(f" {kind} {dt:.2f} s ({r.nfev} ev., {len(r.free)} free);", end="")
    print(f"\n  joint / sum of separate fits = {(t2 - t1) / sep:.2f}")

    wall_files = sorted((ROOT / "examples" / "data" / "wall").glob("*.csv"))
    t = time.perf_counter()
    o = fit_wall_data(read_all(wall_files), dict(TRUTH_WALL, d_dmi=0.5e-3, theta_sh=0.2, alpha=0.4),
                      ["d_dmi", "theta_sh", "alpha"])
    dt = time.perf_counter() - t
    print(f"wall-velocity fit: {len(wall_files)} files, 3 free, {dt:.2f} s, {o.nfev} evaluations "
          f"({1e3 * dt / o.nfev:.2f} ms each)")

    if args.seeds:
        truth = load_card(DEMO_TRUTH)
        tv = {**truth.values, **nuisance_from(truth)}
        z, est, se = [], [], []
        t = time.perf_counter()
        with tempfile.TemporaryDirectory() as d:
            for seed in range(1000, 1000 + args.seeds):
                fs = make_stt_data(truth, Path(d) / str(seed), seed=seed)
                r = fit_card(card, read_all(fs))
                est.append([r.values[n] for n in r.free])
                se.append([r.stderr[n] for n in r.free])
                z.append([(r.values[n] - tv[n]) / r.stderr[n] for n in r.free])
        names = r.free
        z, est, se = np.array(z), np.array(est), np.array(se)
        print(f"coverage over {args.seeds} seeds ({time.perf_counter() - t:.1f} s): within 1 s.e. "
              f"{100 * np.mean(np.abs(z) <= 1):.0f} % (expect 68), within 2 s.e. {100 * np.mean(np.abs(z) <= 2):.0f} % "
              "(expect 95)")
        print(f"  {'parameter':20s} {'truth':>12s} {'mean fit':>12s} {'mean s.e.':>11s} {'scatter/s.e.':>13s}")
        for k, n in enumerate(names):
            print(f"  {n:20s} {tv[n]:12.5g} {est[:, k].mean():12.5g} {se[:, k].mean():11.3g} "
                  f"{est[:, k].std(ddof=1) / se[:, k].mean():13.2f}")


if __name__ == "__main__":
    main()
