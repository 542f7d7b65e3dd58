"""HTML reports with matplotlib plots (embedded as PNG, so one file travels alone)."""
from __future__ import annotations

import html

import numpy as np

from compactgen import __version__
from compactgen.harness.verify import SuiteResult
from compactgen.targets.plots import png_base64, pyplot, style_pair

COLORS = {"reference": "black", "ngspice": "tab:blue", "ngspice-osdi": "tab:green", "vacask": "tab:orange"}
STYLES = {"reference": "-", "ngspice": "--", "ngspice-osdi": "-.", "vacask": ":"}


def bench_plot(run) -> str | None:
    """One figure per bench (PNG, base64): the quantity on top, simulator minus reference below."""
    fig = bench_figure(run)
    return None if fig is None else png_base64(fig)


def bench_figure(run):
    """The matplotlib figure of ``bench_plot`` (None for a bench without plots)."""
    plt = pyplot()
    b = run.bench
    if not b.plot:
        return None
    fig, axes = plt.subplots(2, len(b.plot), figsize=(5.2 * len(b.plot), 4.6), squeeze=False,
                             gridspec_kw={"height_ratios": [3, 1.3]}, sharex="col")
    for col, what in enumerate(b.plot):
        ax, axd = axes[0][col], axes[1][col]
        ref_x, ref_y, xlabel, ylabel = _series(run.traces["reference"], what, b)
        for name, tr in run.traces.items():
            x, y, _, _ = _series(tr, what, b)
            ax.plot(x, y, STYLES.get(name, "-"), color=COLORS.get(name), label=name, lw=1.4)
            if name != "reference" and len(x):
                yi = np.interp(x, ref_x, ref_y) if b.analysis == "tran" else ref_y
                axd.plot(x, y - yi, STYLES.get(name, "-"), color=COLORS.get(name), lw=1.0)
        style_pair(ax, axd, ylabel, xlabel, "sim - ref")
    fig.suptitle(f"{b.name}: {b.title}", fontsize=9)
    return fig


def resistance_label(term: str) -> str:
    """What a "resistance" plot shows: the swept port's V/I, whatever else that path holds."""
    return f"V({term})/I({term}) [ohm]"


def _series(tr, what: str, bench):
    if bench.analysis == "dc":
        term = bench.sweep[0]
        v = tr.voltages[term]
        if what == "resistance":
            i = tr.currents[term]
            with np.errstate(divide="ignore", invalid="ignore"):
                r = np.where(np.abs(v) > 1e-9, v / i, np.nan)
            return v, r, f"V({term}) [V]", bench.labels.get("resistance") or resistance_label(term)
        return v, tr.currents[term] * 1e6, f"V({term}) [V]", f"I({term}) [uA]"
    t = tr.t * 1e9
    kind, name = what.split(":")
    if kind == "state":
        return t, tr.states[name], "t [ns]", name
    if kind == "current":
        return t, tr.currents[name] * 1e6, "t [ns]", f"I({name}) [uA]"
    if kind == "voltage":
        return t, tr.voltages[name], "t [ns]", f"V({name}) [V]"
    raise ValueError(f"unknown plot quantity {what!r}")


def verify_html(result: SuiteResult, title: str = "", notes: list[str] | None = None) -> str:
    rows = []
    for r in result.rows:
        cls = "pass" if r.passed else "fail"
        vals = "".join(f"<td>{_fmt(r.values.get(s))}</td>" for s in result.simulators)
        rows.append(f"<tr class='{cls}'><td>{html.escape(r.bench)}</td><td>{html.escape(r.metric)}</td>"
                    f"<td>{html.escape(r.unit)}</td><td>{_fmt(r.reference)}</td>{vals}<td>{r.error:.3f}</td>"
                    f"<td>{html.escape(r.tolerance)}</td><td title='{html.escape(r.reason)}'>"
                    f"{'pass' if r.passed else 'FAIL ' + html.escape(r.note)}</td></tr>")
    from compactgen.harness.verify import REFERENCE_RTOL, SIMULATOR_TEXT

    sims = "".join(f"<th title='{html.escape(SIMULATOR_TEXT.get(s, s))}'>{s}</th>" for s in result.simulators)
    legend = "; ".join(f"{s}: {SIMULATOR_TEXT.get(s, s)}" for s in result.simulators)
    skipped = "".join(f"<li><b>{html.escape(n)}</b> not applicable: {html.escape(why)}</li>"
                      for n, _, why in result.not_applicable)
    skipped += "".join(f"<li><b>{html.escape(n)}</b> finding: {html.escape(f)}</li>" for n, f in result.findings)
    notes = list(notes or []) + ([f"Simulators: {legend}."] if legend else [])
    plots = []
    for run in result.runs:
        png = bench_plot(run)
        if png:
            plots.append(f"<h3>{html.escape(run.bench.name)}</h3><img src='data:image/png;base64,{png}'/>")
    reasons = sorted({(r.tolerance, r.reason) for r in result.rows})
    reason_html = "".join(f"<li><b>{html.escape(t)}</b>: {html.escape(w)}</li>" for t, w in reasons)
    verdict = "all benches pass" if result.passed else "SOME BENCHES FAIL"
    extra = "".join(f"<p>{html.escape(n)}</p>" for n in (notes or []))
    return f"""<!doctype html><html><head><meta charset='utf-8'><title>{html.escape(title or result.model)}</title>
<style>body{{font-family:sans-serif;max-width:1200px;margin:auto}} table{{border-collapse:collapse;font-size:13px}}
td,th{{border:1px solid #ccc;padding:3px 6px}} tr.fail{{background:#fdd}} tr.pass td:last-child{{color:#070}}</style>
</head><body><h1>{html.escape(title or 'Verification of ' + result.model)}</h1>
<p>compactgen {__version__}. Verdict: <b>{verdict}</b> ({sum(r.passed for r in result.rows)} of {len(result.rows)} metrics).
Every bench ran on the Python reference (scipy solve_ivp, DOP853 or Radau as the bench says, rtol {REFERENCE_RTOL:g}) and in each simulator; the error column is
|simulator - reference| divided by the tolerance (at most 1 passes).</p>{extra}{"<ul>" + skipped + "</ul>" if skipped else ""}
<table><tr><th>bench</th><th>metric</th><th>unit</th><th>reference</th>{sims}<th>error/tol</th><th>tolerance</th><th>verdict</th></tr>
{''.join(rows)}</table><h2>Why these tolerances</h2><ul>{reason_html}</ul><h2>Waveforms</h2>{''.join(plots)}</body></html>"""


def _fmt(x) -> str:
    if x is None or not np.isfinite(x):
        return "nan"
    return f"{x:.6g}"
