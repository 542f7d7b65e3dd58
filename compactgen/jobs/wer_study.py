"""`compactgen wer-study CARD -o DIR`: write-error rate of a one-transistor-one-MTJ cell with Brown's
thermal field in ngspice, against the stochastic reference ensemble.

Many seeded cells per netlist (ngspice_decks/wer_1t1mtj.cir.j2: the cell of stt_1t1mtj_cell.cir),
one netlist per chunk and pulse width, run in parallel through sim/tasks.run_tasks.  Every cell
starts antiparallel at its own Boltzmann-drawn angle with the thermal field on (trrandom,
repeatable: the whole study repeats for the same --seed and --chunk).  A cell has failed to write
when its m_z is still below 0 a settling time after the pulse.  The reference ensemble
(statistics/stochastic.py) is driven by a constant current equal to the mean pulse current the
cells drew; its curve is the fraction not yet across the equator by the pulse width.

Writes DIR/wer_study.csv, DIR/wer_study.md (table) and DIR/wer_study.png (plot).
"""
from __future__ import annotations

import dataclasses
import math
import sys
import tempfile
from pathlib import Path

import numpy as np

from compactgen.errors import CardError, CompactgenError

RISE = 20e-12  # [s] bit-line pulse edges
DEFAULT_RATIO = 2.0
NMOS_W = 0.2e-6  # [m] access transistor width of ngspice_decks/stt_1t1mtj_cell.cir


