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
    return 0


if __name__ == "__main__":
    sys.exit(main())
