"""The comparison as a document: a Markdown file (also the terminal summary) and an HTML report
with old and new curves overlaid and their difference plotted."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from compactgen import __version__
from compactgen.model import bignum
from compactgen.jobs.release.compare import IDENTICAL, Band, Comparison, CurveRow

_PREFIX = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"),
           (1e-12, "p"), (1e-15, "f"))
_ENG_UNITS = ("s", "A", "V", "ohm", "Hz", "W")
YEAR = 365.25 * 86400.0  # [s], Julian year
#: changes below this (relative, or in units of the band) are rounding noise of the solvers and
#: are printed as such rather than as digits that would differ from machine to machine
NOISE = 1e-6


def value_text(x: float | None, unit: str) -> str:
    """4 significant digits, with an SI prefix for the plain units designers read (2.946 ns)."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "—"
    if bignum.is_overflow(x):  # beyond the double range: the true exponent, as in the datasheet
        if unit == "s":
            return f"{bignum.sci(x, 4)} s ({bignum.sci(bignum.Overflow(x.log10 - math.log10(YEAR)), 3)} years)"
        return bignum.sci(x, 4) + ("" if unit in ("", "1") else f" {unit}")
    if math.isinf(x):
        return "inf"
    if unit == "s" and abs(x) >= 1e3:  # retention-like times: seconds and years, no giga-seconds
        return f"{x:.4g} s ({x / YEAR:.3g} years)" if abs(x) >= YEAR else f"{x:.4g} s"
    if unit in _ENG_UNITS and x != 0:
        for f, p in _PREFIX:
            if abs(x) >= f * 0.9995:
                return f"{x / f:.4g} {p}{unit}"
        return f"{x:.4g} {unit}"
    return f"{x:.4g}" if unit in ("", "1") else f"{x:.4g} {unit}"


def pct(rel: float | None) -> str:
    if rel is None:
        return "—"
    if rel == 0:
        return "0"
    if abs(rel) < NOISE:
        return "~0"
    return f"{rel * 100:+.3g} %"


def ratio_text(err: float) -> str:
    if err == 0:
        return "0"
    if math.isinf(err):
        return "inf"
    if err < NOISE:
        return f"<{NOISE:g}"
    return f"{err:.2g}"


def _by_error(rows):
    """Largest error first; errors equal to 6 digits keep their table order."""
    return sorted(rows, key=lambda r: -float(f"{r.error:.6g}"))


def card_value_text(text: str, digits: int) -> str:
    """A card value ("1.14208973367 mJ/m^2") to ``digits`` significant digits ("1.142 mJ/m^2")."""
    number, sep, unit = text.partition(" ")
    try:
        return f"{float(number):.{digits}g}{sep}{unit}"
    except ValueError:
        return text


@dataclass
class Section:
    title: str
    text: list[str] = field(default_factory=list)
    headers: list[str] = field(default_factory=list)
    rows: list[list[str]] = field(default_factory=list)
    bad: list[bool] = field(default_factory=list)
    after: list[str] = field(default_factory=list)
    curves: bool = False  # the HTML report puts the plots here


def _more(items: list[str], n: int = 3) -> str:
    if len(items) <= n:
        return "; ".join(items)
    return "; ".join(items[:n]) + f"; and {len(items) - n} more"


