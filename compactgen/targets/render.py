"""Render a ModelIR into Verilog-A, an ngspice subcircuit library and a datasheet.

Templates hold no maths: every expression arrives as a string printed by the strict printers.
"""
from __future__ import annotations

import hashlib
import math
from pathlib import Path

import jinja2
import sympy as sp

from compactgen import __version__
from compactgen.model.ir import SIM_TIME, ModelIR
from compactgen.model.lowering import hoisted, lower_bsources
from compactgen.targets.printing import NgspicePrinter, VerilogAPrinter
from compactgen.targets.printing.base import format_number
from compactgen.targets.printing.ngspice import Sampled

TEMPLATE_DIR = Path(__file__).resolve().parents[2] / "templates"
if not TEMPLATE_DIR.is_dir():  # installed as a wheel: templates shipped inside the package
    TEMPLATE_DIR = Path(__file__).resolve().parents[1] / "templates"


def environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(TEMPLATE_DIR)),
        undefined=jinja2.StrictUndefined,
        trim_blocks=False,
        lstrip_blocks=False,
        keep_trailing_newline=True,
        autoescape=False,
    )
    env.filters["spice_wrap"] = spice_wrap
    env.filters["comment_wrap"] = comment_wrap
    return env


def spice_wrap(text: str, width: int = 100) -> str:
    """Break a long SPICE line at spaces into '+' continuation lines."""
    if len(text) <= width:
        return text
    out, line = [], ""
    for tok in text.split(" "):
        if line and len(line) + 1 + len(tok) > width:
            out.append(line)
            line = "+ " + tok
        else:
            line = f"{line} {tok}" if line else tok
    out.append(line)
    return "\n".join(out)


def comment_wrap(text: str, width: int = 100) -> str:
    """Break a long SPICE comment line ('* ...') at spaces into further comment lines."""
    body = text[1:].strip() if text.startswith("*") else text
    indent = len(text[1:]) - len(text[1:].lstrip()) if text.startswith("*") else 1
    out, line = [], ""
    for tok in body.split(" "):
        if line and len(line) + 1 + len(tok) > width - indent - 3:
            out.append(line)
            line = tok
        else:
            line = f"{line} {tok}" if line else tok
    out.append(line)
    return "\n".join("*" + " " * indent + x for x in out)


def param_digest(ir: ModelIR) -> str:
    h = hashlib.sha256()
    for s in ir.params:
        h.update(f"{s.name}={s.default!r};".encode())
    return h.hexdigest()[:16]


def _range(spec) -> str:
    def b(x):
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return format_number(x)

    return f"{'(' if spec.lo_open else '['}{b(spec.lo)}:{b(spec.hi)}{')' if spec.hi_open else ']'}"


def _range_output(ir: ModelIR, pr) -> dict:
    """The range output (ir.RANGE_OUTPUT) for a template: name, unit, description, printed code."""
    r = ir.range_output()
    return dict(name=r.name, unit=r.unit, desc=r.desc.replace('"', "'"), code=pr.code(r.expr))


#: unit in which an output's ngspice node reads (1 V = 1 unit), by the output's SI unit: values
#: of ordinary size for a designer (a junction of 1e4 ohm reads 10 on its node) and well above
#: ngspice's absolute voltage tolerance; an SI unit not listed reads in itself
NODE_UNITS = {"ohm": "kohm", "A/m^2": "MA/cm^2", "m": "nm", "A": "uA", "s": "ns"}


def node_unit(si_unit: str) -> tuple[str, float]:
    """(unit of the node, SI value of 1 V on the node) for an output in ``si_unit``."""
    from compactgen.model.units import convert

    unit = NODE_UNITS.get(si_unit, si_unit)
    return unit, (1.0 if unit == si_unit else convert(1.0, unit, si_unit))


