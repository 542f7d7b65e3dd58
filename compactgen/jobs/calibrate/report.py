"""HTML report of a fit: parameters with standard errors, correlations, warnings, goodness of fit,
and for every dataset the data against the fitted model with its uncertainty band and the
residuals.  Plots are embedded PNGs, so the file travels alone."""
from __future__ import annotations

import html
import math

import numpy as np

from compactgen import __version__
from compactgen.model.constants import MU0
from compactgen.targets.plots import png_base64
from compactgen.jobs.calibrate.fit import Block, FitOutcome, deviance_residuals

BAND = 2.0  # plotted band: +- 2 standard errors of the fitted curve


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _g(x, unit: str = "") -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "n/a"
    return f"{x:.5g}{(' ' + unit) if unit and unit != '1' else ''}"


def _display(spec, value):
    """Value in the ParamSpec's card unit, as a number and the unit."""
    from compactgen.model.units import from_si

    unit = spec.card_unit or spec.unit
    return from_si(value, spec.unit, unit), ("" if unit in ("1", "") else unit)


def block_residuals(block: Block, outcome: FitOutcome, scale: float) -> np.ndarray:
    f = np.asarray(block.predict(outcome.values), float)
    if block.kind == "binomial":
        return deviance_residuals(block.observed, block.attempts, f)
    if block.log:
        return (np.log(block.observed) - np.log(f)) / (block.sigma * scale)
    return (block.observed - f) / (block.sigma * scale)


def wilson(k, n, z=1.96):
    """Wilson score interval of a binomial proportion (E. B. Wilson, J. Am. Stat. Assoc. 22, 209 (1927))."""
    p = k / n
    den = 1 + z * z / n
    c = (p + z * z / (2 * n)) / den
    h = z * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / den
    return np.clip(c - h, 0, 1), np.clip(c + h, 0, 1)


def _xconv(what: str, xlabel: str):
    if "field" in xlabel and "A/m" in xlabel and "A/m^2" not in xlabel:
        return 1e3 * MU0, "field mu0*H [mT]"
    if "current density" in xlabel:
        return 1e-10, "current density [MA/cm^2]"
    if "pulse width" in xlabel:
        return 1e9, "pulse width [ns]"
    return 1.0, xlabel


def curve_plot(block: Block, outcome: FitOutcome, scale: float) -> str | None:
    """Data with the fitted curves (+- 2 standard errors shaded) above, residuals below."""
    info = block.info
    if "curves" not in info:
        return None
    plt = _plt()
    curves = info["curves"](outcome.values)
    keys = list(curves)
    flat = lambda v: np.concatenate([np.asarray(c[1], float) for c in info["curves"](v).values()]) if keys else np.zeros(0)  # noqa: E731
    _, sd = outcome.propagate(flat) if keys else (None, np.zeros(0))
    xf, xlabel = _xconv(info.get("what", ""), info.get("xlabel", "x"))
    x = np.asarray(info["x"], float) * xf
    group = np.asarray(info.get("group", np.full(len(block), "data")))
    groups = list(dict.fromkeys(group))
    binom = block.kind == "binomial"
    y = block.observed / block.attempts if binom else block.observed
    panels = [None]
    if binom:  # one panel per write direction
        panels = list(dict.fromkeys(g.split(" ")[0] for g in groups))
    fig, axes = plt.subplots(2, len(panels), figsize=(6.2 * len(panels), 5.6), squeeze=False,
                             gridspec_kw={"height_ratios": [3, 1.4]})
    cmap = plt.get_cmap("viridis" if len(groups) > 6 else "tab10")
    res = block_residuals(block, outcome, scale)
    sd_by, off = {}, 0
    for g, (cx, cy) in curves.items():
        sd_by[g] = sd[off:off + len(cy)]
        off += len(cy)
    for col, panel in enumerate(panels):
        ax, axr = axes[0][col], axes[1][col]
        mine = [g for g in groups if panel is None or g.startswith(panel + " ")]
        for k, g in enumerate(mine):
            color = cmap(k / max(len(mine) - 1, 1)) if len(groups) > 6 else cmap(k % 10)
            m = group == g
            if binom:
                lo, hi = wilson(block.observed[m], block.attempts[m])
                ax.errorbar(x[m], y[m], yerr=[y[m] - lo, hi - y[m]], fmt="o", ms=3, color=color, lw=0.8,
                            label=g if len(mine) <= 12 else None)
            else:
                ax.plot(x[m], y[m], "o", ms=3.5, color=color, label=f"{g} data" if len(groups) > 1 else "data")
            if g in curves:
                cx, cy = np.asarray(curves[g][0]) * xf, np.asarray(curves[g][1])
                ax.plot(cx, cy, "-", color=color, lw=1.2)
                ax.fill_between(cx, cy - BAND * sd_by[g], cy + BAND * sd_by[g], color="grey", alpha=0.35, lw=0)
            axr.plot(x[m], res[m], "o", ms=3, color=color)
        if "fit" in curves and panel is None:
            cx, cy = np.asarray(curves["fit"][0]) * xf, np.asarray(curves["fit"][1])
            ax.plot(cx, cy, "-", color="k", lw=1.2, label="fit")
            ax.fill_between(cx, cy - BAND * sd_by["fit"], cy + BAND * sd_by["fit"], color="grey", alpha=0.35, lw=0)
        scale_x = info.get("xscale", "linear")
        for a in (ax, axr):
            a.set_xscale(scale_x)
            a.grid(alpha=0.3)
        ax.set_ylabel(info.get("ylabel", "y"))
        if binom:
            ax.set_ylim(-0.03, 1.03)
        ax.set_title(panel or block.name, fontsize=9)
        ax.legend(fontsize=6, ncol=2)
        axr.axhline(0, color="k", lw=0.8)
        axr.set_ylabel("deviance residual" if binom else "residual / sigma")
        axr.set_xlabel(xlabel)
    fig.suptitle(f"{block.name}: data, fit (line), +-{BAND:g} standard errors of the fit (grey)", fontsize=9)
    fig.tight_layout()
    return png_base64(fig)


