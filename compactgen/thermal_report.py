"""Thermal figures for the datasheet and the demo: Delta and retention against temperature,
critical current against temperature, write-error-rate curves, switching-probability plots.
"""
from __future__ import annotations

import html
import math
from pathlib import Path

import numpy as np

from . import bignum
from .analytic import precessional_probability, retention_time
from .constants import ZERO_CELSIUS
from .ir import ModelIR
from .reference import figures

TABLE_TEMPS_C = (-40.0, 0.0, 25.0, 85.0, 125.0, 150.0)
WER_RATIOS = (1.5, 2.0, 3.0)
WER_WIDTHS = (2e-9, 5e-9, 10e-9, 20e-9)


def thermal_context(ir: ModelIR) -> dict | None:
    """Numbers for the datasheet's thermal section, or None for a model without a free layer."""
    if not {"delta", "i_c0"} <= {f.name for f in ir.figures}:
        return None
    try:
        figs = {t: figures(ir, temperature=t + ZERO_CELSIUS) for t in TABLE_TEMPS_C}
    except KeyError:
        return None
    rows = []
    for t, f in figs.items():
        rows.append(dict(temp=f"{t:g}", delta=f"{f['delta']:.1f}", retention=_duration(retention_time(f["delta"])),
                         dwell=_duration(f.get("dwell_brown", float("nan"))), i_c0=f"{f['i_c0'] * 1e6:.2f}",
                         r_ap=f"{f.get('r_ap', float('nan')):.0f}"))
    f25 = figs[25.0]
    f85 = figures(ir, temperature=85.0 + ZERO_CELSIUS)
    wer = _wer_table(f25["delta"], f25["tau_prec"])
    return dict(delta25=f"{f25['delta']:.1f}", delta85=f"{f85['delta']:.1f}",
                retention25=_duration(retention_time(f25["delta"])), retention85=_duration(retention_time(f85["delta"])),
                rows=rows, wer=wer, widths=[f"{w * 1e9:g} ns" for w in WER_WIDTHS])


def _wer_table(delta: float, tau_prec: float) -> list[dict]:
    """Write-error rates after step pulses of WER_RATIOS x I_c0 and WER_WIDTHS, as printed.  The
    critical angles need scipy's root finder, whose import costs more than a cached build: the
    table is remembered by its two numbers in compactgen's cache (compactgen/cache.py)."""
    def compute():
        wer = []
        for i in WER_RATIOS:
            p = precessional_probability(delta, i, np.array(WER_WIDTHS), tau_prec)
            wer.append(dict(ratio=f"{i:g}", values=[f"{max(1 - x, 0.0):.2e}" for x in p]))
        return wer

    if not all(type(x) is float and math.isfinite(x) for x in (delta, tau_prec)):
        return compute()
    from . import cache

    def valid(wer):
        return (isinstance(wer, list) and len(wer) == len(WER_RATIOS)
                and all(isinstance(r, dict) and set(r) == {"ratio", "values"} and isinstance(r["ratio"], str)
                        and isinstance(r["values"], list) and len(r["values"]) == len(WER_WIDTHS)
                        and all(isinstance(v, str) for v in r["values"]) for r in wer))

    key = (f"{cache.source_digest('thermal_report.py', 'analytic.py', 'physics/switching.py')} "
           f"sympy {cache.package_version('sympy')} numpy {cache.package_version('numpy')} "
           f"scipy {cache.package_version('scipy')} delta {delta.hex()} tau_prec {tau_prec.hex()}")
    return cache.remembered("numbers", key, compute, valid, stem="wer")


def _duration(seconds: float) -> str:
    year = 365.25 * 86400
    if bignum.is_overflow(seconds):
        return f"{bignum.sci(bignum.Overflow(seconds.log10 - math.log10(year)), 3)} years"
    if not np.isfinite(seconds):
        return "—"
    if seconds >= 1e3 * year:
        return f"{seconds / year:.2e} years"
    if seconds >= year:
        return f"{seconds / year:.3g} years"
    if seconds >= 86400:
        return f"{seconds / 86400:.3g} days"
    return f"{seconds:.3g} s"


def demo_thermal(card_path, out_dir, n: int = 1000, n_ngspice: int = 200, ratios=(1.5, 2.0, 3.0),
                 scheduler: str | None = None, progress=None) -> Path:
    """Switching-probability curves (reference ensembles, ngspice, VACASK, closed form) and
    retention against temperature, written to OUT/thermal.html.  Returns the file."""
    from .card import load_card
    from .corners import corner_table, format_rows, ordering_problems
    from .ensemble import current_step, simulator_ensembles
    from .report import _figure, png_base64
    from .stochastic import StochasticModel, initial_vectors, sample_initial_angles, wilson_interval

    say = progress or (lambda m: None)
    card = load_card(card_path)
    ir = card.ir()
    temp = 300.15
    f = figures(ir, temperature=temp)
    plt = _figure()
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
