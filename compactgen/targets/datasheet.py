"""The Markdown datasheet of a model: parameters, figures, equations, simulator settings, corners
and Monte Carlo, thermal figures, cautions; every number from the ModelIR."""
from __future__ import annotations

import math

import sympy as sp

from compactgen import __version__
from compactgen.model import bignum
from compactgen.model.card import Card
from compactgen.model.ir import ModelIR
from compactgen.targets import render
from compactgen.targets.printing.base import format_number


def datasheet(card: Card, ir: ModelIR, figs: dict[str, float], ngspice_ctx: dict | None = None) -> str:
    """The Markdown datasheet.  ``ngspice_ctx`` is render.ngspice_context(ir) when the caller has it
    already (its node table is listed)."""
    def lat(e):
        names = {x: r"\mathit{" + x.name.replace("_", r"\_") + "}" for x in sp.sympify(e).free_symbols}
        return sp.latex(e, mul_symbol="dot", symbol_names=names)

    from compactgen.model.variation import CORNERS, is_draw
    from compactgen.model.evaluate import reference_numbers
    from compactgen.sim import options as simopt
    from compactgen.model.units import from_si

    ngspice_ctx = ngspice_ctx or render.ngspice_context(ir)
    specs = {s.name: s for s in ir.params}
    calibrated = []
    for name in ir.limits:
        s = specs[name]
        calibrated.append(f"{s.desc}: {s.card_text()} (`{name}`)")
    tnom = specs["tnom"].default if "tnom" in specs else None
    tnom_text = f"{from_si(tnom, 'K', 'degC'):g} degC" if tnom is not None else ""
    tdep = ir.temperature_dependent() | {ir.temperature}
    fig_rows = []
    for f in ir.figures:
        cond = []
        if tnom is not None and sp.sympify(f.expr).free_symbols & tdep:
            cond.append(f"T = tnom = {tnom_text}")
        if f.condition:
            cond.append(f.condition)
        fig_rows.append(dict(name=f.name, value=_fmt(figs[f.name], f.unit), desc=_cell(f.desc),
                             condition=_cell("; ".join(cond)) or "—", source=_cell(f.source) or "—"))
    prm = []
    for s in ir.params:
        stderr = card.uncertainty.get(s.name)
        desc = s.desc if not s.computed or s.name in card.given else f"{s.desc}; computed {s.computed}"
        prm.append(dict(name=s.name, value=s.card_text(), range=s.range_text(s.card_unit), kind=s.kind,
                        desc=_cell(desc), source=_cell(s.source), stderr=s.card_text(stderr) if stderr else ""))
    # simulator settings: the step cap from the card's own precession period
    from compactgen.devices.stt_mtj import corotating

    corot = card.kind == "stt-mtj" and corotating(card.values)
    n_pp = simopt.POINTS_PER_PERIOD_COROTATING if corot else simopt.POINTS_PER_PERIOD
    if "f_fmr" in figs and figs["f_fmr"] > 0:
        period = 1.0 / figs["f_fmr"]
        step = dict(value=period / n_pp, period=_si_time(period), f_fmr=f"{figs['f_fmr']:.4g} Hz",
                    n=n_pp, n25=_si_time(period / 25), corotating=corot)
        step["text"] = _si_time(step["value"])
    else:
        step = dict(value=1e-12, text="1 ps", period="", f_fmr="", n=0, n25="")
    step["spice"] = f"{step['value'] * 1e12:.3g}p"
    tsc = reference_numbers(ir, temperature=tnom or 300.15)[ir.time_scale]
    options = [dict(name=k, value=v, why=why.format(state_charge=f"{tsc:.1e}")) for k, v, why in simopt.DECK_OPTIONS]
    draws = [s.name for s in ir.params if is_draw(s.name)]
    inst = [s for s in ir.params if s.kind == "instance" and not is_draw(s.name)]
    ctx = dict(
        name=ir.name, title=ir.title, kind=ir.kind, version=__version__, **render.digests(ir), description=card.description,
        calibrated=calibrated, terminals=ir.terminals, conventions=ir.conventions,
        instance_line=render.usage_instance(ir),
        vacask_instance=" ".join(f"{s.name}={format_number(s.default)}" for s in inst),
        instance_params=[dict(name=s.name, default=format_number(s.default), desc=_cell(s.desc)) for s in inst],
        step=step, options=options, options_line=" ".join(f"{o['name']}={o['value']}" for o in options),
        vacask_options=simopt.VACASK_OPTIONS, vacask_why=simopt.VACASK_WHY, harness_options=simopt.HARNESS_OPTIONS,
        measured=simopt.STEP_CAP_MEASURED_COROTATING if corot else simopt.STEP_CAP_MEASURED,
        figures=fig_rows, params=prm, outputs=ir.outputs, nodes=ir.nodes, tnom=tnom_text,
        ngspice_nodes=[{k: _cell(v) for k, v in r.items()} for r in ngspice_ctx["node_table"]],
        monitors=ngspice_ctx["monitors"], limits=render.range_limits(ir), range_output=ir.range_output(),
        draws=draws, corners=[dict(name=k, z=f"{z:+g}") for k, z in CORNERS.items()],
        derived=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.derived],
        locals=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.locals],
    )
    ctx["states"] = [dict(name=s.name, unit=s.unit, desc=s.desc, latex=lat(s.symbol), rhs=lat(s.rhs)) for s in ir.states]
    from compactgen.statistics.thermal import thermal_context

    ctx["thermal"] = thermal_context(ir)
    ctx["sigma_origin"] = _sigma_origin(card, ir)
    ctx["noise"] = _noise_context(ir) if ir.noise else None
    return render.environment().get_template("datasheet/model.md.j2").render(**ctx)