def loop_plot(plateau: Block, fields: Block, outcome: FitOutcome) -> str:
    """An R-H file: the measured loops, the fitted switching fields with their +-2 s.e. band."""
    plt = _plt()
    ds = plateau.info["dataset"]
    s = plateau.info["summary"]
    h = ds.columns["field"] * MU0 * 1e3
    r = ds.columns["resistance"]
    fit_r, sd_r = outcome.propagate(lambda v: plateau.predict(v))
    fit_h, sd_h = outcome.propagate(lambda v: fields.predict(v))
    fig, (ax, axr) = plt.subplots(1, 2, figsize=(11, 4.2), gridspec_kw={"width_ratios": [3, 1.3]})
    loops = ds.columns.get("loop", np.ones_like(h))
    for k, lp in enumerate(np.unique(loops)):
        m = loops == lp
        ax.plot(h[m], r[m], "-", lw=0.7, alpha=0.8, label=f"loop {int(lp)}")
    for val, sd, spread in ((fit_h[0], sd_h[0], fields.sigma[0]), (fit_h[-1], sd_h[-1], fields.sigma[-1])):
        x = val * MU0 * 1e3
        ax.axvspan(x - spread * MU0 * 1e3, x + spread * MU0 * 1e3, color="tab:red", alpha=0.12)
        ax.axvspan(x - BAND * sd * MU0 * 1e3, x + BAND * sd * MU0 * 1e3, color="grey", alpha=0.4)
        ax.axvline(x, color="k", lw=1.0, ls="--")
    for val, lab in zip(fit_r, ("R_P fit", "R_AP fit")):
        ax.axhline(val, color="k", lw=0.8, ls=":")
    ax.set_xlabel("field mu0*H [mT]")
    ax.set_ylabel("resistance [ohm]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7)
    ax.set_title(f"{ds.name} ({plateau.info['how']}, read bias {plateau.info['v_read']:g} V): fitted median "
                 "switching fields (dashed, grey +-2 s.e.; red +-1 thermal spread)", fontsize=8)
    obs = np.concatenate([plateau.observed, fields.observed])
    pred = np.concatenate([fit_r, fit_h])
    sig = np.concatenate([plateau.sigma, fields.sigma])
    z = (obs - pred) / sig
    rising = fields.info["rising"]
    labels = ["R_P", "R_AP"] + [f"up {k + 1}" for k in range(int(rising.sum()))] + \
        [f"down {k + 1}" for k in range(int((~rising).sum()))]
    colors = ["tab:blue", "tab:blue"] + ["tab:orange" if r else "tab:green" for r in rising]
    axr.bar(range(len(z)), z, color=colors)
    axr.axhline(0, color="k", lw=0.8)
    for lim in (-2, 2):
        axr.axhline(lim, color="grey", lw=0.6, ls=":")
    axr.set_xticks(range(len(z)), labels, fontsize=7, rotation=60)
    axr.set_ylabel("(measured - fit) / sigma")
    axr.set_title("plateaus (sigma: s.e. of the mean) and switching fields\n(sigma: thermal spread and field step)",
                  fontsize=8)
    fig.tight_layout()
    return png_base64(fig)


def corr_plot(names: list[str], corr: np.ndarray) -> str | None:
    if len(names) < 2:
        return None
    plt = _plt()
    n = len(names)
    fig, ax = plt.subplots(figsize=(0.6 * n + 2.5, 0.6 * n + 1.8))
    im = ax.imshow(np.nan_to_num(corr), vmin=-1, vmax=1, cmap="RdBu_r")
    ax.set_xticks(range(n), names, rotation=60, ha="right", fontsize=8)
    ax.set_yticks(range(n), names, fontsize=8)
    for i in range(n):
        for j in range(n):
            c = corr[i, j]
            ax.text(j, i, "n/a" if not np.isfinite(c) else f"{c:+.2f}", ha="center", va="center", fontsize=6.5,
                    color="white" if np.isfinite(c) and abs(c) > 0.6 else "black")
    fig.colorbar(im, ax=ax, fraction=0.04)
    ax.set_title("correlation matrix of the free parameters", fontsize=9)
    fig.tight_layout()
    return png_base64(fig)


_CSS = """<style>body{font-family:sans-serif;max-width:1250px;margin:auto} table{border-collapse:collapse;font-size:13px}
td,th{border:1px solid #ccc;padding:3px 6px;text-align:right} td:first-child,th:first-child{text-align:left}
.warn{color:#a40} .ok{color:#070} .bad{background:#fdd}</style>"""


def parameter_rows(specs, start, values, stderr, free, truth=None) -> str:
    rows = []
    for n in free:
        spec = specs[n]
        v, unit = _display(spec, values[n])
        s0, _ = _display(spec, start[n])
        se = stderr.get(n, math.nan)
        se_d = _display(spec, se)[0] if math.isfinite(se) else math.nan
        rel = abs(se / values[n]) * 100 if values[n] and math.isfinite(se) else math.nan
        cells = [html.escape(n), html.escape(unit), _g(s0), f"<b>{_g(v)}</b>", _g(se_d), _g(rel)]
        cls = ""
        if truth is not None and n in truth:
            t, _ = _display(spec, truth[n])
            z = (values[n] - truth[n]) / se if se and math.isfinite(se) else math.nan
            ok = math.isfinite(z) and abs(z) <= 2
            cls = "" if ok else " class='bad'"
            cells += [_g(t), f"{z:+.2f}" if math.isfinite(z) else "n/a", "yes" if ok else "NO"]
        rows.append(f"<tr{cls}>" + "".join(f"<td>{c}</td>" for c in cells) + "</tr>")
    head = "<tr><th>parameter</th><th>unit</th><th>start</th><th>fitted</th><th>std. error</th><th>rel. error [%]</th>"
    if truth is not None:
        head += "<th>true (synthetic)</th><th>(fit - true)/s.e.</th><th>within 2 s.e.</th>"
    return "<table>" + head + "</tr>" + "".join(rows) + "</table>"


def fit_html(cf, truth: dict[str, float] | None = None, title: str = "") -> str:
    """The report of a card fit (``result.CardFit``); ``truth`` adds a recovered-versus-true column."""
    o: FitOutcome = cf.outcome
    parts = []
    title = title or f"Fit of {cf.card.name} to {len(cf.datasets)} data file(s)"
    files = "".join(f"<tr><td>{html.escape(str(ds.path))}</td><td>{ds.kind}</td><td>{len(ds)}</td>"
                    f"<td><code>{ds.sha256[:16]}...</code></td><td>{html.escape(ds.meta.get('synthetic', ''))}</td></tr>"
                    for ds in cf.datasets)
    parts.append(f"<h1>{html.escape(title)}</h1><p>compactgen {__version__}. Input card "
                 f"<code>{html.escape(str(cf.card.path or cf.card.name))}</code>. "
                 f"{'Converged' if o.success else '<b class=warn>NOT converged</b>'} after {cf.nfev} model evaluations "
                 f"in {sum(s['seconds'] for s in cf.stages):.2f} s ({len(cf.stages)} stage(s): "
                 f"{', '.join(s['name'] for s in cf.stages)}). A fit describes these data; it is no substitute for "
                 "silicon qualification.</p>")
    parts.append("<h2>Data</h2><table><tr><th>file</th><th>measurement</th><th>rows</th><th>sha256</th>"
                 f"<th>label</th></tr>{files}</table>")
    card_free = [n for n in cf.free if n in cf.card.values]
    nuis_free = [n for n in cf.free if n not in cf.card.values]
    parts.append("<h2>Fitted card parameters</h2>" + parameter_rows(cf.specs, cf.start, cf.values, o.stderr,
                                                                       card_free, truth))
    if nuis_free:
        parts.append("<h2>Data-only parameters (not in the card; stored in [provenance])</h2>"
                     + parameter_rows(cf.specs, cf.start, cf.values, o.stderr, nuis_free, truth))
    if cf.fixed:
        parts.append("<h2>Fixed parameters (held at their card values)</h2><p>"
                     + ", ".join(f"<code>{html.escape(n)}</code>" for n in cf.fixed)
                     + " (why: see Warnings and choices below; --fix fixes more, --free chooses the free ones)</p>")
    frows = "".join(f"<tr><td>{html.escape(k)}</td><td>{html.escape(d)}</td><td>{_g(b, u)}</td><td><b>{_g(a, u)}</b>"
                    f"</td><td>{_g(se, u)}</td></tr>" for k, (b, a, se, u, d) in cf.figures.items())
    parts.append("<h2>Key figures of the model (before and after)</h2><table><tr><th>figure</th><th>meaning</th>"
                 f"<th>input card</th><th>fitted</th><th>std. error</th></tr>{frows}</table>")
    msgs = [f"<li class='warn'>{html.escape(w)}</li>" for w in o.warnings]
    msgs += [f"<li>{html.escape(n)}</li>" for n in cf.fixed_notes]
    if msgs:
        parts.append("<h2>Warnings and choices</h2><ul>" + "".join(msgs) + "</ul>")
    srows = []
    for st in o.stats:
        stat = "chi-square" if st.kind == "gaussian" else "deviance"
        note = ""
        if st.kind == "gaussian" and st.scale != 1.0:
            note = f"noise scale estimated from the residuals (x{st.scale:.3g} of the assumed)"
        elif st.kind == "binomial":
            note = "saturated points (0 or N switched) add little deviance, so p is optimistic"
        srows.append(f"<tr><td>{html.escape(st.name)}</td><td>{st.n}</td><td>{stat} {st.statistic:.4g}</td>"
                     f"<td>{st.dof:.1f}</td><td>{st.p_value:.3g}</td><td>{st.rms:.4g}</td><td>{note}</td></tr>")
    parts.append("<h2>Goodness of fit per dataset</h2><table><tr><th>block</th><th>points</th><th>statistic</th>"
                 "<th>dof</th><th>p</th><th>rms residual (SI; relative for R curves)</th><th>note</th></tr>" + "".join(srows) + "</table>")
    png = corr_plot(o.free, o.corr)
    if png:
        parts.append(f"<h2>Correlations</h2><img src='data:image/png;base64,{png}'/>")
    parts.append(f"<h2>Data versus fit</h2><p>Lines: the fitted model; grey: +-{BAND:g} standard errors of the "
                 "fitted curve (from the parameter covariance); error bars on switching probabilities: Wilson 95 % "
                 "intervals.</p>")
    blocks = list(cf.blocks)
    scales = dict(zip((b.name for b in o.blocks), o.scales))
    done = set()
    for b in blocks:
        if b.name in done:
            continue
        if b.info.get("what") == "plateaus":
            partner = next(x for x in blocks if x.info.get("dataset") is b.info["dataset"]
                           and x.info.get("what") == "switching fields")
            png = loop_plot(b, partner, o)
            done |= {b.name, partner.name}
            if png:
                parts.append(f"<h3>{html.escape(b.info['dataset'].name)}: R-H loops</h3>"
                             f"<img src='data:image/png;base64,{png}'/>")
            continue
        else:
            png = curve_plot(b, o, scales.get(b.name, 1.0))
            done.add(b.name)
        if png:
            parts.append(f"<h3>{html.escape(b.name)}</h3><img src='data:image/png;base64,{png}'/>")
    return (f"<!doctype html><html><head><meta charset='utf-8'><title>{html.escape(title)}</title>{_CSS}</head>"
            f"<body>{''.join(parts)}</body></html>")


__all__ = ["fit_html", "curve_plot", "loop_plot", "wilson"]