def draw_params(ir: ModelIR) -> list:
    """The statistical draws among the parameters (model/variation.py): global draw_global_*,
    local (mismatch) draw_mismatch_*."""
    from compactgen.model.variation import is_draw

    return [s for s in ir.params if is_draw(s.name)]


def _reference_numbers(ir: ModelIR, temperature: float) -> dict:
    from compactgen.model.evaluate import reference_numbers

    return {k: float(v) for k, v in reference_numbers(ir, temperature=temperature).items()}


def _evaluate_at(expr, numbers: dict) -> float:
    return float(sp.sympify(sp.sympify(expr).xreplace(numbers)).evalf())


def digests(ir: ModelIR) -> dict[str, str]:
    """The model's two digests, taken here only, from the IR as the device kind built it (before
    any lowering): every generated file (.va, both .lib files, datasheet, manifest) quotes these."""
    return dict(digest=ir.digest(), param_digest=param_digest(ir))


def _common(ir: ModelIR) -> dict:
    """Context shared by the templates; ``ir`` must be the IR as built, not a lowered form."""
    return dict(
        name=ir.name, title=ir.title, kind=ir.kind, version=__version__, **digests(ir), conventions=ir.conventions,
        ports=[t.name for t in ir.terminals],
        nodes=[n.name for n in ir.nodes],
    )


def verilog_a(ir: ModelIR) -> str:
    ctx = _common(ir)  # before hoisting: the digests are the built IR's, as in every other file
    ir = hoisted(without_noise(ir))
    smap = {str(k): f"V({p},{n})" if n != "0" else f"V({p})" for k, (p, n) in ir.voltages.items()}
    smap.update({s.name: f"V({s.name})" for s in ir.states})
    smap[str(ir.temperature)] = "$temperature"
    smap[str(SIM_TIME)] = "$abstime"
    pr = VerilogAPrinter(smap)
    ctx.update(
        params=[dict(name=s.name, unit=s.unit, desc=s.desc.replace('"', "'"), instance=s.kind == "instance",
                     default=format_number(s.default), range=_range(s)) for s in ir.params],
        constants=[dict(name=str(k), code=format_number(v)) for k, v in ir.constants.items()],
        derived=[dict(name=str(k), code=pr.code(e)) for k, e in ir.derived],
        locals=[dict(name=str(k), code=pr.code(e)) for k, e in ir.locals],
        states=[dict(name=s.name, desc=s.desc, residual=pr.code(ir.residual(s))) for s in ir.states],
        time_scale=str(ir.time_scale),
        branches=[dict(pos=b.pos, neg=b.neg, desc=b.desc, code=pr.code(b.current)) for b in ir.branches],
        outputs=[dict(name=o.name, desc=o.desc, unit=o.unit, code=pr.code(o.expr)) for o in ir.outputs],
        range_output=_range_output(ir, pr),
    )
    return environment().get_template("verilog_a/model.va.j2").render(**ctx)


def without_noise(ir: ModelIR) -> ModelIR:
    """The IR with its noise inputs (model/ir.NoiseInput) read as 0: the form of the targets that
    do not carry the thermal field (the Verilog-A module and so the compiled model; openvaf-r has
    no random functions and its white_noise has no effect in a transient, TOOLCHAIN 2.10).  Its
    instance parameters stay, so instance lines fit both libraries."""
    if not ir.noise:
        return ir
    import dataclasses

    zero = {n.symbol: sp.Integer(0) for n in ir.noise}
    return dataclasses.replace(
        ir, noise=[], locals=[(k, sp.sympify(e).xreplace(zero)) for k, e in ir.locals],
        states=[dataclasses.replace(st, rhs=st.rhs.xreplace(zero)) for st in ir.states],
        branches=[dataclasses.replace(b, current=sp.sympify(b.current).xreplace(zero)) for b in ir.branches],
        outputs=[dataclasses.replace(o, expr=sp.sympify(o.expr).xreplace(zero)) for o in ir.outputs])


