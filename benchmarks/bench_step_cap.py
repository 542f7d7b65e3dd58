"""Accuracy versus cost of the transient step cap, in ngspice and VACASK.

The step cap is given in points per precession period of the card's own FMR frequency:
max step = 1/(N f_fmr).  For each N (and no cap) both write benches of the card at 2 x I_c0 run in
ngspice (shared library) with the B-source library and with the compiled model (OSDI), and in VACASK, with the simulator options of the designer decks
(reltol 1e-4, abstol 1e-12, vntol 1e-7, chgtol 1e-20; `--reltol 1e-6` gives the harness's).
Printed: switching-time error against the reference solver (largest of the benches, in %),
whether the free layer ended in the written state, the CPU time of the simulator per run
(ngspice: its worker process; VACASK: the child processes) relative to N = 25, and the number of
time points up to the switching time (the points a ns switching event costs).

"No cap" means no maximum step given: ngspice then caps the step at the .tran print step
itself (here 10 ps, about 1/8 of the period) and VACASK at its own default.

    PYTHONPATH=. python3 benchmarks/bench_step_cap.py [--card examples/pmtj35_demo.toml]
        [--points 10,25,50,100,0] [--repeat 3] [--reltol 1e-4] [--chgtol default]
        [--set thermal_rest=0,tilt0=0.084]

ngspice runs through compactgen.sim, which pins its OpenMP threads to one (`set num_threads=1`).
"""
from __future__ import annotations

import argparse
import os
import re
import resource
import tempfile
from pathlib import Path

import numpy as np

from compactgen.targets import render
from compactgen.harness import verify
from compactgen.model.card import load_card
from compactgen.targets.printing.base import format_number as fmt
from compactgen.model.evaluate import figures
from compactgen.sim import NgspiceWorker, compile_va_cached, run_vacask

ROOT = Path(__file__).resolve().parent.parent
DESIGNER_OPTIONS = "reltol={reltol} abstol=1e-12 vntol=1e-7 chgtol=1e-20"  # as compactgen.sim.options.DECK_OPTIONS


