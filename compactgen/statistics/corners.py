"""Corner x temperature table: switching time and critical current of tt, ss and ff at each
temperature, from the reference and from both simulators (ngspice through the library's .lib
sections, VACASK through the Verilog-A ``corner`` parameter).

The drive is a fixed current step (the same for every corner and temperature) from the
antiparallel state at a fixed initial tilt, so the switching times compare the corners directly:
a sane library has ss slower than tt slower than ff, and I_c0 in the same order, at every
temperature.
"""
from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np

from compactgen.targets import render
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.model.variation import CORNERS
from compactgen.statistics.ensemble import current_step, ensemble_task, ngspice_ensemble_deck, vacask_ensemble_netlist
from compactgen.model.ir import ModelIR
from compactgen.targets.printing.base import format_number
from compactgen.model.evaluate import figures
from compactgen.statistics.stochastic import StochasticModel, initial_vectors
from compactgen.sim.tasks import run_tasks

TEMPERATURES_C = (-40.0, 25.0, 125.0)
TILT0 = 0.05  # [rad] fixed initial cone angle of every corner run


def corner_table(ir: ModelIR, drive_ratio: float = 3.5, temperatures_c=TEMPERATURES_C, corners=("tt", "ss", "ff"),
                 simulators=("ngspice", "vacask"), t_stop: float = 10e-9, max_step: float = 2e-12,
                 scheduler: str | None = None, progress=None) -> list[dict]:
    """Rows (corner, temperature, I_c0, switching time per engine) for a current step of
    ``drive_ratio`` x I_c0(tt, 25 degC)."""
    current = drive_ratio * figures(ir, temperature=25.0 + ZERO_CELSIUS)["i_c0"]
    inst_params = [("state0", "-1.0"), ("thermal_rest", "0.0"), ("tilt0", format_number(TILT0)), ("phi0", "0.0")]
    lib_text, va_text = render.ngspice(ir), render.verilog_a(ir)
    tasks, keys = [], []
    for t_c in temperatures_c:
        t_k = t_c + ZERO_CELSIUS
        if "ngspice" in simulators:
            for c in corners:
                with tempfile.TemporaryDirectory() as tmp:
                    p = Path(tmp) / f"{ir.name}.lib"
                    p.write_text(lib_text)
                    deck = ngspice_ensemble_deck(ir, str(p), [dict(i=1, params=inst_params)], current, t_stop, t_k,
                                                 max_step, title=f"corner {c} at {t_c:g} degC", section=c)
                tasks.append(dict(sim="ngspice", name=ir.name, lib_text=lib_text, deck=deck.replace(str(p), "@LIB@"),
                                  instances=[dict(i=1)], state0=-1.0))
                keys.append(("ngspice", t_c, [c]))
        if "vacask" in simulators:
            models = [dict(name=f"m_{c}", params=[("corner", format_number(CORNERS[c]))]) for c in corners]
            inst = [dict(i=k + 1, params=inst_params, model=f"m_{c}") for k, c in enumerate(corners)]
            net = vacask_ensemble_netlist(ir, f"{ir.name}.osdi", inst, current, t_stop, t_k, max_step, models=models,
                                          title=f"corners at {t_c:g} degC")
            tasks.append(dict(sim="vacask", name=ir.name, va_text=va_text, netlist=net, instances=inst, state0=-1.0))
            keys.append(("vacask", t_c, list(corners)))
    results = run_tasks(ensemble_task, tasks, scheduler=scheduler, progress=progress, what="corner runs")
    sim_t = {}
    for (sim, t_c, cs), res in zip(keys, results):
        for c, v in zip(cs, res):
            sim_t[(sim, t_c, c)] = float(v)
    rows = []
    step = current_step(current)
    m0 = initial_vectors(np.array([TILT0]), np.array([0.0]), -1.0)
    for t_c in temperatures_c:
        t_k = t_c + ZERO_CELSIUS
        for c in corners:
            over = {"corner": CORNERS[c]}
            sm = StochasticModel(ir, over, temperature=t_k, drive="current")
            ref = sm.run(1, t_stop, 0.25e-12, step.value, seed=0, m0=m0, thermal_field=False, engine="numpy")
            row = dict(corner=c, temp_c=t_c, i_c0=figures(ir, over, temperature=t_k)["i_c0"],
                       current=current, reference=float(ref.t_cross[0]))
            for sim in simulators:
                row[sim] = sim_t[(sim, t_c, c)]
            rows.append(row)
    return rows


def ordering_problems(rows: list[dict], engines=("reference", "ngspice", "vacask")) -> list[str]:
    """Where the corner order ss > tt > ff (switching time and I_c0) is broken, per temperature."""
    out = []
    by = {(r["temp_c"], r["corner"]): r for r in rows}
    for t_c in sorted({r["temp_c"] for r in rows}):
        try:
            ss, tt, ff = by[(t_c, "ss")], by[(t_c, "tt")], by[(t_c, "ff")]
        except KeyError:
            continue
        if not ss["i_c0"] > tt["i_c0"] > ff["i_c0"]:
            out.append(f"{t_c:g} degC: I_c0 not ordered ss > tt > ff")
        for e in engines:
            if e in tt and not (ss[e] > tt[e] > ff[e]):
                out.append(f"{t_c:g} degC, {e}: switching time not ordered ss > tt > ff "
                           f"({ss[e]:.4g}, {tt[e]:.4g}, {ff[e]:.4g} s)")
    return out


def format_rows(rows: list[dict], engines=("reference", "ngspice", "vacask")) -> str:
    head = f"{'corner':6} {'T [degC]':>8} {'I_c0 [uA]':>10} " + " ".join(f"{e + ' t_sw [ns]':>20}" for e in engines)
    lines = [head]
    for r in rows:
        lines.append(f"{r['corner']:6} {r['temp_c']:8.0f} {r['i_c0'] * 1e6:10.2f} "
                     + " ".join(f"{r.get(e, float('nan')) * 1e9:20.4f}" for e in engines))
    return "\n".join(lines)