#: the ngspice sources of a noise input, by the instance parameter thermal_field: 1 trrandom
#: (Gaussian, piecewise constant, repeatable with .options seed=N), 2 trnoise (linearly
#: interpolated; ngspice 46 draws it from a pool filled at start-up from the process id, so no
#: option repeats it: measured); a silent source samples every second (no breakpoints in a
#: transient of ordinary length)
NOISE_SOURCES = ((1, "trrandom"), (2, "trnoise"))
NOISE_SWITCH = "thermal_field"
NOISE_STEP = "noise_dt"


def _noise_sources(ir: ModelIR, pr) -> list[dict]:
    """Template rows of the noise inputs: node, series node, and per source its printed sample
    step and amplitude."""
    if not ir.noise:
        return []
    sw = ir.params[NOISE_SWITCH].symbol
    step = next(k for k, _ in ir.derived if str(k) == NOISE_STEP)
    code = {}
    for value, kind in NOISE_SOURCES:
        on = sp.And(sw >= value - 0.5, sw < value + 0.5) if value < len(NOISE_SOURCES) else sw >= value - 0.5
        code[kind] = dict(step=pr.code(sp.Piecewise((step, on), (sp.Float(1.0), True))),
                          amp=pr.code(sp.Piecewise((sp.Float(1.0), on), (sp.Float(0.0), True))))
    return [dict(name=n.name, mid=f"{n.name}q", desc=n.desc, **{k: v for k, v in code.items()}) for n in ir.noise]


def _section_default(ir: ModelIR, spec) -> str:
    """Subcircuit default of a parameter: the variation parameters read the library section's
    globals (corner, global draws, mismatch switch); every other one is its number."""
    if not _sections(ir):
        return format_number(spec.default)
    if spec.name == "corner" or spec.name.startswith("draw_global_"):
        return f"{{{ir.name}_{spec.name}}}"
    if spec.name.startswith("draw_mismatch_"):
        return f"{{{ir.name}_mismatch*agauss(0,1,1)}}"
    return format_number(spec.default)


def _sections(ir: ModelIR) -> list[dict]:
    """The .lib sections of a model with process variation (devices/variation.py): corners tt, ss,
    ff, and Monte Carlo on the typical mean with global and local variation switched separately.
    A global draw is a brace-less ``.param x_sample=agauss(0,1,1)``, read through a second .param:
    ngspice then evaluates it once per run; referenced directly from the subcircuit defaults it
    is re-drawn in every instance (measured, ngspice 39)."""
    if "corner" not in ir.params:
        return []
    from compactgen.model.variation import CORNERS

    global_draws = [s.name for s in ir.params if s.name.startswith("draw_global_")]
    out = []
    for name, z in CORNERS.items():
        out.append(dict(name=name, desc=f"corner {name}: every varied parameter at {z:+g} global sigma",
                        globals=[("corner", format_number(z)), ("mismatch", "0.0")]
                        + [(g, "0.0") for g in global_draws]))
    drawn = _global_draw_lines(ir, global_draws)
    for name, g_on, l_on in (("mc", 1, 1), ("mc_global", 1, 0), ("mc_local", 0, 1)):
        what = {"mc": "global and local (mismatch) variation", "mc_global": "global variation only",
                "mc_local": "local (mismatch) variation only"}[name]
        out.append(dict(name=name, desc=f"Monte Carlo about the typical mean, {what}",
                        globals=[("corner", "0.0"), ("mismatch", f"{l_on:.1f}")]
                        + (drawn if g_on else [(g, "0.0") for g in global_draws])))
    return out