def cpu_seconds(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def ngspice_deck(ir, bench, lib: Path, max_step: float | None, reltol: float) -> str:
    deck = verify.ngspice_deck(ir, bench, str(lib))
    deck = re.sub(r"^\.options method=trap .*$", ".options method=trap " + DESIGNER_OPTIONS.format(reltol=fmt(reltol)),
                  deck, flags=re.M)
    tran = f".tran {fmt(bench.t_step)} {fmt(bench.t_stop)}" + (f" 0 {fmt(max_step)}" if max_step else "")
    return re.sub(r"^\.tran .*$", tran, deck, flags=re.M)


def vacask_netlist(ir, bench, max_step: float | None, reltol: float) -> str:
    net = verify.vacask_netlist(ir, bench, f"{ir.name}.osdi")
    net = net.replace(f"reltol={fmt(verify.RELTOL)}", f"reltol={fmt(reltol)}")
    net = re.sub(r" maxstep=\S+", f" maxstep={fmt(max_step)}" if max_step else "", net)
    return net


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--card", default=str(ROOT / "examples" / "pmtj35_demo.toml"))
    ap.add_argument("--points", default="10,25,50,100,0", help="points per FMR period; 0 = no cap")
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--reltol", type=float, default=1e-4)
    ap.add_argument("--chgtol", help="ngspice chgtol instead of 1e-20 ('default': ngspice's own 1e-14)")
    ap.add_argument("--set", default="", help="instance values for both benches, e.g. thermal_rest=0,tilt0=0.084 "
                                              "(stt-mtj in the laboratory frame, precession on the nodes)")
    args = ap.parse_args()
    global DESIGNER_OPTIONS
    if args.chgtol:
        DESIGNER_OPTIONS = DESIGNER_OPTIONS.replace(" chgtol=1e-20", "" if args.chgtol == "default"
                                                    else f" chgtol={args.chgtol}")
    card = load_card(args.card)
    ir = card.ir()
    f_fmr = figures(ir)["f_fmr"]
    period = 1.0 / f_fmr
    benches = [b for b in card.device.benches(ir, card.values) if b.name in ("write_to_p_2ic0", "write_to_ap_2ic0")]
    overrides = {k: float(v) for k, v in (kv.split("=") for kv in args.set.split(",") if kv)}
    for b in benches:
        if overrides:
            b.instance.update(overrides)
            b.cached_reference = None
    refs = {}
    for b in benches:
        tr = verify.reference_trace(ir, b)
        refs[b.name] = next(m for m in b.metrics if m.name == "switching time").func(tr)
    osdi = compile_va_cached(render.verilog_a(ir), ir.name)
    rows = []
    sims = ("ngspice", "ngspice-osdi", "vacask")
    with tempfile.TemporaryDirectory() as tmp, NgspiceWorker() as worker, NgspiceWorker() as worker_osdi:
        lib = Path(tmp) / f"{ir.name}.lib"
        lib.write_text(render.ngspice(ir))
        osdi_lib = Path(tmp) / render.osdi_library_file(ir)
        osdi_lib.write_text(render.ngspice_osdi(ir))
        loaded = {ir.name: osdi}
        worker.run(ngspice_deck(ir, benches[0], lib, period / 25, args.reltol), timeout=1200)  # warm up
        worker_osdi.run(ngspice_deck(ir, benches[0], osdi_lib, period / 25, args.reltol), timeout=1200, osdi=loaded)
        run_vacask(vacask_netlist(ir, benches[0], period / 25, args.reltol), {f"{ir.name}.osdi": osdi})
        for n in [int(x) for x in args.points.split(",")]:
            cap = period / n if n else None
            row = dict(n=n, cap=cap)
            for sim in sims:
                errs, ok, cpu, pts = [], True, 0.0, 0
                for b in benches:
                    for _ in range(args.repeat):
                        if sim == "ngspice":
                            deck = ngspice_deck(ir, b, lib, cap, args.reltol)
                            c0 = cpu_seconds(worker.pid)
                            data = worker.run(deck, timeout=1200)
                            cpu += cpu_seconds(worker.pid) - c0
                            tr = verify._trace_ngspice(ir, b, data)
                        elif sim == "ngspice-osdi":
                            deck = ngspice_deck(ir, b, osdi_lib, cap, args.reltol)
                            c0 = cpu_seconds(worker_osdi.pid)
                            data = worker_osdi.run(deck, timeout=1200, osdi=loaded)
                            cpu += cpu_seconds(worker_osdi.pid) - c0
                            tr = verify._trace_ngspice_osdi(ir, b, data)
                        else:
                            net = vacask_netlist(ir, b, cap, args.reltol)
                            c0 = children_cpu()
                            plots = run_vacask(net, {f"{ir.name}.osdi": osdi}, timeout=1200)
                            cpu += children_cpu() - c0
                            tr = verify._trace_vacask(ir, b, plots)
                    tsw = next(m for m in b.metrics if m.name == "switching time").func(tr)
                    final = next(m for m in b.metrics if m.name == "final m_z")
                    ok &= final.meets_expectation(final.func(tr))
                    errs.append(abs(tsw / refs[b.name] - 1) if np.isfinite(tsw) else float("inf"))
                    pts += int(np.count_nonzero(tr.t <= (tsw if np.isfinite(tsw) else tr.t[-1])))
                row[sim] = dict(err=max(errs), ok=ok, cpu=cpu / (args.repeat * len(benches)), pts=pts // len(benches))
            rows.append(row)
            print(f"  N = {n or 'no cap'} done", flush=True)
    base = next((r for r in rows if r["n"] == 25), rows[0])
    print(f"{ir.name}: f_fmr = {f_fmr:.4g} Hz, precession period {period * 1e12:.2f} ps; benches "
          f"{', '.join(b.name for b in benches)} (reference switching times "
          f"{', '.join(f'{refs[b.name] * 1e9:.4f} ns' for b in benches)}); options {DESIGNER_OPTIONS.format(reltol=fmt(args.reltol))}; "
          f"CPU per run, mean of {args.repeat} runs per bench")
    print("columns per path: switching-time error %, written state reached, CPU s per run, CPU relative to "
          "N = 25, time points up to the switching time")
    print(f"{'points/period':>13s} {'step cap':>9s} | " + " | ".join(f"{sim:>13s} {'ok':>3s} {'CPU s':>7s} "
                                                                     f"{'x N=25':>6s} {'points':>7s}" for sim in sims))
    for r in rows:
        cap = f"{r['cap'] * 1e12:.2f} ps" if r["cap"] else "none"
        cells = []
        for sim in sims:
            s = r[sim]
            cells.append(f"{s['err'] * 100:13.3f} {'yes' if s['ok'] else 'NO':>3s} {s['cpu']:7.3f} "
                         f"{s['cpu'] / base[sim]['cpu']:6.2f} {s['pts']:7d}")
        print(f"{r['n'] or 'no cap':>13} {cap:>9s} | " + " | ".join(cells))


if __name__ == "__main__":
    main()
