"""Benchmark of `compactgen fit` on the bundled synthetic example (goal: <= 10 s on the project machine).

    python benchmarks/bench_fit.py [--seeds N]

Prints, measured in this one run:
1. the full example fit (R-V, two R-H files, switching counts; 10 free parameters): wall time of
   reading, fitting and writing, the number of model evaluations and the time per evaluation,
   with each stage's share;
2. the same data fitted one measurement type at a time, side by side with the joint fit (ratio);
3. the domain-wall velocity fit of the example wall files through the dw-mtj card path
   (examples/dwtrack_demo.toml): building the card's wall equations (ModelIR + lambdify) and the
   fit, side by side with the stt-mtj fit, and the time per evaluation of both wall files;
4. with --seeds N: N fresh synthetic data sets from each truth card (stt-mtj and dw-mtj), fitted
   from the demo card: the fraction of estimates within 1 and 2 standard errors of the truth
   (expected ~68 % and ~95 %) and, per parameter, the scatter of the estimates divided by the mean
   reported standard error.
"""
from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--seeds", type=int, default=0, help="coverage study over this many noise seeds")
    args = ap.parse_args()
    from compactgen.jobs.calibrate.commands import DEMO_CARD, DEMO_TRUTH, DW_DEMO_CARD, DW_DEMO_TRUTH, demo_data_files, dw_demo_data_files
    from compactgen.jobs.calibrate.data import read_all
    from compactgen.jobs.calibrate.models import nuisance_from
    from compactgen.jobs.calibrate.result import write_fitted_card
    from compactgen.jobs.calibrate.runner import fit_card
    from compactgen.jobs.calibrate.synthetic import make_stt_data, make_wall_data
    from compactgen.jobs.calibrate.wall import steady_state, wall_functions
    from compactgen.model.card import load_card

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

    wall_files = dw_demo_data_files()
    dw_card = load_card(DW_DEMO_CARD)
    wall_data = read_all(wall_files)
    t = time.perf_counter()
    fn = wall_functions(dw_card.ir())
    t_build = time.perf_counter() - t
    t = time.perf_counter()
    dw = fit_card(dw_card, wall_data)
    t_dw = time.perf_counter() - t
    t_fit = sum(st["seconds"] for st in dw.stages)
    print(f"wall-velocity fit (dw-mtj card path): {len(wall_files)} files, {sum(len(d) for d in wall_data)} rows, "
          f"{len(dw.free)} free ({', '.join(dw.free)})")
    print(f"  fit_card {t_dw:6.2f} s in all, of which least squares {t_fit:.2f} s ({dw.nfev} evaluations, "
          f"{1e3 * t_fit / dw.nfev:.2f} ms each); the card's wall equations (ModelIR + lambdify), built alone "
          f"before it (cold caches): {t_build:.2f} s")
    reps = 50
    t = time.perf_counter()
    for _ in range(reps):
        for ds in wall_data:
            steady_state(fn, dw.values, ds.columns["current_density"], ds.columns.get("field", 0.0))
    per = (time.perf_counter() - t) / reps
    print(f"  one steady-state evaluation of both files: {1e3 * per:.2f} ms; dw-mtj fit / stt-mtj fit wall time = "
          f"{t_dw / (t2 - t1):.2f}")
    truth_dw = load_card(DW_DEMO_TRUTH)
    print(f"  {'parameter':10s} {'truth':>10s} {'fitted':>10s} {'std. err':>10s} {'(fit-truth)/se':>15s}")
    for n in dw.free:
        print(f"  {n:10s} {truth_dw.values[n]:10.5g} {dw.values[n]:10.5g} {dw.stderr[n]:10.3g} "
              f"{(dw.values[n] - truth_dw.values[n]) / dw.stderr[n]:15.2f}")

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
        coverage("stt-mtj", args.seeds, time.perf_counter() - t, r.free, tv, z, est, se)
        z, est, se = [], [], []
        t = time.perf_counter()
        with tempfile.TemporaryDirectory() as d:
            for seed in range(1000, 1000 + args.seeds):
                fs = make_wall_data(truth_dw, Path(d) / str(seed), seed=seed, fn=fn)  # same expressions, truth values
                r = fit_card(dw_card, read_all(fs))
                est.append([r.values[n] for n in r.free])
                se.append([r.stderr[n] for n in r.free])
                z.append([(r.values[n] - truth_dw.values[n]) / r.stderr[n] for n in r.free])
        coverage("dw-mtj", args.seeds, time.perf_counter() - t, r.free, truth_dw.values, z, est, se)


def coverage(kind, seeds, seconds, names, tv, z, est, se) -> None:
    z, est, se = np.array(z), np.array(est), np.array(se)
    print(f"{kind} coverage over {seeds} seeds ({seconds:.1f} s): within 1 s.e. "
          f"{100 * np.mean(np.abs(z) <= 1):.0f} % (expect 68), within 2 s.e. {100 * np.mean(np.abs(z) <= 2):.0f} % "
          "(expect 95)")
    print(f"  {'parameter':20s} {'truth':>12s} {'mean fit':>12s} {'mean s.e.':>11s} {'scatter/s.e.':>13s}")
    for k, n in enumerate(names):
        print(f"  {n:20s} {tv[n]:12.5g} {est[:, k].mean():12.5g} {se[:, k].mean():11.3g} "
              f"{est[:, k].std(ddof=1) / se[:, k].mean():13.2f}")


if __name__ == "__main__":
    main()
