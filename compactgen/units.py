"""Units at the edges only: strings such as "1.3 nm" become SI floats here and nowhere else.

Inside compactgen every number is SI (temperatures in kelvin).  Magnetic fields are stored
as H in A/m; a value written in tesla ("20 mT") is read as mu0*H and divided by mu0, and
oersted is converted with 1 Oe = 1000/(4*pi) A/m (common practice, no source).
"""
from __future__ import annotations

import functools
import math

from .constants import MU0
from .errors import UnitError


@functools.lru_cache(maxsize=1)
def registry():
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("percent_ratio = 0.01 = pct")
    return ureg


def _where(where: str) -> str:
    return f"{where}: " if where else ""


def to_si(text, unit: str, where: str = "") -> float:
    """Convert ``text`` (a string with a unit, or a bare number for dimensionless ``unit``)
    to a float in the SI unit ``unit``.

    ``where`` names the file and key for the error message.
    """
    ureg = registry()
    target = ureg.Quantity(1.0, _canon(unit))
    if isinstance(text, bool):
        raise UnitError(f"{_where(where)}expected a value with unit [{unit}], got a boolean {text!r}")
    if isinstance(text, (int, float)):
        if target.dimensionless:
            value = float(text)
            _finite(value, where, unit)
            return value
        raise UnitError(
            f"{_where(where)}the number {text!r} has no unit; write it with a unit, e.g. \"{text} {unit}\""
        )
    if not isinstance(text, str):
        raise UnitError(f"{_where(where)}expected a string like \"1.3 nm\", got {type(text).__name__} {text!r}")
    s = text.strip().replace("%", " percent").replace("Ω", "ohm").replace("µ", "u").replace("μ", "u")
    try:
        q = ureg.Quantity(s)
    except Exception as exc:  # pint raises several types for unparsable text
        raise UnitError(f"{_where(where)}cannot read {text!r} as a value with unit ({exc.__class__.__name__})") from None
    if not isinstance(q, ureg.Quantity):
        q = ureg.Quantity(float(q), "")
    if q.dimensionless and not target.dimensionless:
        raise UnitError(
            f"{_where(where)}{text!r} has no unit; expected a value in [{unit}], e.g. \"{q.magnitude} {unit}\""
        )
    if q.check(target.dimensionality):
        value = float(q.to(target.units).magnitude)
    elif unit == "A/m" and q.check(ureg.tesla.dimensionality):
        value = float(q.to("T").magnitude) / MU0  # mu0*H given in tesla
    elif unit == "A/m" and q.check(ureg.oersted.dimensionality):
        value = float(q.to("oersted").magnitude) * 1000.0 / (4.0 * math.pi)
    elif unit == "A/m/s" and q.check((ureg.tesla / ureg.second).dimensionality):
        value = float(q.to("T/s").magnitude) / MU0  # a field sweep rate given as mu0*dH/dt
    elif unit == "A/m/s" and q.check((ureg.oersted / ureg.second).dimensionality):
        value = float(q.to("oersted/s").magnitude) * 1000.0 / (4.0 * math.pi)
    else:
        raise UnitError(
            f"{_where(where)}{text!r} has the wrong dimension: expected [{unit}] "
            f"({target.dimensionality}), got {q.dimensionality}"
        )
    _finite(value, where, unit)
    return value


def _finite(value: float, where: str, unit: str) -> None:
    if not math.isfinite(value):
        raise UnitError(f"{_where(where)}value {value!r} [{unit}] is not a finite number")


def _canon(unit: str) -> str:
    return {"1": "dimensionless", "": "dimensionless", "-": "dimensionless"}.get(unit, unit)


def format_si(value: float, unit: str) -> str:
    """A card-ready string for an SI value: repr precision so it reads back exactly."""
    if _canon(unit) == "dimensionless":
        return repr(float(value))
    return f"{float(value)!r} {unit}"


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a float between two units of the same dimension (used for data columns)."""
    ureg = registry()
    return float(ureg.Quantity(value, _canon(from_unit)).to(_canon(to_unit)).magnitude)


def from_si(value: float, si_unit: str, unit: str) -> float:
    """Express an SI value in ``unit`` (the inverse of to_si, fields in tesla included)."""
    if unit == si_unit:
        return float(value)
    ureg = registry()
    q = ureg.Quantity(1.0, _canon(unit))
    if si_unit == "A/m" and q.check(ureg.tesla.dimensionality):
        return float(ureg.Quantity(value * MU0, "T").to(unit).magnitude)
    if si_unit == "K" and unit == "degC":
        return float(value) - 273.15
    return convert(value, si_unit, unit)


def linear_map(unit: str, si_unit: str, where: str = "") -> tuple[float, float]:
    """(scale, offset) such that value_si = scale * value + offset for numbers written in
    ``unit`` (a data-file column); offset is non-zero only for degC/degF temperatures."""
    zero = to_si(f"0 {unit}", si_unit, where)
    one = to_si(f"1 {unit}", si_unit, where)
    return one - zero, zero