def summary_section(c: Comparison) -> Section:
    rows, bad = [], []
    if c.breaks:
        rows.append(["interface", f"{len(c.breaks)} BREAKING change(s)",
                     _more([f"{b.item}: {b.old} -> {b.new}" for b in c.breaks])])
    else:
        extra = [f"{i.item} ({i.new})" for i in c.interface]
        rows.append(["interface", "unchanged" if not extra else "compatible additions", _more(extra)])
    bad.append(bool(c.breaks))
    origins = {}
    for p in c.params:
        origins[p.origin] = origins.get(p.origin, 0) + 1
    rows.append(["parameters", f"{len(c.params)} of {c.n_params} changed"
                 + (f" ({', '.join(f'{n} {o}' for o, n in origins.items())})" if origins else ""),
                 _more([f"{p.name} {card_value_text(p.old_text, 4)} -> {card_value_text(p.new_text, 4)} "
                        f"({pct(p.rel)}, {p.origin})" for p in c.params])])
    bad.append(False)
    for label, group in (("key figures", c.figures), ("bench figures", c.metrics)):
        out = [r for r in group if not r.ok]
        moved = _by_error(r for r in group if r.ok and r.error >= NOISE)
        if out:
            verdict = f"{len(out)} of {len(group)} OUTSIDE BAND"
            det = [_fig_short(r) for r in _by_error(out)]
        else:
            verdict = f"all {len(group)} within band" + (f" ({IDENTICAL})" if all(r.status == IDENTICAL for r in group)
                                                         else "")
            det = [_fig_short(r) for r in moved]
        rows.append([label, verdict, _more(det)])
        bad.append(bool(out))
    out = c.curves_outside
    n_identical = sum(r.status == IDENTICAL for r in c.curves)
    shown = [r.bench for r in c.curves if r.status == "stimulus changed"]
    judged = len(c.curves) - len(shown)
    if out:
        verdict = f"{len(out)} of {judged} judged benches OUTSIDE BAND"
        det = [f"{r.bench} ({r.column}, {ratio_text(r.error)} x band)" if r.column else f"{r.bench} ({r.status})"
               for r in _by_error(out)]
    else:
        verdict = f"all {judged} judged benches within band" + (f" ({n_identical} {IDENTICAL})" if n_identical else "")
        det = []
    if shown:
        det.insert(0, f"{len(shown)} not judged: stimulus follows the model and changed (see bench figures)")
    rows.append(["curves", verdict, _more(det, 4)])
    bad.append(bool(out))
    rows.append(["overall", "PASS" if c.clean else ("CHANGED, ACCEPTED" if c.accepted else "FAIL"),
                 f"reason: {c.accepted}" if (c.accepted and not c.clean) else ""])
    bad.append(not c.passed)
    return Section("Summary", headers=["check", "verdict", "what changed"], rows=rows, bad=bad)


def change_text(r) -> str:
    """Relative change, or the absolute one for figures with an absolute band (values near 0 or +-1)."""
    if r.old is None or r.new is None:
        return "—"
    if bignum.is_overflow(r.old) or bignum.is_overflow(r.new):
        d = bignum.log10_of(r.new) - bignum.log10_of(r.old)
        if d == 0:
            return "0"
        if math.isnan(d):
            return "—"
        return f"x {10 ** d:.3g}" if abs(d) < 300 else f"x 10^{d:+.4g}"
    if not (math.isfinite(r.old) and math.isfinite(r.new)):
        return "—"
    if r.band.log and r.old > 0 and r.new > 0 and r.new != r.old:
        return f"x {r.new / r.old:.3g}"
    if r.band.rtol == 0 or r.rel is None:
        d = r.new - r.old
        if d == 0:
            return "0"
        return "~0" if abs(d) < NOISE * max(r.band.atol, 1e-300) else f"{d:+.2g}"
    return pct(r.rel)


def _fig_short(r) -> str:
    where = r.name if r.group == "key figure" else f"{r.group} {r.name}"
    return f"{where} {change_text(r)} (band {r.band.text(r.unit)})"


