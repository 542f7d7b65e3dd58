"""Cost of the output nodes in the ngspice subcircuit (one sampled node per output: res, jdens, ...,
drive_ratio; the statistical draws sit on ground-to-ground sources and take no node), measured on one
harness bench deck: the same deck with the library rendered with and without those nodes, run
alternately in one ngspice worker.  Printed per library: CPU time of the ngspice process (sum over
the runs; robust on a shared machine), median wall time, time points, and the ratio to the library
without output nodes.  ``--previous FILE`` adds a library built by an earlier compactgen (copied
next to the others under the model's name), e.g. one whose only output node was ``stress`` (now ``drive_ratio``).

    PYTHONPATH=. python3 benchmarks/bench_output_nodes.py [--card examples/pmtj35_demo.toml]
        [--bench write_to_p_2ic0] [--repeat 15] [--previous OLD/NAME.lib]

ngspice runs through compactgen.sim, which pins its OpenMP threads to one (`set num_threads=1`).
"""
from __future__ import annotations

import argparse
import os
import statistics
import tempfile
import time
from pathlib import Path

from compactgen.targets import render
from compactgen.harness import verify
from compactgen.model.card import load_card
from compactgen.sim import NgspiceWorker

ROOT = Path(__file__).resolve().parent.parent


def cpu_seconds(pid: int) -> float:
    """User + system CPU time of a process so far (Linux /proc)."""
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--card", default=str(ROOT / "examples" / "pmtj35_demo.toml"))
    ap.add_argument("--bench", default="write_to_p_2ic0")
    ap.add_argument("--repeat", type=int, default=15)
    ap.add_argument("--previous", help="a library file of an earlier build, to compare as well")
    args = ap.parse_args()
    card = load_card(args.card)
    ir = card.ir()
    bench = next(b for b in card.device.benches(ir, card.values) if b.name == args.bench)
    libs = {"without output nodes": render.ngspice(ir, monitors=False), "with output nodes": render.ngspice(ir)}
    if args.previous:
        libs["previous"] = Path(args.previous).read_text()
    with tempfile.TemporaryDirectory() as tmp, NgspiceWorker() as worker:
        decks = {}
        for i, (label, text) in enumerate(libs.items()):
            lib = Path(tmp) / str(i) / f"{ir.name}.lib"  # the sections load the file by its own name
            lib.parent.mkdir()
            lib.write_text(text)
            decks[label] = verify.ngspice_deck(ir, bench, str(lib))
        wall = {k: [] for k in decks}
        cpu = {k: 0.0 for k in decks}
        points = {}
        worker.run(decks["with output nodes"], timeout=600)  # warm up
        for _ in range(args.repeat):
            for label, deck in decks.items():
                c0, t0 = cpu_seconds(worker.pid), time.perf_counter()
                data = worker.run(deck, timeout=600)
                wall[label].append(time.perf_counter() - t0)
                cpu[label] += cpu_seconds(worker.pid) - c0
                points[label] = len(data["time"])
    base = cpu["without output nodes"]
    print(f"{ir.name}, bench {bench.name}, {args.repeat} runs of each library, alternating")
    print(f"output nodes: {', '.join(o.name for o in ir.monitored_outputs())} "
          f"({len(render.draw_params(ir))} statistical draws on ground-to-ground sources, no node)")
    print(f"{'library':22s} {'CPU s/run':>9s} {'wall s (median)':>15s} {'points':>7s} {'CPU us/point':>12s} {'CPU ratio':>9s}")
    for k in decks:
        print(f"{k:22s} {cpu[k] / args.repeat:9.4f} {statistics.median(wall[k]):15.4f} {points[k]:7d} "
              f"{cpu[k] / args.repeat / points[k] * 1e6:12.2f} {cpu[k] / base:9.3f}")


if __name__ == "__main__":
    main()
