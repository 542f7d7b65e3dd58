"""The wafer report (HTML, PNG figures embedded): population table with intervals (and the truth of
a synthetic wafer), excluded devices and outliers, the electrical diameter offset, sigma against
1/sqrt(area), correlations, wafer maps, and the Monte Carlo proof (histograms, KS tests)."""
from __future__ import annotations

import html
import math

import numpy as np

from compactgen import __version__
from compactgen.jobs.calibrate.report import _CSS
from compactgen.targets.plots import png_base64, pyplot

#: how the report shows each parameter: unit, scale from SI
SHOW = {"ra": ("ohm um^2", 1e12), "tmr0": ("", 1.0), "ki": ("mJ/m^2", 1e3), "v_half": ("V", 1.0),
        "dmi": ("mJ/m^2", 1e3), "theta_sh": ("", 1.0), "alpha": ("", 1.0)}


def _img(png: str | None) -> str:
    return f"<img src='data:image/png;base64,{png}'/>" if png else ""


def _v(n: str, x: float) -> str:
    unit, s = SHOW.get(n, ("", 1.0))
    return f"{x * s:.5g}{(' ' + unit) if unit else ''}" if math.isfinite(x) else "n/a"


def _ci(pair, fmt="{:.4f}") -> str:
    lo, hi = pair
    return f"[{fmt.format(lo)}, {fmt.format(hi)}]" if math.isfinite(lo) and math.isfinite(hi) else "n/a"


def _inside(x, pair) -> str:
    lo, hi = pair
    if not (math.isfinite(x) and math.isfinite(lo)):
        return ""
    return "<span class=ok>inside</span>" if lo <= x <= hi else "<b class=warn>outside</b>"


def true_sigmas(truth: dict, name: str, area_ref: float) -> tuple[float, float]:
    """A synthetic wafer's true global sigma (random part and radial trend over its dies) and
    mismatch sigma, the latter moved to ``area_ref`` by the area law."""
    t = truth["parameters"][name]
    return (t.get("sigma_global_population", t["sigma_global"]),
            t["sigma_mismatch"] * math.sqrt(truth["area_ref_m2"] / area_ref))


def population_table(pop, truth=None) -> str:
    head = ("<tr><th>parameter</th><th>mean (geometric)</th><th>95 % interval</th><th>sigma_global</th>"
            "<th>95 % interval</th><th>sigma_mismatch at area_ref</th><th>95 % interval</th>"
            "<th>radial trend (centre to outermost die)</th><th>fit-noise share of the variance</th>")
    if truth:
        head += "<th>true mean</th><th>true sigma_global</th><th>true sigma_mismatch at area_ref</th>"
    rows = [head + "</tr>"]
    for n, st in pop.params.items():
        r = (f"<tr><td><code>{n}</code></td><td>{_v(n, st.mean)}</td><td>"
             f"[{_v(n, st.ci_mean[0])}, {_v(n, st.ci_mean[1])}]</td><td>{st.sigma_global:.4f}</td>"
             f"<td>{_ci(st.ci_global)}</td><td>{st.sigma_mismatch:.4f}</td><td>{_ci(st.ci_mismatch)}</td>"
             f"<td>{st.trend:+.4f} &plusmn; {st.trend_se:.4f}</td><td>{st.fit_share:.1%}</td>")
        t = (truth or {}).get("parameters", {}).get(n)
        if truth and t:
            sg, sm = true_sigmas(truth, n, pop.area_ref)
            r += (f"<td>{_v(n, t['mean'])} {_inside(t['mean'], st.ci_mean)}</td><td>{sg:.4f} "
                  f"{_inside(sg, st.ci_global)}</td><td>{sm:.4f} {_inside(sm, st.ci_mismatch)}</td>")
        elif truth:
            r += "<td colspan=3>not varied in the truth</td>"
        rows.append(r + "</tr>")
    return "<table>" + "".join(rows) + "</table>"


