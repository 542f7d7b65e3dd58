"""The numbers of a ModelIR: every parameter, constant and parameter-level derived quantity at the
card's values (constraints checked on the way), and the key figures at a temperature.  Shared by
the reference solver, the renderers (node scales, datasheet) and the card checks."""
from __future__ import annotations

import re

import sympy as sp

from compactgen.model import bignum
from compactgen.errors import RangeError
from compactgen.model.ir import Constraint, ModelIR

DEFAULT_TEMPERATURE = 300.15  # [K], 27 degC: the default circuit temperature of ngspice and VACASK


def numeric_parameters(ir: ModelIR, overrides: dict[str, float] | None = None) -> dict[sp.Symbol, float]:
    """Numbers for every parameter, constant and parameter-only derived symbol (not those that
    depend on temperature)."""
    overrides = dict(overrides or {})
    unknown = set(overrides) - set(ir.params.names())
    if unknown:
        raise KeyError(f"unknown parameter(s) {sorted(unknown)} for {ir.kind}")
    num: dict[sp.Symbol, float] = dict(ir.constants)
    for spec in ir.params:
        value = overrides.get(spec.name, spec.default)
        spec.check(value, where=f"parameter {spec.name}")
        num[spec.symbol] = float(value)
    tdep = ir.temperature_dependent()
    pending = [Constraint.of(c) for c in ir.constraints]

    def check_constraints():
        for item in list(pending):
            if item.expr.free_symbols <= set(num):
                pending.remove(item)
                value = _evaluate(item.expr, num, "constraint")
                if not value > 0:
                    raise RangeError(constraint_message(ir, item, num, value))

    for sym, expr in ir.derived:
        check_constraints()
        if sym in tdep:
            continue
        num[sym] = _evaluate(expr, num, str(sym))
    check_constraints()
    return num


def reference_numbers(ir: ModelIR, overrides: dict[str, float] | None = None,
                      temperature: float = DEFAULT_TEMPERATURE) -> dict[sp.Symbol, float]:
    """Numbers for every parameter, constant and derived symbol at ``temperature`` [K] (what
    ReferenceModel.num holds, without preparing the model for integration)."""
    num = numeric_parameters(ir, overrides)
    num[ir.temperature] = float(temperature)
    for sym, expr in ir.derived:
        if sym not in num:
            num[sym] = _evaluate(expr, num, str(sym))
    for n in ir.noise:  # deterministic evaluation: the noise inputs read 0
        num[n.symbol] = 0.0
    return num


def constraint_message(ir: ModelIR, item: Constraint, num: dict, value: float) -> str:
    """The refusal of a failed constraint in card terms: the relation with the card values it
    names (in their card units), then the other card parameters it depends on."""
    from compactgen.model.units import from_si

    specs = {s.name: s for s in ir.params}

    def param_text(name: str) -> str:
        return f"{name} = {_card_value(specs[name], num[specs[name].symbol])}"

    def quantity_text(v: float) -> str:
        unit = item.card_unit or item.unit
        shown = v if unit == item.unit else from_si(v, item.unit, unit)
        return f"{shown:.4g}" + ("" if unit in ("1", "") else f" {unit}")

    values = {"value": quantity_text(value)}
    for key, expr in item.shown:
        values[key] = quantity_text(_evaluate(expr, num, key))
    named: set[str] = set()

    def fill(match) -> str:
        key = match.group(1)
        if key in values:
            return values[key]
        if key in specs:
            named.add(key)
            return param_text(key)
        return match.group(0)

    text = re.sub(r"\{([a-z_][a-z0-9_]*)\}", fill, item.message)
    derived = dict(ir.derived)
    involved: list[str] = []
    seen: set[sp.Symbol] = set()

    def walk(expr):
        for sym in sorted(sp.sympify(expr).free_symbols, key=str):
            if sym in seen:
                continue
            seen.add(sym)
            if sym.name.startswith("vm_"):  # a process-variation multiplier (devices/variation.py)
                continue
            if sym in derived:
                walk(derived[sym])
            elif sym.name in specs and sym.name not in named and _card_level(specs[sym.name]):
                involved.append(sym.name)

    walk(item.expr)
    for _, expr in item.shown:
        walk(expr)
    order = {s.name: i for i, s in enumerate(ir.params)}
    rest = ", ".join(param_text(n) for n in sorted(involved, key=order.get))
    return f"{text}: {rest}" if rest else text


def _card_level(spec) -> bool:
    """A parameter a card sets for the device itself (not a variation draw or spread, not an
    instance parameter)."""
    return spec.kind == "model" and spec.group != "process variation"


def _card_value(spec, value: float) -> str:
    """A parameter value as a card writes it, to 6 significant digits ("0.2 mJ/m^2")."""
    from compactgen.model.units import from_si

    unit = spec.card_unit or spec.unit
    v = value if unit == spec.unit else from_si(value, spec.unit, unit)
    return f"{v:.6g}" + ("" if unit in ("1", "") else f" {unit}")


def _evaluate(expr: sp.Expr, num: dict, what: str, big: bool = False) -> float:
    """``expr`` with the numbers ``num`` as a float; with ``big`` a positive value beyond the
    double range comes back as a bignum.Overflow (inf that keeps its log10) instead of plain inf."""
    value = sp.sympify(sp.sympify(expr).xreplace(num))
    if isinstance(value, sp.Piecewise):
        value = value.doit()
    try:
        value = value.evalf(17)
        return bignum.from_sympy(value) if big else float(value)
    except TypeError as exc:
        z = complex(value.evalf(17)) if value.is_number else None
        if z is not None and z.imag != 0:  # e.g. a threshold past the point where the state exists
            return float("nan")
        raise ValueError(f"cannot evaluate {what}: {value}") from exc


def figures(ir: ModelIR, overrides: dict[str, float] | None = None,
            temperature: float | None = None) -> dict[str, float]:
    """Key figures as floats, at ``temperature`` [K] (default: the parameters' own ``tnom``); one
    beyond the double range (a retention time of a large pillar) is a bignum.Overflow."""
    num = numeric_parameters(ir, overrides)
    tdep = ir.temperature_dependent()
    if tdep:
        if temperature is None:
            temperature = num[ir.params["tnom"].symbol] if "tnom" in ir.params else DEFAULT_TEMPERATURE
        num[ir.temperature] = float(temperature)
        for sym, expr in ir.derived:
            if sym in tdep:
                num[sym] = _evaluate(expr, num, str(sym))
    return {f.name: _evaluate(f.expr, num, f.name, big=True) for f in ir.figures}