def _global_draw_lines(ir: ModelIR, global_draws: list[str]) -> list[tuple[str, str]]:
    """The Monte Carlo sections' global draws: an independent standard-normal sample per draw;
    the draws of the card's correlated parameters ([variation], ``ir.global_correlation``) are
    the Cholesky factor of their correlation matrix times those samples, the others the sample
    itself."""
    from compactgen.model.variation import cholesky

    names, matrix = ir.global_correlation or ((), ())
    low = cholesky(matrix) if names else None
    if low is None:  # independent: each sample next to its draw
        return [x for g in global_draws for x in [(f"{g}_sample", "agauss(0,1,1)"),
                                                  (g, f"{{{ir.name}_{g}_sample*1.0}}")]]
    # every reference to a brace-less agauss() .param draws again (measured, ngspice 46): each sample
    # is read once into a .param of its own (_z), and the correlated draws combine those
    out = [(f"{g}_sample", "agauss(0,1,1)") for g in global_draws]
    out += [(f"{g}_z", f"{{{ir.name}_{g}_sample*1.0}}") for g in global_draws]
    row_of = {f"draw_global_{n}": i for i, n in enumerate(names)}
    for g in global_draws:
        if g not in row_of:
            out.append((g, f"{{{ir.name}_{g}_z}}"))
            continue
        i = row_of[g]
        terms = [f"{format_number(low[i][j])}*{ir.name}_draw_global_{names[j]}_z" for j in range(i + 1)
                 if low[i][j] != 0.0]
        out.append((g, "{" + "+".join(terms) + "}"))
    return out


def ngspice_context(ir: ModelIR) -> dict:
    """The template context of the ngspice library (every expression printed).

    The expressions are printed by ``_ngspice_expressions`` (sympy simplification, the slow part
    of a build) or read from the render cache (compactgen/cache.py), keyed by
    ``_expressions_key``: the model's structure without its parameter values, the node scales
    (the only numbers the printed expressions hold) and the printing code.  Everything else
    here is computed every time."""
    smap = {str(k): f"V({p},{n})" if n != "0" else f"V({p})" for k, (p, n) in ir.voltages.items()}
    smap.update({s.name: f"V({s.name})" for s in ir.states})
    smap[str(ir.temperature)] = "(temper + 273.15)"
    # ngspice passes the sweep value of a .dc analysis in `time`, so the model reads the
    # simulation time from its own source clk instead: PWL(0 0 1 1) is 0 in every DC
    # analysis and equals the time during the first second of a transient.
    smap[str(SIM_TIME)] = "V(clk)"
    smap.update({n.symbol.name: f"V({n.name})" for n in ir.noise})
    # a subcircuit parameter whose default calls agauss() is drawn anew wherever it is referenced
    # (measured, ngspice 39); each draw is therefore read once into a .param of its own (one draw
    # per instance) and the model and the draw's node both use that
    draws = [dict(name=s.name, desc=s.desc, once=f"{s.name}_val") for s in draw_params(ir)]
    smap.update({d["name"]: d["once"] for d in draws})
    tdep = ir.temperature_dependent()
    # a temperature-dependent quantity that bias-dependent expressions use is computed once on a
    # node of its own (V = value): inlined, its Bloch and Callen-Callen powers of `temper` were
    # repeated in every B-source and its derivatives (transients ~4x slower); as a .param it is
    # no faster, because ngspice re-inlines every .param that reads `temper`
    used: set[sp.Symbol] = set()
    for e in ([e for _, e in ir.locals] + [st.rhs for st in ir.states] + [st.initial for st in ir.states]
              + [b.current for b in ir.branches]):
        used |= e.free_symbols & tdep
    # each node carries value/scale with scale = |value| at the card's values and tnom, so node
    # voltages are O(1) whatever the quantity (a wall width of 5e-9 m on a node would sit below
    # ngspice's absolute voltage tolerance); initial conditions (parse time) use T = tnom
    t_ref = ir.params["tnom"].default if "tnom" in ir.params else 300.15
    t_ref_sym = ir.params["tnom"].symbol if "tnom" in ir.params else sp.Float(t_ref)
    shared = [sym for sym, _ in ir.locals if sym in ir.shared]
    ref_num = _reference_numbers(ir, t_ref) if used or shared else {}
    scales = {sym: abs(ref_num.get(sym, 1.0)) or 1.0 for sym, _ in ir.derived if sym in used}

    from compactgen import cache

    printed = cache.remembered(
        "render", _expressions_key(ir, smap, scales, t_ref_sym),
        lambda: _ngspice_expressions(ir, smap, scales, t_ref_sym),
        lambda printed: _valid_printed(printed, ir, scales, shared), stem=ir.kind)

    tnodes = [dict(name=f"tq_{sym}", code=code,
                   desc=f"{sym} at the device temperature (circuit temperature + dtemp)",
                   scale_text=f"1 V = {scale:.6g} (|{sym}| at tnom and the card values)")
              for (sym, scale), code in zip(scales.items(), printed["tnodes"])]
    aux = [dict(name=str(sym), code=code,
                desc=f"bias- and state-dependent quantity {sym}, computed once for the sources that share it",
                scale_text=f"1 V = {ir.shared[sym]} "
                           f"({_evaluate_at(ir.shared[sym], ref_num):.6g} at the card values, tt)")
           for sym, code in zip(shared, printed["aux"])]
    monitors = [dict(name=o.name, desc=o.desc, unit=unit, si_unit=o.unit, scale=scale,
                     unit_text="1 V = 1" if unit in ("1", "") else f"1 V = 1 {unit}", code=code)
                for o, (unit, scale, code) in zip(ir.monitored_outputs(), printed["monitors"])]

    ctx = _common(ir)
    ctx.update(
        params=[dict(name=s.name, default=_section_default(ir, s)) for s in ir.params],
        sections=_sections(ir),
        constants=[dict(name=str(k), code=format_number(v)) for k, v in ir.constants.items()],
        aux=aux,
        temperature_nodes=tnodes,
        states=[dict(name=s.name, desc=s.desc, residual=residual, initial=initial)
                for s, (residual, initial) in zip(ir.states, printed["states"])],
        time_scale=str(ir.time_scale),
        branches=[dict(pos=b.pos, neg=b.neg, desc=b.desc, code=code) for b, code in zip(ir.branches, printed["branches"])],
        monitors=monitors,
        draws=draws,
        limits=range_limits(ir),
        instance_line=usage_instance(ir),
        noise=_noise_sources(ir, NgspicePrinter(smap)),
    )
    ctx["derived"] = [dict(name=d["once"], code=d["name"]) for d in draws] + [
        dict(name=name, code=code) for name, code in printed["derived"]]
    ctx["node_table"] = _node_table(ir, aux, tnodes, monitors)
    return ctx