def sections(c: Comparison) -> list[Section]:
    out = [summary_section(c)]
    s = Section("Interface (what designers' netlists depend on)")
    if c.interface:
        s.headers = ["item", "old", "new", "breaks netlists", "note"]
        s.rows = [[i.item, i.old, i.new, "YES" if i.breaking else "no", i.note] for i in c.interface]
        s.bad = [i.breaking for i in c.interface]
    else:
        s.text.append("Unchanged: module name, port order, parameter names, units, kinds and instance defaults, "
                      "outputs, and the stated conventions are identical.")
    out.append(s)
    s = Section("Parameters")
    if c.params:
        s.text.append(f"{len(c.params)} of {c.n_params} parameters changed. 'from' says where the new value "
                      "came from: re-fit (listed as fitted in the new card's provenance, or with a standard "
                      "error), hand edit (typed in a card), computed (derived from other parameters), kind "
                      "default (neither card sets it; the device kind's default changed).")
        s.headers = ["parameter", "old", "new", "change", "from", "change / std. error"]
        s.rows = [[p.name, card_value_text(p.old_text, 6), card_value_text(p.new_text, 6), pct(p.rel), p.origin,
                   "—" if p.sigma is None else f"{p.sigma:+.2g}"] for p in c.params]
        s.bad = [False] * len(c.params)
    else:
        s.text.append(f"All {c.n_params} parameters identical.")
    out.append(s)
    s = Section("Key figures")
    s.text.append("Parameter-only figures of the model, computed from its equations.")
    s.headers = ["figure", "meaning", "old", "new", "change", "band", "change / band", "verdict"]
    s.rows = [[r.name, r.desc, value_text(r.old, r.unit), value_text(r.new, r.unit), change_text(r),
               r.band.text(r.unit), ratio_text(r.error), r.status] for r in c.figures]
    s.bad = [not r.ok for r in c.figures]
    out.append(s)
    s = Section("Bench figures")
    several = len(c.sources) > 1
    s.text.append(f"Each bench figure is compared for {_sources_text(c)}; 'change / band' is "
                  + ("the largest of them (its source in brackets)" if several else "its change over the band")
                  + ". 'old' and 'new' are the reference values.")
    s.headers = ["bench", "figure", "old", "new", "change", "band", "change / band", "verdict"]
    s.rows = [[r.group, r.name, value_text(r.old, r.unit), value_text(r.new, r.unit), change_text(r),
               r.band.text(r.unit),
               ratio_text(r.error) + (f" ({r.source})" if several and r.source and r.error >= NOISE else ""),
               r.status] for r in c.metrics]
    s.bad = [not r.ok for r in c.metrics]
    s.after = [f"{b}: {n}" for b, n in c.stimulus_changes.items()]
    if s.after:
        s.after.insert(0, "Benches whose stimulus follows the model (e.g. pulse amplitudes set from its critical "
                          "current) drive the two releases differently; their figures compare like for like "
                          "only in the bench's own terms:")
    out.append(s)
    s = Section("Curves", curves=True)
    s.text.append("Each bench's curve file compared point by point on the old release's grid over the common "
                  f"range, for {_sources_text(c)}: every terminal current, the states the bench "
                  "observes (plots), and the stimulus voltages when the stimulus is unchanged. The worst column is "
                  "shown. States a bench does not observe (e.g. the in-plane components of a precessing "
                  "magnetisation, whose phase any small change shifts) are kept in the files but not compared. "
                  "Where a bench's stimulus follows the model (a pulse set from its own critical current) and "
                  "changed, the curves answer different questions: their difference is shown, not judged; the "
                  "bench figures carry the verdict.")
    s.headers = ["bench", "verdict", "worst column", "max |new - old|", "diff / band", "band", "note"]
    s.rows = [[r.bench, r.status, r.column, value_text(r.max_diff, r.unit) if r.column else "",
               ratio_text(r.error) if r.column else "", r.band.text(r.unit) if r.band else "", r.note]
              for r in c.curves]
    s.bad = [not r.ok for r in c.curves]
    out.append(s)
    used: dict[str, Band] = {}
    for r in c.figures + c.metrics:
        used.setdefault(r.band.label, r.band)
    for r in c.curves:
        if r.band:
            used.setdefault("curve " + r.band.label, r.band)
    s = Section("Tolerance bands")
    s.headers = ["band", "width", "why"]
    s.rows = [[k, b.text(), b.reason] for k, b in used.items()]
    s.bad = [False] * len(s.rows)
    out.append(s)
    return out


def _sources_text(c: Comparison) -> str:
    sims = [x for x in c.sources if x != "reference"]
    return "the reference solution" + (f" and {', '.join(sims)}" if sims else " only")


def _cell(text: str) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def markdown(c: Comparison) -> str:
    lines = [f"# {c.new} against {c.old}", "",
             f"Verdict: **{c.verdict()}**", "",
             f"compactgen {__version__}; device kind `{c.kind}`. This comparison reads only the two release "
             "bundles (manifests and curve files); nothing was simulated again.", ""]
    if c.accepted:
        lines += [f"Accepted by the releaser with the reason: \"{c.accepted}\"", ""]
    for s in sections(c):
        lines += [f"## {s.title}", ""]
        for t in s.text:
            lines += [t, ""]
        if s.headers:
            lines.append("| " + " | ".join(s.headers) + " |")
            lines.append("|" + "---|" * len(s.headers))
            for row in s.rows:
                lines.append("| " + " | ".join(_cell(x) for x in row) + " |")
            lines.append("")
        if s.after:
            lines.append(s.after[0])
            lines += [f"- {a}" for a in s.after[1:]]
            lines.append("")
    return "\n".join(lines).rstrip() + "\n"


