"""The card a wafer's population gives: means as the parameter values, sigma_global_* and
sigma_mismatch_* from the population, and a [variation] table (origin, global correlation of the
draws, 95 % intervals, the population's numbers)."""
from __future__ import annotations

import datetime as _dt
import math
import os
import tempfile
from pathlib import Path

from compactgen import __version__
from compactgen.model.card import card_text
from compactgen.model.variation import cholesky

METHOD = ("per-device maximum-likelihood fits (compactgen fit); ln p = size mean + die effect (global) + device "
          "effect with variance sigma_mismatch^2 area_ref/area + the device's own fit variance; REML for the two "
          "sigmas; outliers: modified z-score above 5 within a size; 95 % percentile bootstrap over dies")


def _r(x: float, digits: int = 6) -> float:
    return float(f"{x:.{digits}g}")


def population_card_text(card, pop, name: str, tnom: float | None, summary: dict, date: str | None = None) -> tuple[str, dict]:
    """(card text, values) of the population card; ``summary``: wafer facts for [variation.population]."""
    from compactgen.jobs.wafer.population import nearest_correlation

    values = dict(card.values)
    ref_diameter = math.sqrt(4 * pop.area_ref / math.pi)
    pillar = "diameter" in values  # stt-mtj: sizes are diameters; dw-mtj: MTJ areas on the track
    if pillar:
        values["diameter"] = ref_diameter
    values["area_ref"] = pop.area_ref
    if tnom is not None:
        values["tnom"] = tnom
    varied = [n for n in pop.names if f"sigma_global_{n}" in values]
    unc = {}
    intervals = {}
    for n, st in pop.params.items():
        values[n] = _r(st.mean)
        lo, hi = st.ci_mean
        if math.isfinite(lo) and math.isfinite(hi):
            unc[n] = (hi - lo) / (2 * 1.959964)
            intervals[n] = [_r(lo), _r(hi)]
    for n in varied:
        st = pop.params[n]
        values[f"sigma_global_{n}"] = min(_r(st.sigma_global, 4), 1.0)
        values[f"sigma_mismatch_{n}"] = min(_r(st.sigma_mismatch, 4), 1.0)
        intervals[f"sigma_global_{n}"] = [_r(v, 4) for v in st.ci_global]
        intervals[f"sigma_mismatch_{n}"] = [_r(v, 4) for v in st.ci_mismatch]
    values = card.device.derive_defaults(values, card.options, card.given - {"demag_nz"})
    idx = [pop.names.index(n) for n in varied]
    corr = [[_r(float(pop.correlation[i][j]), 4) for j in idx] for i in idx]
    if varied and cholesky(corr) is None:
        import numpy as np

        fixed = nearest_correlation(np.asarray(corr), floor=1e-3)
        corr = [[_r(float(c), 4) for c in row] for row in fixed]
    others = sorted(k[len("sigma_global_"):] for k in values if k.startswith("sigma_global_")
                    and k[len("sigma_global_"):] not in varied)
    # analysed but not varied by the kind: their spread is reported, never simulated
    unvaried = {n: {"sigma_global": _r(st.sigma_global, 4), "sigma_global_interval": [_r(v, 4) for v in st.ci_global],
                    "sigma_mismatch": _r(st.sigma_mismatch, 4),
                    "sigma_mismatch_interval": [_r(v, 4) for v in st.ci_mismatch]}
                for n, st in pop.params.items() if n not in varied}
    if pillar:
        sizes = {"drawn_diameters_nm": [_r(d * 1e9) for d in pop.sizes],
                 "diameter_offset_nm": _r(pop.offset * 1e9, 4),
                 "diameter_offset_interval_nm": [_r(v * 1e9, 4) for v in pop.offset_ci],
                 "reference_diameter_nm": _r(ref_diameter * 1e9)}
        size_words = f"drawn {', '.join(f'{d * 1e9:.4g}' for d in pop.sizes)} nm"
    else:
        areas = [_r(math.pi / 4 * (d * 1e9) ** 2) for d in pop.sizes]
        sizes = {"mtj_areas_nm2": areas, "reference_area_nm2": _r(pop.area_ref * 1e18)}
        size_words = f"MTJ areas {', '.join(f'{a:.5g}' for a in areas)} nm^2"
    variation = {
        "origin": "wafer",
        "summary": (f"measured population: {len(pop.used)} devices on {pop.n_dies} dies, {len(pop.sizes)} sizes "
                    f"({size_words}); sigmas of {', '.join(varied)} from the population"
                    + (f"; {', '.join(others)} keep the start card's sigmas (not determined by the data)"
                       if others else "")
                    + (f"; population spread of {', '.join(unvaried)} in [variation.population] "
                       "spread_not_varied (the kind does not vary them: reported, not simulated)"
                       if unvaried and not pillar else "")),
        "correlated": varied,
        "correlation": corr,
        "intervals": intervals,
        "population": {
            **summary,
            "devices_used": len(pop.used), "dies": pop.n_dies,
            **sizes,
            "outliers": {k: v for k, v in sorted(pop.outliers.items())},
            "not_from_population": others,
            "spread_not_varied": unvaried,
            "correlation_interval_low": [[_r(float(pop.correlation_ci[0][i][j]), 3) for j in idx] for i in idx],
            "correlation_interval_high": [[_r(float(pop.correlation_ci[1][i][j]), 3) for j in idx] for i in idx],
            "radial_trend": {n: _r(st.trend, 4) for n, st in pop.params.items() if math.isfinite(st.trend)},
            "bootstrap": pop.bootstrap, "seed": pop.seed, "interval_level": 0.95,
            "method": METHOD,
        },
    }
    prov = {"tool": f"compactgen {__version__}",
            "date": date or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat(),
            "made_from": str(card.path) if card.path else card.name, "made_from_sha256": card.sha256(),
            "method": METHOD}
    given = set(card.given) | set(pop.params) | {f"sigma_global_{n}" for n in varied} | \
        {f"sigma_mismatch_{n}" for n in varied} | {"diameter", "area_ref", "tnom"}
    header = (f"WAFER STATISTICS by `compactgen wafer-stats` from {card.path.name if card.path else card.name}:\n"
              f"the values are population means, sigma_global_* and sigma_mismatch_* of {', '.join(varied)} the\n"
              "measured spread ([variation]). "
              + (f"diameter is the electrical diameter of the reference size; for\n"
                 f"another drawn size D set diameter = D - {pop.offset * 1e9:.3g} nm on the instance." if pillar else
                 "area_ref is the reference size's MTJ area (track_width x mtj_length);\n"
                 f"{', '.join(unvaried)}: population means here, their spread only in [variation.population]."))
    desc = (card.description + " (population of a wafer)") if card.description else ""
    text = card_text(card.kind, name, values, desc, card.options, {k: v for k, v in unc.items() if v > 0}, prov,
                     header, frozenset(given), variation)
    return text, values


def write_text_atomic(path: Path, text: str) -> None:
    """Whole file or nothing: a temporary file beside it, moved into place."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        os.chmod(tmp, 0o644)  # mkstemp makes 0600; these files are for sharing
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