#: the source files whose code decides the printed ngspice expressions (part of their cache key)
_PRINTING_SOURCES = ("targets/render.py", "model/ir.py", "model/lowering.py", "model/units.py",
                     "targets/printing/__init__.py", "targets/printing/base.py", "targets/printing/ngspice.py")


def _expressions_key(ir: ModelIR, smap: dict, scales: dict, t_ref_sym) -> str:
    """What _ngspice_expressions depends on: the printing code, sympy's version, the model's
    structure (every expression and symbol; the parameter values are not in it), the symbol
    map and the node scales."""
    from compactgen import cache

    return "\n".join((cache.source_digest(*_PRINTING_SOURCES), f"sympy {sp.__version__}", ir.structure_digest(),
                      repr(sorted(smap.items())), sp.srepr(t_ref_sym),
                      repr([(str(k), float(v).hex()) for k, v in scales.items()])))


def _valid_printed(printed, ir: ModelIR, scales: dict, shared: list) -> bool:
    """Whether a cached entry holds what ngspice_context reads, in the model's numbers."""
    def strings(x, n):
        return isinstance(x, list) and len(x) == n and all(isinstance(s, str) for s in x)

    def rows(x, n, types):
        return (isinstance(x, list) and len(x) == n
                and all(isinstance(r, list) and len(r) == len(types) and all(isinstance(v, t) for v, t in zip(r, types))
                        for r in x))

    return (isinstance(printed, dict)
            and strings(printed.get("tnodes"), len(scales))
            and strings(printed.get("aux"), len(shared))
            and rows(printed.get("states"), len(ir.states), (str, str))
            and strings(printed.get("branches"), len(ir.branches))
            and rows(printed.get("monitors"), len(ir.monitored_outputs()), (str, float, str))
            and isinstance(printed.get("derived"), list)
            and rows(printed["derived"], len(printed["derived"]), (str, str)))