def pelgrom_plot(pop) -> str:
    plt = pyplot()
    names = list(pop.params)
    fig, axes = plt.subplots(1, len(names), figsize=(3.6 * len(names), 3.3), squeeze=False)
    for ax, n in zip(axes[0], names):
        st = pop.params[n]
        d_el = np.array(pop.sizes) - pop.offset
        inv = 1 / np.sqrt(math.pi / 4 * d_el**2) * 1e-9  # 1/nm
        sd = np.array([st.size_sigma[s] for s in pop.sizes])
        ax.plot(inv, sd, "o", label="measured sd of ln p per size")
        xx = np.linspace(0, inv.max() * 1.1, 50)
        a_ref_inv = 1 / math.sqrt(pop.area_ref) * 1e-9
        ax.plot(xx, np.sqrt(st.sigma_global**2 + (st.sigma_mismatch * xx / a_ref_inv) ** 2), "-",
                label="sqrt(global^2 + mismatch^2 area_ref/area)")
        ax.plot(xx, st.sigma_mismatch * xx / a_ref_inv, "--", label="mismatch: line through 0")
        ax.axhline(st.sigma_global, color="grey", lw=0.8, ls=":", label="global")
        ax.set_xlabel("1/sqrt(electrical area) [1/nm]")
        ax.set_ylabel("relative sigma")
        ax.set_title(n, fontsize=9)
        ax.set_ylim(bottom=0)
        ax.grid(alpha=0.3)
    axes[0][0].legend(fontsize=6.5)
    fig.tight_layout()
    return png_base64(fig)


def offset_plot(devs_drawn, rp, offset) -> str:
    plt = pyplot()
    fig, ax = plt.subplots(figsize=(4.6, 3.3))
    ax.plot(np.asarray(devs_drawn) * 1e9, np.asarray(rp) ** -0.5, ".", ms=3, alpha=0.5, label="devices")
    sizes = np.unique(devs_drawn)
    med = np.array([np.median(np.asarray(rp)[np.asarray(devs_drawn) == s] ** -0.5) for s in sizes])
    ax.plot(sizes * 1e9, med, "o", label="median per size")
    a, b = np.polyfit(sizes, med, 1)
    xx = np.linspace(0, sizes.max() * 1.05, 20)
    ax.plot(xx * 1e9, a * xx + b, "-", label=f"line: zero at {offset * 1e9:.3g} nm")
    ax.set_xlabel("drawn diameter [nm]")
    ax.set_ylabel("1/sqrt(R_P) [1/sqrt(ohm)]")
    ax.set_xlim(left=0)
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    return png_base64(fig)


def corr_plot(names, corr, title) -> str | None:
    if len(names) < 2:
        return None
    plt = pyplot()
    n = len(names)
    fig, ax = plt.subplots(figsize=(0.7 * n + 2.5, 0.7 * n + 1.8))
    im = ax.imshow(corr, vmin=-1, vmax=1, cmap="RdBu_r")
    ax.set_xticks(range(n), names, rotation=45, ha="right", fontsize=8)
    ax.set_yticks(range(n), names, fontsize=8)
    for i in range(n):
        for j in range(n):
            ax.text(j, i, f"{corr[i, j]:+.2f}", ha="center", va="center", fontsize=8,
                    color="white" if abs(corr[i, j]) > 0.6 else "black")
    fig.colorbar(im, ax=ax, fraction=0.04)
    ax.set_title(title, fontsize=9)
    fig.tight_layout()
    return png_base64(fig)


def wafer_maps(pop, by_dev: dict, dmap: dict, pos: np.ndarray, unit: str) -> str:
    """Die means of each parameter (ln p relative to its size's mean, in %) at the die positions."""
    plt = pyplot()
    names = list(pop.params)
    fig, axes = plt.subplots(1, len(names), figsize=(3.4 * len(names), 3.2), squeeze=False)
    used = set(pop.used)
    for ax, n in zip(axes[0], names):
        st = pop.params[n]
        sums, cnt = np.zeros(len(pos)), np.zeros(len(pos))
        for dev_id, (drawn, vals) in by_dev.items():
            if dev_id in used and n in vals:
                k = dmap[dev_id]
                sums[k] += math.log(vals[n] / st.size_means[drawn])
                cnt[k] += 1
        ok = cnt > 0
        m = np.where(ok, sums / np.maximum(cnt, 1), np.nan) * 100
        lim = np.nanmax(np.abs(m)) or 1.0
        sc = ax.scatter(pos[ok, 0], pos[ok, 1], c=m[ok], cmap="RdBu_r", vmin=-lim, vmax=lim, s=160, marker="s")
        fig.colorbar(sc, ax=ax, fraction=0.05, label="die mean - size mean [%]")
        ax.set_aspect("equal")
        ax.set_title(n, fontsize=9)
        ax.set_xlabel(f"die x [{unit or 'index'}]")
        ax.set_ylabel(f"die y [{unit or 'index'}]")
    fig.tight_layout()
    return png_base64(fig)