def summary_text(c: Comparison) -> str:
    """The summary table as plain aligned text for the terminal."""
    s = summary_section(c)
    table = [s.headers] + s.rows
    widths = [max(len(r[i]) for r in table[:]) for i in range(2)]
    out = [f"{c.new} against {c.old}: {c.verdict()}"]
    for k, r in enumerate(table):
        out.append(f"  {r[0].ljust(widths[0])}  {r[1].ljust(widths[1])}  {r[2]}".rstrip())
        if k == 0:
            out.append(f"  {'-' * widths[0]}  {'-' * widths[1]}  {'-' * 12}")
    return "\n".join(out)


# ---- HTML ------------------------------------------------------------------------------------
def _series(table, spec: str, source: str = "reference"):
    """x, y, xlabel, ylabel for one plot entry of a bench ("state:mz", "current:t", "resistance")."""
    xs = table.x * (1e9 if table.grid == "time" else 1.0)
    xlabel = "t [ns]" if table.grid == "time" else f"{table.grid} [{table.grid_unit}]"
    if spec == "resistance":
        from compactgen.harness.verify_report import resistance_label

        term = table.grid.split("_", 1)[1]
        i = table.values(f"{source}:current_{term}")
        with np.errstate(divide="ignore", invalid="ignore"):
            r = np.where(np.abs(table.x) > 1e-9, table.x / i, np.nan)
        return xs, r, xlabel, resistance_label(term)
    kind, name = spec.split(":")
    if kind == "state":
        return xs, table.values(f"{source}:{name}"), xlabel, name
    if kind == "current":
        return xs, table.values(f"{source}:current_{name}") * 1e6, xlabel, f"I({name}) [uA]"
    if kind == "voltage":
        col = f"voltage_{name}" if f"voltage_{name}" in table.columns else f"{source}:voltage_{name}"
        return xs, table.values(col), xlabel, f"V({name}) [V]"
    raise ValueError(f"unknown plot quantity {spec!r}")


def curve_plot(row: CurveRow, specs: list[str], old_label: str, new_label: str) -> str | None:
    """Old and new reference curves overlaid, new minus old below (on the old grid)."""
    from compactgen.targets.plots import png_base64, pyplot, style_pair

    if row.old is None or row.new is None or not specs or row.status == "not comparable":
        return None
    plt = pyplot()
    fig, axes = plt.subplots(2, len(specs), figsize=(5.2 * len(specs), 4.6), squeeze=False,
                             gridspec_kw={"height_ratios": [3, 1.3]}, sharex="col")
    for col, spec in enumerate(specs):
        ax, axd = axes[0][col], axes[1][col]
        try:
            xo, yo, xlabel, ylabel = _series(row.old, spec)
            xn, yn, _, _ = _series(row.new, spec)
        except KeyError:
            continue
        ax.plot(xo, yo, "-", color="black", lw=1.6, label=old_label)
        ax.plot(xn, yn, "--", color="tab:red", lw=1.3, label=new_label)
        lo, hi = max(xo.min(), xn.min()), min(xo.max(), xn.max())
        m = (xo >= lo) & (xo <= hi)
        ok = np.isfinite(yn)
        axd.plot(xo[m], np.interp(xo[m], xn[ok], yn[ok]) - yo[m], "-", color="tab:red", lw=1.0)
        style_pair(ax, axd, ylabel, xlabel, "new - old")
    fig.suptitle(f"{row.bench}: {row.status}" + (f" (worst: {row.column}, {ratio_text(row.error)} x band)"
                                                  if row.column else ""), fontsize=9)
    return png_base64(fig)


def html(c: Comparison, plot_specs: dict[str, list[str]]) -> str:
    """The comparison report; ``plot_specs`` maps a bench to its plot entries (from the manifest)."""
    import jinja2

    from compactgen.targets.render import TEMPLATE_DIR

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATE_DIR)), autoescape=True,
                             undefined=jinja2.StrictUndefined)
    plots = []
    for row in c.curves:
        if row.status in (IDENTICAL, "new", "REMOVED"):
            continue
        png = curve_plot(row, plot_specs.get(row.bench, []), c.old, c.new)
        if png:
            plots.append(dict(bench=row.bench, png=png))
    identical = [r.bench for r in c.curves if r.status == IDENTICAL]
    return env.get_template("report/changes.html.j2").render(
        c=c, verdict=c.verdict(), sections=sections(c), plots=plots, identical=identical, version=__version__)