def _ngspice_expressions(ir: ModelIR, smap: dict, scales: dict, t_ref_sym) -> dict:
    """Every expression of the ngspice library, printed: the B-source lowering of the IR
    (model/lowering.py) through the strict ngspice printer.  A function of the model's
    structure, ``smap`` and the node ``scales`` alone (see _expressions_key); JSON-ready."""
    monitor_scales = [node_unit(o.unit) for o in ir.monitored_outputs()]
    low = lower_bsources(ir, scales, t_ref_sym, [scale for _, scale in monitor_scales])
    pr = NgspicePrinter(smap)
    pr.symbol_map.update({sym: f"V({node})" for sym, node in low.node_symbols.items()})

    def residual(flow, hold):
        piece = sp.Piecewise((sp.Symbol("_flow"), SIM_TIME > 0), (sp.Symbol("_hold"), True))
        return pr.code(piece).replace("_flow", pr.code(flow)).replace("_hold", pr.code(hold))

    # outputs (and the range output) are printed sampled (printing/ngspice.Sampled): a monitor adds
    # no Jacobian entries and never shows a linearisation round-off below zero
    return dict(tnodes=[spice_wrap(pr.code(e)) for e in low.tnodes],
                aux=[spice_wrap(pr.code(e)) for e in low.aux],
                monitors=[[unit, float(scale), spice_wrap(pr.code(Sampled(e)))]
                          for (unit, scale), e in zip(monitor_scales, low.monitors)],
                states=[[spice_wrap(residual(flow, hold)), pr.code(init)] for flow, hold, init in low.states],
                branches=[spice_wrap(pr.code(e)) for e in low.branches],
                derived=[[str(k), pr.code(e)] for k, e in low.derived])


def ngspice(ir: ModelIR, monitors: bool = True) -> str:
    """ngspice subcircuit: parameter-only quantities as .param, everything that depends on
    bias, state or temperature inlined into the B-source expressions, expanded and with their
    parameter-only coefficients hoisted; shared quantities on auxiliary nodes; every output and
    statistical draw on a node of its own (``monitors=False`` leaves those nodes out: only for
    measuring what they cost, benchmarks/bench_output_nodes.py)."""
    ctx = ngspice_context(ir)
    if not monitors:
        ctx.update(monitors=[], draws=[])
    return ngspice_text(ctx)


def ngspice_text(ctx: dict) -> str:
    """The library text of a context from ngspice_context."""
    return environment().get_template("ngspice/model.lib.j2").render(**ctx)


def osdi_file(ir: ModelIR) -> str:
    """File name of the compiled model beside the generated files."""
    return f"{ir.name}.osdi"


def osdi_library_file(ir: ModelIR) -> str:
    """File name of the ngspice library that wraps the compiled model."""
    return f"{ir.name}.osdi.lib"