def mc_histograms(proof) -> str:
    from compactgen.jobs.wafer.montecarlo import QUANTITIES

    plt = pyplot()
    sizes = sorted({r.drawn for r in proof.rows})
    fig, axes = plt.subplots(len(QUANTITIES), len(sizes), figsize=(3.0 * len(sizes), 2.5 * len(QUANTITIES)),
                             squeeze=False)
    label = {"r_p": "R_P [ohm]", "r_ap": "R_AP [ohm]", "tmr": "TMR"}
    rows = {(r.quantity, r.drawn): r for r in proof.rows}
    for i, q in enumerate(QUANTITIES):
        for j, d in enumerate(sizes):
            ax = axes[i][j]
            m = proof.measured[q].get(d, np.array([]))
            s = proof.simulated[q].get(d, np.array([]))
            if len(m) and len(s):
                lo, hi = min(m.min(), s.min()), max(m.max(), s.max())
                bins = np.linspace(lo, hi, 18)
                ax.hist(m, bins=bins, density=True, alpha=0.55, label=f"measured ({len(m)})")
                ax.hist(s, bins=bins, density=True, histtype="step", lw=1.5, label=f"ngspice mc ({len(s)})")
                r = rows.get((q, d))
                if r:
                    ax.set_title(f"{d * 1e9:.0f} nm: KS p = {r.ks_p:.2g}", fontsize=8)
            ax.set_xlabel(label[q], fontsize=8)
            ax.tick_params(labelsize=7)
            if i == 0 and j == 0:
                ax.legend(fontsize=6.5)
    fig.tight_layout()
    return png_base64(fig)


def draws_plot(proof) -> str | None:
    """Global draws the simulated dies used, pairwise (shows the correlation the library imposes)."""
    g = proof.global_draws
    if g.shape[0] < 3 or g.shape[1] < 2:
        return None
    plt = pyplot()
    k = g.shape[1]
    fig, axes = plt.subplots(1, k - 1, figsize=(3.0 * (k - 1), 2.9), squeeze=False)
    for j in range(1, k):
        ax = axes[0][j - 1]
        ax.plot(g[:, 0], g[:, j], ".", ms=4)
        c = np.corrcoef(g[:, 0], g[:, j])[0, 1]
        ax.set_xlabel(proof.global_names[0], fontsize=7)
        ax.set_ylabel(proof.global_names[j], fontsize=7)
        ax.set_title(f"sample correlation {c:+.2f}", fontsize=8)
        ax.tick_params(labelsize=7)
    fig.tight_layout()
    return png_base64(fig)


