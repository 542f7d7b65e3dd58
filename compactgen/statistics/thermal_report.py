"""The demo's thermal report: switching-probability plots from the stochastic ensembles and the
simulators, retention against temperature, the corner x temperature table.
"""
from __future__ import annotations

import html
from pathlib import Path

import numpy as np

from compactgen.statistics.analytic import precessional_probability, retention_time
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.model.evaluate import figures

def demo_thermal(card_path, out_dir, n: int = 1000, n_ngspice: int = 200, ratios=(1.5, 2.0, 3.0),
                 scheduler: str | None = None, progress=None) -> Path:
    """Switching-probability curves (reference ensembles, ngspice, VACASK, closed form) and
    retention against temperature, written to OUT/thermal.html.  Returns the file."""
    from compactgen.model.card import load_card
    from compactgen.statistics.corners import corner_table, format_rows, ordering_problems
    from compactgen.statistics.ensemble import current_step, simulator_ensembles
    from compactgen.targets.plots import png_base64, pyplot
    from compactgen.statistics.stochastic import StochasticModel, initial_vectors, sample_initial_angles, wilson_interval

    say = progress or (lambda m: None)
    card = load_card(card_path)
    ir = card.ir()
    temp = 300.15
    f = figures(ir, temperature=temp)
    plt = pyplot()
    t_stop = 8e-9
    ts = np.linspace(0.5e-9, t_stop, 60)
    fig, axes = plt.subplots(1, len(ratios), figsize=(5.0 * len(ratios), 4.0), squeeze=False)
    table = []
    for ax, i in zip(axes[0], ratios):
        current = i * f["i_c0"]
        rng = np.random.default_rng(1000 + int(10 * i))
        tilt, phi = sample_initial_angles(f["delta"], n, rng)
        say(f"ratio {i:g}: reference ensembles ({n} spins)")
        sm = StochasticModel(ir, temperature=temp, drive="current")
        det = sm.run(n, t_stop, 0.5e-12, current_step(current).value, seed=1, m0=initial_vectors(tilt, phi, -1.0),
                     thermal_field=False)
        sto = sm.run(n, t_stop, 0.5e-12, current_step(current).value, seed=2, state0=-1.0, thermal_field=True)
        say(f"ratio {i:g}: simulators (VACASK {n}, ngspice {n_ngspice} instances)")
        sims = simulator_ensembles(ir, tilt, phi, current, -1.0, temp, t_stop, simulators=("vacask",), chunk=250,
                                   max_step=4e-12, scheduler=scheduler, progress=progress)
        sims.update(simulator_ensembles(ir, tilt[:n_ngspice], phi[:n_ngspice], current, -1.0, temp, t_stop,
                                        simulators=("ngspice",), chunk=10, max_step=4e-12, scheduler=scheduler,
                                        progress=progress))
        closed = precessional_probability(f["delta"], i, ts - 5e-12, f["tau_prec"])
        sun = precessional_probability(f["delta"], i, ts - 5e-12, f["tau_prec"], "sun")
        curves = {"reference, initial angles": det.t_cross, "reference, stochastic LLG": sto.t_cross,
                  "ngspice": sims["ngspice"], "VACASK": sims["vacask"]}
        for (name, tc), style in zip(curves.items(), ("-", "-", "--", ":")):
            p = (np.where(np.isnan(tc), np.inf, tc)[None, :] <= ts[:, None]).mean(axis=1)
            ax.plot(ts * 1e9, p, style, label=f"{name} (N={len(tc)})")
        ax.plot(ts * 1e9, closed, "k-", lw=0.8, label="closed form (exact time)")
        ax.plot(ts * 1e9, sun, "k--", lw=0.8, label="closed form (Sun)")
        ax.set_title(f"I = {i:g} x I_c0 ({current * 1e6:.1f} uA), 27 degC")
        ax.set_xlabel("pulse width [ns]")
        ax.set_ylabel("switching probability")
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7)
        for w in (2e-9, 3e-9, 5e-9):
            cells = [f"{i:g}", f"{w * 1e9:g}"]
            for name, tc in curves.items():
                k = int((np.where(np.isnan(tc), np.inf, tc) <= w).sum())
                lo, hi = wilson_interval(k, len(tc))
                cells.append(f"{k / len(tc):.3f} [{float(lo):.3f}, {float(hi):.3f}]")
            cells.append(f"{precessional_probability(f['delta'], i, w - 5e-12, f['tau_prec'])[0]:.3f}")
            table.append(cells)
    prob_png = png_base64(fig)
    temps = np.linspace(-40, 150, 39)
    deltas = np.array([figures(ir, temperature=t + ZERO_CELSIUS)["delta"] for t in temps])
    fig, ax = plt.subplots(1, 2, figsize=(10, 3.8))
    ax[0].plot(temps, deltas)
    ax[0].set_xlabel("T [degC]")
    ax[0].set_ylabel("Delta = E_b / k_B T")
    ax[0].grid(alpha=0.3)
    ax[1].semilogy(temps, [retention_time(d) / (365.25 * 86400) for d in deltas])
    ax[1].axhline(10, color="gray", lw=0.8)
    ax[1].set_xlabel("T [degC]")
    ax[1].set_ylabel("retention tau0 exp(Delta) [years], tau0 = 1 ns")
    ax[1].grid(alpha=0.3)
    ret_png = png_base64(fig)
    say("corner x temperature table")
    rows = corner_table(ir, t_stop=4e-9, max_step=4e-12, scheduler=scheduler, progress=progress)
    problems = ordering_problems(rows)
    heads = ["I/I_c0", "width [ns]", "reference, initial angles", "reference, stochastic LLG", "ngspice", "VACASK",
             "closed form"]
    th = "".join(f"<th>{html.escape(h)}</th>" for h in heads)
    tr = "".join("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in r) + "</tr>" for r in table)
    page = f"""<!doctype html><html><head><meta charset='utf-8'><title>{ir.name}: thermal behaviour</title>
<style>body{{font-family:sans-serif;max-width:1300px;margin:auto}} table{{border-collapse:collapse;font-size:13px}}
td,th{{border:1px solid #ccc;padding:3px 6px}}</style></head><body>
<h1>{html.escape(ir.name)}: switching probability, retention, corners</h1>
<p>Synthetic demo scenario (invented card values). Switching from AP with a current step; the compact models
get seeded Boltzmann initial angles per instance (deterministic dynamics afterwards); the reference ensembles are
the same initial angles without noise, and the full stochastic LLG (Brown's thermal field during the pulse).
Brackets: 95 % Wilson intervals.</p>
<img src='data:image/png;base64,{prob_png}'/>
<table><tr>{th}</tr>{tr}</table>
<h2>Thermal stability and retention against temperature</h2><img src='data:image/png;base64,{ret_png}'/>
<h2>Corners (fixed current step {rows[0]['current'] * 1e6:.1f} uA from AP)</h2><pre>{html.escape(format_rows(rows))}</pre>
<p>Corner order ss &gt; tt &gt; ff: {'sane at every temperature' if not problems else html.escape('; '.join(problems))}</p>
</body></html>"""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    path = out / "thermal.html"
    path.write_text(page)
    return path