def ngspice_osdi(ir: ModelIR) -> str:
    """The ngspice library of the compiled model: a subcircuit with the B-source library's name,
    ports, parameters (same defaults, so the same Monte Carlo draws) and sections, holding one
    OSDI device ``N1`` of the Verilog-A module with a model of its own.  It carries no thermal
    field (the Verilog-A module reads its noise inputs as 0, see without_noise)."""
    draws = [dict(name=s.name, once=f"{s.name}_val") for s in draw_params(ir)]
    once = {d["name"]: d["once"] for d in draws}
    ctx = _common(ir)
    ctx.update(
        params=[dict(name=s.name, default=_section_default(ir, s)) for s in ir.params],
        sections=_sections(ir), draws=draws, limits=range_limits(ir),
        states=[dict(name=s.name) for s in ir.states], outputs=[dict(name=o.name) for o in ir.outputs],
        # a subcircuit default that calls agauss() is drawn anew wherever it is read (see
        # ngspice_context): each draw is read once into a .param of its own
        model_params=[dict(name=s.name, value=once.get(s.name, s.name)) for s in ir.params if s.kind != "instance"],
        instance_params=[dict(name=s.name, value=once.get(s.name, s.name)) for s in ir.params if s.kind == "instance"],
        instance_line=usage_instance(ir), osdi=osdi_file(ir), lib_file=osdi_library_file(ir),
    )
    return environment().get_template("ngspice/osdi.lib.j2").render(**ctx)


def ngspice_nodes(ir: ModelIR) -> list[dict]:
    """Every node inside the ngspice subcircuit: name, what it carries, and its scale."""
    return ngspice_context(ir)["node_table"]


def range_limits(ir: ModelIR) -> list[dict]:
    """The calibrated-range limits the range output compares with: limit parameter, the drive it
    bounds (a local of the model), the card value and the parameter's meaning."""
    return [dict(name=name, drive=str(sym), value=ir.params[name].card_text(), desc=ir.params[name].desc)
            for name, sym in ir.limits.items()]


def usage_instance(ir: ModelIR, inst: str = "X1", sep: str = " ") -> str:
    """An instance line safe to copy into any library section: the ports, the model and every
    instance parameter at its default, except the statistical draws (an override of a draw on
    the instance line would switch mismatch off in a Monte Carlo run)."""
    from compactgen.model.variation import is_draw

    parts = [inst, *[t.name for t in ir.terminals], ir.name]
    parts += [f"{s.name}={format_number(s.default)}" for s in ir.params
              if s.kind == "instance" and not is_draw(s.name)]
    return sep.join(parts)


def _node_table(ir: ModelIR, aux: list[dict], tnodes: list[dict], monitors: list[dict]) -> list[dict]:
    """Rows (name, kind, carries, scale) for every node of the subcircuit, in the order a reader
    meets them; the datasheet lists them all (ngspice cannot hide subcircuit nodes)."""
    rows = [dict(name=t.name, kind="port", carries=t.desc, scale="V") for t in ir.terminals]
    rows += [dict(name=n.name, kind="internal electrical node", carries=n.desc, scale="V") for n in ir.nodes]
    rows += [dict(name=s.name, kind="state", carries=s.desc, scale=f"1 V = 1 ({s.unit})" if s.unit != "1" else "1 V = 1")
             for s in ir.states]
    rows += [dict(name=m["name"], kind="output (sampled)", carries=m["desc"], scale=m["unit_text"])
             for m in monitors]
    rows.append(dict(name="clk", kind="model clock", carries="0 in every DC analysis, the simulation time in a transient",
                     scale="1 V = 1 s"))
    rows += [dict(name=q["name"], kind="temperature-dependent quantity", carries=q["desc"], scale=q["scale_text"])
             for q in tnodes]
    rows += [dict(name=a["name"], kind="shared quantity", carries=a["desc"], scale=a["scale_text"]) for a in aux]
    for n in ir.noise:
        rows += [dict(name=n.name, kind="noise input", carries=n.desc + " (0 unless thermal_field is on)",
                      scale="1 V = 1 standard deviation"),
                 dict(name=f"{n.name}q", kind="noise input (between its two sources)",
                      carries=f"the part of {n.name} from the trnoise source", scale="1 V = 1 standard deviation")]
    names = [r["name"] for r in rows]
    clash = sorted({n for n in names if names.count(n) > 1})
    if clash:
        raise ValueError(f"{ir.name}: ngspice node names used twice: {clash}")
    return rows