def wafer_html(card, new_card, pop, results, excluded, tab, proof, truth, seconds, offset, dmap, pos) -> str:
    from compactgen.jobs.wafer.kinds import KINDS
    from compactgen.model.variation import varied_names

    spec = KINDS[card.kind]
    parts = [f"<h1>Wafer statistics: {html.escape(new_card.name)}</h1>"]
    label = tab.meta.get("synthetic")
    parts.append(f"<p>compactgen {__version__}. Start card <code>{html.escape(str(card.path or card.name))}</code>; "
                 f"device table <code>{html.escape(str(tab.path))}</code>: {len(tab.devices)} devices on "
                 f"{len(tab.dies())} dies. {len(pop.used)} devices in the statistics, {len(pop.outliers)} outliers, "
                 f"{len(excluded)} excluded (no data or failed fit). Per-device fits took {seconds.get('fits', 0):.1f} s "
                 f"({len(results) / max(seconds.get('fits', 1e-9), 1e-9):.1f} devices/s); the whole run "
                 f"{seconds.get('total', 0):.1f} s.</p>")
    if label:
        parts.append(f"<p class=warn><b>SYNTHETIC wafer</b>: {html.escape(label)}</p>")
    parts.append("<h2>Population</h2><p>Per parameter, on ln p: one mean per size, a die effect (global) and a "
                 "device effect whose variance is sigma_mismatch<sup>2</sup> area_ref/area plus the device's own fit "
                 "variance (Pelgrom, Duinmaijer, Welbers, IEEE J. Solid-State Circuits 24, 1433 (1989)); REML; "
                 f"95 % intervals: percentile bootstrap over dies ({pop.bootstrap} resamples, seed {pop.seed}). "
                 f"area_ref = {pop.area_ref * 1e18:.5g} nm<sup>2</sup> (electrical diameter "
                 f"{math.sqrt(4 * pop.area_ref / math.pi) * 1e9:.4g} nm). The global sigma includes the radial trend "
                 "(reported, not removed).</p>" + population_table(pop, truth))
    varied = [n for n in pop.names if n in varied_names(new_card.values)]
    others = [n for n in varied_names(new_card.values) if n not in varied]
    if others:
        parts.append(f"<p>Not determined by {spec.data_words} data, kept at the start card's sigmas: "
                     f"{', '.join(f'<code>{n}</code>' for n in others)}.</p>")
    unvaried = [n for n in pop.names if n not in varied]
    if unvaried and not spec.offset:
        parts.append(f"<p>Determined by the data but not varied by the {card.kind} kind (not in its VARIED list, "
                     f"devices/{card.kind.replace('-', '_')}.py): {', '.join(f'<code>{n}</code>' for n in unvaried)}. "
                     "Their population means go into the card; their sigmas and correlations are reported here and "
                     "in the card's [variation.population] spread_not_varied, and nothing simulates them.</p>")
    parts.append("<h3>Sigma against 1/sqrt(area)</h3>" + _img(pelgrom_plot(pop)))
    size_rows = "".join(f"<tr><td>{spec.size_text(d).split()[0]}</td>" + "".join(
        f"<td>{_v(n, pop.params[n].size_means[d])}</td><td>{pop.params[n].size_sigma[d]:.4f}</td>" for n in pop.params)
        + "</tr>" for d in pop.sizes)
    parts.append(f"<h3>Per size</h3><table><tr><th>{spec.size_header()}</th>" + "".join(
        f"<th>{n} mean</th><th>{n} sd(ln)</th>" for n in pop.params) + f"</tr>{size_rows}</table>")
    corr_t = "".join(f"<tr><td>{a}</td>" + "".join(
        f"<td>{pop.correlation[i, j]:+.3f} [{pop.correlation_ci[0][i, j]:+.2f}, {pop.correlation_ci[1][i, j]:+.2f}]"
        + (f" (true {truth['correlation']['population'][truth['correlation']['parameters'].index(a)][truth['correlation']['parameters'].index(b)]:+.2f})"
           if truth and a in truth["correlation"]["parameters"] and b in truth["correlation"]["parameters"] else "")
        + "</td>" for j, b in enumerate(pop.names)) + "</tr>" for i, a in enumerate(pop.names))
    parts.append("<h2>Global correlation</h2><p>Cross-covariance of the dies' mean residuals over the product of the "
                 "global sigmas, with 95 % bootstrap intervals. The library's Monte Carlo sections draw the global "
                 f"draws of {', '.join(varied)} with this correlation (Cholesky factor times independent agauss draws); "
                 "mismatch draws are independent.</p><table><tr><th></th>" + "".join(f"<th>{n}</th>" for n in pop.names)
                 + f"</tr>{corr_t}</table>" + _img(corr_plot(pop.names, pop.correlation, "global correlation")))
    by_id = tab.by_id()
    fitted = {r.id: r for r in results if r.ok}
    rp = [(by_id[d].drawn_diameter, fitted[d].figures["r_p"]) for d in pop.used if d in fitted and spec.offset]
    if spec.offset:
        parts.append(f"<h2>Electrical diameter</h2><p>Drawn minus electrical diameter: <b>{offset * 1e9:.3g} nm</b> "
                     f"(95 % interval {_ci(tuple(x * 1e9 for x in pop.offset_ci), '{:.3g}')} nm) from 1/sqrt(R_P) "
                     "against the drawn diameter across sizes (common practice, no source). The card's diameter is the "
                     "reference size's electrical diameter; for another size set diameter = drawn - offset on the "
                     "instance.</p>" + (_img(offset_plot([a for a, _ in rp], [b for _, b in rp], offset)) if rp else ""))
    by_dev = {r.id: (by_id[r.id].drawn_diameter, r.values) for r in results if r.ok}
    parts.append("<h2>Wafer maps</h2>" + _img(wafer_maps(pop, by_dev, dmap, pos, tab.position_unit)))
    if proof is None and spec.mc_note:
        parts.append(f"<h2>Monte Carlo proof</h2><p>{html.escape(spec.mc_note[0].upper() + spec.mc_note[1:])}</p>")
    if proof is not None:
        rows = "".join(
            f"<tr{'' if (r.sd_agrees and r.ks_ok) else ' class=bad'}><td>{r.quantity}</td><td>{r.drawn * 1e9:.4g}</td>"
            f"<td>{r.n_measured}</td><td>{r.n_simulated}</td><td>{r.median_measured:.5g}</td>"
            f"<td>{r.median_simulated:.5g}</td><td>{r.sd_measured:.4f}</td><td>{_ci(r.sd_ci)}</td>"
            f"<td>{r.sd_simulated:.4f} {_ci(r.sd_sim_ci)}</td><td>{_inside(r.sd_simulated, r.sd_ci)}</td>"
            f"<td>{'<span class=ok>agree</span>' if r.sd_agrees else '<b class=warn>disagree</b>'}</td>"
            f"<td>{r.ks_stat:.3f}</td><td>{r.ks_p:.3g}</td></tr>" for r in proof.rows)
        verdict = ("<span class=ok>every simulated sigma inside its interval, no KS test rejects</span>" if proof.passed
                   else "<b class=warn>the simulated population differs from the measured one</b>")
        from compactgen.jobs.wafer.montecarlo import KS_LEVEL

        parts.append(f"<h2>Monte Carlo proof (ngspice, section mc)</h2><p>{proof.dies} simulated dies (one ngspice run "
                     f"each: one global draw, one mismatch draw per instance), {proof.instances} instances, each run "
                     "parallel and antiparallel with the same seed (draws read back and compared: equal); R = V/I at "
                     f"1 mV. Criteria: the simulated and measured sd of ln q agree (their difference within the two 95 % "
                     "bootstrap half-widths added in quadrature; 'inside' says whether the simulated sd also lies in "
                     "the measured interval alone), and the two-sample Kolmogorov-Smirnov test (scipy.stats.ks_2samp) "
                     f"does not reject at {KS_LEVEL:g}. Verdict: "
                     f"{verdict}.</p><table><tr><th>quantity</th><th>drawn [nm]</th><th>measured</th><th>simulated</th>"
                     "<th>median measured</th><th>median simulated</th><th>sd(ln) measured</th><th>95 % interval</th>"
                     "<th>sd(ln) simulated [95 %]</th><th>in measured interval</th><th>sd agree</th><th>KS D</th>"
                     f"<th>KS p</th></tr>{rows}</table>"
                     + _img(mc_histograms(proof)) + "<h3>Global draws of the simulated dies</h3>" + _img(draws_plot(proof)))
    ex = "".join(f"<tr><td>{html.escape(d)}</td><td>{html.escape(w)}</td></tr>" for d, w in sorted(excluded.items()))
    ol = "".join(f"<tr><td>{html.escape(d)}</td><td>{html.escape(w)}</td></tr>" for d, w in sorted(pop.outliers.items()))
    parts.append("<h2>Devices left out</h2><p>Never silently: excluded devices had no usable data or a failed fit; "
                 "outliers were fitted but lie more than 5 robust standard deviations (1.4826 x MAD) from the median "
                 "of their size in some parameter (modified z-score, Iglewicz and Hoaglin 1993).</p>"
                 f"<h3>Excluded ({len(excluded)})</h3><table><tr><th>device</th><th>reason</th></tr>{ex}</table>"
                 f"<h3>Outliers ({len(pop.outliers)})</h3><table><tr><th>device</th><th>reason</th></tr>{ol}</table>")
    if truth and truth.get("bad_devices"):
        flagged = set(excluded) | set(pop.outliers)
        rows = "".join(f"<tr><td>{d}</td><td>{k}</td><td>{'<span class=ok>flagged</span>' if d in flagged else '<b class=warn>missed</b>'}</td></tr>"
                       for d, k in sorted(truth["bad_devices"].items()))
        parts.append(f"<h3>Bad devices planted in the synthetic wafer</h3><table><tr><th>device</th><th>kind</th>"
                     f"<th>result</th></tr>{rows}</table>")
    title = f"Wafer statistics: {new_card.name}"
    return (f"<!doctype html><html><head><meta charset='utf-8'><title>{html.escape(title)}</title>{_CSS}</head>"
            f"<body>{''.join(parts)}</body></html>")
