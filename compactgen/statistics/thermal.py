"""Thermal figures for the datasheet: Delta, retention and critical current against temperature,
and the write-error-rate table (closed forms of statistics/analytic.py)."""
from __future__ import annotations

import math

import numpy as np

from compactgen.model import bignum
from compactgen.statistics.analytic import precessional_probability, retention_time
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.model.ir import ModelIR
from compactgen.model.evaluate import figures

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
    from compactgen import cache

    def valid(wer):
        return (isinstance(wer, list) and len(wer) == len(WER_RATIOS)
                and all(isinstance(r, dict) and set(r) == {"ratio", "values"} and isinstance(r["ratio"], str)
                        and isinstance(r["values"], list) and len(r["values"]) == len(WER_WIDTHS)
                        and all(isinstance(v, str) for v in r["values"]) for r in wer))

    key = (f"{cache.source_digest('statistics/thermal.py', 'statistics/analytic.py', 'physics/switching.py')} "
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