def _sigma_origin(card: Card, ir: ModelIR) -> dict:
    """Where the card's sigmas came from (model/variation.sigma_origin), and a wafer population's
    global correlation and intervals."""
    from compactgen.model.variation import sigma_origin

    key, text = sigma_origin(card)
    var = card.variation
    out = dict(key=key, text=text, summary=var.get("summary", ""), correlated=list(var.get("correlated", [])),
               intervals=[dict(name=k, low=f"{lo:.4g}", high=f"{hi:.4g}") for k, (lo, hi) in var.get("intervals", {}).items()
                          if k.startswith("sigma_")])
    names = out["correlated"]
    out["matrix"] = [dict(name=n, cells=[f"{c:+.3f}" for c in row]) for n, row in zip(names, var.get("correlation", []))]
    return out


def _noise_context(ir: ModelIR) -> dict:
    """The datasheet's thermal-field section: the default noise step of this card and the
    measurements behind it (sim/options.THERMAL_FIELD_MEASURED)."""
    from compactgen.devices.common import NOISE_STEPS_PER_PERIOD
    from compactgen.model.evaluate import reference_numbers
    from compactgen.sim import options as simopt

    tnom = ir.params["tnom"].default if "tnom" in ir.params else 300.15
    num = reference_numbers(ir, {"noise_step": 0.0}, temperature=tnom)
    step = float(next(v for k, v in num.items() if str(k) == "noise_dt"))
    m = simopt.THERMAL_FIELD_MEASURED
    return dict(step_text=f"`noise_step=0` (default) takes the small-angle precession period at tnom / "
                          f"{NOISE_STEPS_PER_PERIOD} = {_si_time(step)} for this card; the noise step also caps "
                          f"the time step (a breakpoint at every sample).",
                convergence=m["convergence"], cost_card=m["card"], cost=m["cost"])


def _si_time(seconds: float) -> str:
    """A time in ps or ns, three significant digits."""
    return f"{seconds * 1e12:.3g} ps" if seconds < 1e-9 else f"{seconds * 1e9:.3g} ns"


def _cell(text: str) -> str:
    """Text safe inside a Markdown table cell."""
    return text.replace("|", "\\|")


def _fmt(x: float, unit: str) -> str:
    u = "" if unit in ("1", "") else f" {unit}"
    if bignum.is_overflow(x):
        return f"{bignum.sci(x)}{u}"
    if not math.isfinite(x):
        return str(x)
    return f"{x:.6g}{u}"