def _say(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def thermal_card(card):
    """The card with the thermal field built in ([options] thermal_field = "noise-sources")."""
    if card.kind != "stt-mtj":
        raise CardError(f"wer-study takes an stt-mtj card (a two-terminal junction for the 1T1MTJ cell), "
                        f"not {card.kind!r}")
    return dataclasses.replace(card, options={**card.options, "thermal_field": "noise-sources"})


def _deck(ir, lib: str, cells: list[dict], width: float, vbl: float, noise_step: float, seed: int,
          temperature: float, settle: float, nmos_w: float) -> str:
    from compactgen.model.constants import ZERO_CELSIUS
    from compactgen.targets import render
    from compactgen.targets.printing.base import format_number as fn

    env = render.environment()
    env.loader.searchpath.append(str(render.TEMPLATE_DIR.parent / "ngspice_decks"))
    t0 = 0.1e-9
    save = render.spice_wrap(".save " + " ".join(f"v(xm{c['i']}.mz) i(vs{c['i']})" for c in cells))
    return env.get_template("wer_1t1mtj.cir.j2").render(
        cells=cells, width=fn(width), lib=lib, module=ir.name, vwl="1.2", vbl=fn(vbl), t0=fn(t0),
        t1=fn(t0 + RISE), t2=fn(t0 + width), t3=fn(t0 + width + RISE), noise_step=fn(noise_step), seed=int(seed),
        temp_c=fn(temperature - ZERO_CELSIUS), save_line=save, t_stop=fn(t0 + width + RISE + settle), nmos_w=fn(nmos_w))


def cell_task(task: dict) -> dict:
    """One netlist of cells: final m_z and mean plateau current of each (module level: Dask-ready)."""
    from compactgen.sim import run_ngspice_batch

    with tempfile.TemporaryDirectory(prefix="compactgen-wer-") as tmp:
        lib = Path(tmp) / "model.lib"
        lib.write_text(task["lib_text"])
        data = run_ngspice_batch(task["deck"].replace("@LIB@", str(lib)), timeout=task.get("timeout", 3600.0))
    t = np.asarray(data["time"])
    plateau = (t >= task["t1"]) & (t <= task["t2"])
    mz = [float(np.asarray(data[f"xm{i}.mz"])[-1]) for i in task["cells"]]
    cur = [float(np.trapezoid(np.asarray(data[f"vs{i}#branch"])[plateau], t[plateau]) / max(np.ptp(t[plateau]), 1e-30))
           for i in task["cells"]]
    return dict(mz=mz, current=cur)


def bit_line_for(ir, ratio: float, i_c0: float, temperature: float, lib_path: str, nmos_w: float = NMOS_W) -> float:
    """The bit-line voltage whose cell current in the antiparallel state is ratio x I_c0 (DC sweep
    of one cell with its state held)."""
    from compactgen.sim import run_ngspice_batch
    from compactgen.model.constants import ZERO_CELSIUS

    deck = (f"* wer-study: bit-line voltage for {ratio:g} x I_c0\n.lib {lib_path} tt\n"
            ".model nacc nmos level=1 vto=0.4 kp=300e-6 lambda=0.02 gamma=0.4 phi=0.7\n"
            "Vwl wl 0 1.2\nVbl bl 0 0\nVs1 bl bl1 0\n"
            f"Xm1 bl1 b1 {ir.name} state0=-1\nM1 b1 wl 0 0 nacc w={nmos_w!r} l=0.1e-6\n"
            f".options temp={temperature - ZERO_CELSIUS!r}\n.dc Vbl 0 3 0.005\n.end\n")
    data = run_ngspice_batch(deck)
    v = np.asarray(data.get("v-sweep", data.get("bl")))
    i = np.asarray(data["vs1#branch"])
    target = ratio * i_c0
    if not np.max(i) >= target:
        raise CompactgenError(f"the cell draws at most {np.max(i) * 1e6:.1f} uA at 3 V on the bit line; "
                              f"{ratio:g} x I_c0 = {target * 1e6:.1f} uA is out of its reach (lower --ratio or "
                              f"widen the access transistor, --nmos-width, now {nmos_w * 1e6:g} um)")
    return float(np.interp(target, i, v))


def run_study(card, out_dir: Path, ratio: float = DEFAULT_RATIO, widths=None, runs: int = 200, seed: int = 1,
              chunk: int = 25, temperature: float = 300.15, reference_spins: int = 20000, workers: int | None = None,
              noise_step: float = 0.0, nmos_w: float = NMOS_W) -> dict:
    from compactgen.model.evaluate import figures, reference_numbers
    from compactgen.sim.tasks import chunks, run_tasks
    from compactgen.statistics.ensemble import chunk_seeds, current_step
    from compactgen.statistics.stochastic import StochasticModel, sample_initial_angles, wilson_interval
    from compactgen.targets import render
    from compactgen.targets.printing.base import format_number

    if runs < 1 or chunk < 1:
        raise CompactgenError(f"--runs and --chunk must be at least 1 (got {runs}, {chunk})")
    if not ratio > 1:
        raise CompactgenError(f"--ratio must be above 1 (a write above I_c0), got {ratio:g}")
    card = thermal_card(card)
    ir = card.ir()
    figs = figures(ir, temperature=temperature)
    num = reference_numbers(ir, {"noise_step": noise_step}, temperature)
    step = float(next(v for k, v in num.items() if str(k) == "noise_dt"))
    tau0 = figs["tau_prec"]
    # Sun's precessional time from the thermal mode angle sets the default pulse widths
    t_sw = tau0 * math.log(math.pi / 2 * math.sqrt(2 * figs["delta"])) / (ratio - 1)
    widths = np.asarray(widths if widths is not None else np.linspace(0.5, 2.5, 5) * t_sw, float)
    if np.any(widths <= 2 * RISE):
        raise CompactgenError(f"pulse widths must exceed {2 * RISE * 1e12:.0f} ps (two edges)")
    settle = 3 * tau0
    out_dir.mkdir(parents=True, exist_ok=True)
    lib_text = render.ngspice(ir)
    with tempfile.TemporaryDirectory(prefix="compactgen-wer-") as tmp:
        lib = Path(tmp) / "model.lib"
        lib.write_text(lib_text)
        vbl = bit_line_for(ir, ratio, figs["i_c0"], temperature, str(lib), nmos_w)
    _say(f"wer-study: {card.name}: I_c0 = {figs['i_c0'] * 1e6:.1f} uA, Delta = {figs['delta']:.1f}; bit line "
         f"{vbl:.3f} V for {ratio:g} x I_c0 (AP); {len(widths)} widths x {runs} cells, noise step {step * 1e12:.2f} ps")
    rng = np.random.default_rng(seed)
    tasks = []
    for w_index, width in enumerate(widths):
        tilt, phi = sample_initial_angles(figs["delta"], runs, rng)
        parts = chunks(list(range(runs)), chunk)
        for part, s in zip(parts, chunk_seeds(seed * 1000 + w_index, len(parts))):
            cells = [dict(i=j + 1, tilt=format_number(tilt[j]), phi=format_number(phi[j])) for j in part]
            deck = _deck(ir, "@LIB@", cells, float(width), vbl, step, s, temperature, settle, nmos_w)
            tasks.append(dict(width=w_index, lib_text=lib_text, deck=deck, cells=[c["i"] for c in cells],
                              t1=0.1e-9 + RISE, t2=0.1e-9 + float(width)))
    results = run_tasks(cell_task, tasks, workers=workers, progress=_say, what="wer-study netlists")
    errors = np.zeros(len(widths), int)
    currents = []
    for task, res in zip(tasks, results):
        errors[task["width"]] += sum(1 for m in res["mz"] if m < 0)
        currents += res["current"]
    i_mean = float(np.mean(currents))
    _say(f"wer-study: reference ensemble, {reference_spins} spins at the cells' mean pulse current {i_mean * 1e6:.1f} uA")
    sm = StochasticModel(ir, temperature=temperature, drive="current")
    ref = sm.run(reference_spins, float(widths.max()), min(step, 1e-12), current_step(i_mean).value, seed=seed,
                 state0=-1.0)
    ref_wer = 1 - ref.switched_by(widths)
    lo, hi = wilson_interval(errors, runs)
    rows = [dict(width_ns=w * 1e9, runs=runs, errors=int(e), wer=e / runs, lo=float(a), hi=float(b), reference=float(r))
            for w, e, a, b, r in zip(widths, errors, lo, hi, ref_wer)]
    _write_outputs(out_dir, card.name, rows, ref, widths, vbl, ratio, i_mean, figs, step, seed)
    return dict(rows=rows, vbl=vbl, current=i_mean, noise_step=step)


def _write_outputs(out_dir: Path, name: str, rows, ref, widths, vbl, ratio, i_mean, figs, step, seed) -> None:
    from compactgen.targets.plots import pyplot

    head = "width_ns,runs,errors,wer,wilson95_lo,wilson95_hi,reference_wer"
    lines = [head] + [f"{r['width_ns']:.6g},{r['runs']},{r['errors']},{r['wer']:.6g},{r['lo']:.6g},{r['hi']:.6g},"
                      f"{r['reference']:.6g}" for r in rows]
    (out_dir / "wer_study.csv").write_text("\n".join(lines) + "\n")
    md = [f"# Write-error rate of the 1T1MTJ cell: {name}", "",
          f"Bit line {vbl:.3f} V ({ratio:g} x I_c0 = {ratio * figs['i_c0'] * 1e6:.1f} uA in the antiparallel state; "
          f"mean pulse current drawn {i_mean * 1e6:.1f} uA), Delta = {figs['delta']:.2f}, thermal field on "
          f"(noise step {step * 1e12:.2f} ps), seed {seed}. WER = cells still antiparallel after the pulse; "
          f"95 % Wilson intervals (E. B. Wilson, J. Am. Stat. Assoc. 22, 209 (1927)). Reference: "
          f"{ref.n} macrospins at a constant current equal to the mean, fraction not across the equator by the width.",
          "", "| pulse width [ns] | cells | errors | WER | 95 % interval | reference |", "|---|---|---|---|---|---|"]
    md += [f"| {r['width_ns']:.3f} | {r['runs']} | {r['errors']} | {r['wer']:.3g} | {r['lo']:.3g} - {r['hi']:.3g} | "
           f"{r['reference']:.3g} |" for r in rows]
    (out_dir / "wer_study.md").write_text("\n".join(md) + "\n")
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    w = np.array([r["width_ns"] for r in rows])
    p = np.array([r["wer"] for r in rows])
    lo = np.array([r["lo"] for r in rows])
    hi = np.array([r["hi"] for r in rows])
    seen = p > 0
    floor = 0.2 / rows[0]["runs"]
    if seen.any():
        ax.errorbar(w[seen], p[seen], yerr=[p[seen] - np.maximum(lo[seen], floor), hi[seen] - p[seen]], fmt="o",
                    capsize=3, label="1T1MTJ cell, ngspice with thermal field (95 % Wilson)")
    if (~seen).any():  # no error seen: only the upper end of the interval says something
        ax.plot(w[~seen], hi[~seen], "v", color="C0", label="no error seen: 95 % upper bound")
    t = np.linspace(0, widths.max(), 200)
    ax.plot(t * 1e9, np.maximum(1 - ref.switched_by(t), 0.1 / ref.n), "-", label="reference ensemble, constant mean current")
    ax.set_yscale("log")
    ax.set_ylim(max(floor * 0.2, 1e-6), 1.2)
    ax.set_xlabel("pulse width [ns]")
    ax.set_ylabel("write-error rate")
    ax.set_title(f"{name}: {ratio:g} x I_c0")
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(out_dir / "wer_study.png", dpi=110)
    plt.close(fig)


def add_commands(sub) -> None:
    p = sub.add_parser("wer-study", help="write-error rate of a 1T1MTJ cell with the thermal field (ngspice)",
                       description="Many seeded transient runs of a one-transistor-one-MTJ cell with Brown's thermal "
                                   "field (ngspice B-source library), WER versus pulse width with 95 % intervals, "
                                   "beside the stochastic reference at the same mean current. Writes wer_study.csv, "
                                   "wer_study.md and wer_study.png into the output folder.")
    p.add_argument("card", help="an stt-mtj card (the thermal field is built in for the study)")
    p.add_argument("-o", "--output", required=True, help="output folder")
    p.add_argument("--ratio", type=float, default=DEFAULT_RATIO, help="write current in the AP state / I_c0 (default 2)")
    p.add_argument("--widths", help="pulse widths in ns, comma separated (default: 0.5-2.5 x Sun's switching time)")
    p.add_argument("--runs", type=int, default=200, help="cells per pulse width (default 200)")
    p.add_argument("--chunk", type=int, default=25, help="cells per netlist (default 25)")
    p.add_argument("--seed", type=int, default=1, help="seed of the initial angles and the noise (default 1)")
    p.add_argument("--nmos-width", type=float, default=NMOS_W * 1e6,
                   help="access transistor width in um (default 0.2, as ngspice_decks/stt_1t1mtj_cell.cir)")
    p.add_argument("--workers", type=int, help="parallel ngspice processes (default: CPUs)")
    p.set_defaults(func=cmd_wer_study)


def cmd_wer_study(args) -> int:
    from compactgen.model.card import load_card

    try:
        widths = [float(x) * 1e-9 for x in args.widths.split(",")] if args.widths else None
    except ValueError as exc:
        raise CompactgenError(f"--widths must be numbers in ns separated by commas: {args.widths!r}") from exc
    out = run_study(load_card(args.card), Path(args.output), ratio=args.ratio, widths=widths, runs=args.runs,
                    seed=args.seed, chunk=args.chunk, workers=args.workers, nmos_w=args.nmos_width * 1e-6)
    for r in out["rows"]:
        print(f"{r['width_ns']:8.3f} ns  WER {r['wer']:.3g} [{r['lo']:.3g}, {r['hi']:.3g}]  reference {r['reference']:.3g}")
    print(f"written: {Path(args.output) / 'wer_study.png'}, wer_study.csv, wer_study.md")
    return 0
