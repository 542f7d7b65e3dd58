"""Units at the edges only: strings such as "1.3 nm" become SI floats here and nowhere else.

Inside compactgen every number is SI (temperatures in kelvin).  Magnetic fields are stored
as H in A/m; a value written in tesla ("20 mT") is read as mu0*H and divided by mu0, and
oersted is converted with 1 Oe = 1000/(4*pi) A/m (common practice, no source).

pint does the reading.  Importing it and building its registry takes about half a second, so
a conversion pint has done once is remembered (``_Learnt``, in the ``units`` folder of the
cache, compactgen/cache.py) as the factor pint multiplies by, and later values in the same units
are multiplied here by that same factor: the same float, bit for bit, without pint.  A factor is
kept only when pint's own results for the value at hand, for 0 and for 3 agree with it bit for
bit (offset units such as degC never pass; their values are remembered one by one).
"""
from __future__ import annotations

import functools
import math
import re

from compactgen.model.constants import MU0
from compactgen.errors import UnitError


@functools.lru_cache(maxsize=1)
def registry():
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("percent_ratio = 0.01 = pct")
    return ureg


#: a value as read without pint: a plain decimal number, white space, and a product or quotient
#: of unit names with integer powers ("1.15 mJ/m^2", "4.0 ohm*um^2"); anything else goes to pint
_QUANTITY = re.compile(r"(-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?)[ \t]+"
                       r"([A-Za-z_]+(?:\^-?[0-9]+)?(?:[*/][A-Za-z_]+(?:\^-?[0-9]+)?)*)")


class _Learnt:
    """Conversions learnt from pint, in memory and in the cache folder ``units``: factors by
    (operation, unit, unit) and single values by (operation, text, unit).  The file's key holds
    pint's version and this module's source, so other pint or other code never reads them."""

    def __init__(self):
        self.doc = None
        self.path = None
        self.key = None

    def _load(self):
        from compactgen import cache

        folder = cache.cache_dir("units")
        if self.doc is not None and self.path.parent == folder:
            return
        if self.key is None:
            import hashlib

            self.key = hashlib.sha256(f"{cache.source_digest('model/units.py')} pint {cache.package_version('pint')}"
                                      .encode()).hexdigest()
        self.path = folder / f"units-{self.key[:32]}.json"
        self.doc = self._read()

    def _read(self) -> dict:
        from compactgen import cache

        doc = cache.read_json(self.path)
        empty = {"factors": {}, "values": {}}
        if not isinstance(doc, dict) or doc.get("key") != self.key:
            return empty
        out = {}
        for table in ("factors", "values"):
            t = doc.get(table)
            out[table] = t if isinstance(t, dict) else {}
        return out

    def get(self, table: str, *key):
        self._load()
        return self.doc[table].get("\x1f".join(key))

    def put(self, table: str, value, *key) -> None:
        from compactgen import cache

        self._load()
        k = "\x1f".join(key)
        if self.doc[table].get(k) == value:
            return
        self.doc[table][k] = value
        merged = self._read()  # what other processes have added meanwhile
        for name in ("factors", "values"):
            merged[name].update(self.doc[name])
        self.doc = merged
        cache.write_json(self.path, {"key": self.key, **merged})


_LEARNT = _Learnt()


def _factor(entry):
    """(mode, factor) of a learnt entry, or None if it is not one."""
    if (isinstance(entry, list) and len(entry) == 2 and entry[0] in _MODES
            and isinstance(entry[1], float) and math.isfinite(entry[1])):
        return entry[0], entry[1]
    return None


def _number(entry):
    return entry if isinstance(entry, float) and math.isfinite(entry) else None


#: how a learnt factor f turns a number x into the result (the same operations, in the same
#: order, as the pint code path it replaces)
_MODES = {
    "mul": lambda x, f: x * f,
    "tesla": lambda x, f: x * f / MU0,  # to_si: (x [unit] -> T) / mu0
    "oersted": lambda x, f: x * f * 1000.0 / (4.0 * math.pi),  # to_si: (x [unit] -> Oe) * 1000/(4 pi)
    "mu0": lambda x, f: x * MU0 * f,  # from_si: (x mu0 [T] -> unit)
}


def _learn_factor(table_key: tuple, mode: str, factor: float, checks: list[tuple[float, float]]) -> bool:
    """Keep ``factor`` if it reproduces every (x, pint's result) in ``checks`` bit for bit."""
    apply = _MODES[mode]
    if not math.isfinite(factor):
        return False
    for x, want in checks:
        got = apply(x, factor)
        if not (isinstance(want, float) and float(got).hex() == want.hex()):
            return False
    _LEARNT.put("factors", [mode, factor], *table_key)
    return True


def _where(where: str) -> str:
    return f"{where}: " if where else ""


def to_si(text, unit: str, where: str = "", hint_unit: str | None = None) -> float:
    """Convert ``text`` (a string with a unit, or a bare number for dimensionless ``unit``)
    to a float in the SI unit ``unit``.  ``hint_unit``: the unit a number without one is
    suggested in (a parameter's card unit, "nm" for a diameter); default ``unit``.

    ``where`` names the file and key for the error message.
    """
    if isinstance(text, bool):
        raise UnitError(f"{_where(where)}expected a value with unit [{unit}], got a boolean {text!r}")
    if isinstance(text, (int, float)):
        if _canon(unit) == "dimensionless" or _LEARNT.get("values", "dimensionless", unit) == 1.0:
            value = float(text)
            _finite(value, where, unit)
            return value
        value = _to_si_pint(text, unit, where, hint_unit)  # refuses a bare number for a unit with a dimension
        _LEARNT.put("values", 1.0, "dimensionless", unit)
        return value
    if not isinstance(text, str):
        return _to_si_pint(text, unit, where, hint_unit)
    s = _clean(text)
    m = _QUANTITY.fullmatch(s)
    if m:
        plan = _factor(_LEARNT.get("factors", "to_si", m.group(2), unit))
        if plan is not None:
            value = _MODES[plan[0]](float(m.group(1)), plan[1])
            _finite(value, where, unit)
            return value
    value = _number(_LEARNT.get("values", "to_si", s, unit))
    if value is not None:
        return value
    value = _to_si_pint(text, unit, where, hint_unit)
    if not (m and _learn_to_si(m.group(2), unit, float(m.group(1)), value)):
        _LEARNT.put("values", value, "to_si", s, unit)  # e.g. an offset unit (degC): this value only
    return value


def _clean(text: str) -> str:
    return text.strip().replace("%", " percent").replace("Ω", "ohm").replace("µ", "u").replace("μ", "u")


def _learn_to_si(unit_text: str, unit: str, x: float, value: float) -> bool:
    """Learn the factor of ``unit_text`` -> ``unit`` (pint just read ``x`` of it as ``value``);
    False if there is none."""
    ureg = registry()
    target = ureg.Quantity(1.0, _canon(unit))
    try:
        q = ureg.Quantity(f"1.0 {unit_text}")
    except Exception:  # pint raises several types for unparsable text
        return False
    if not isinstance(q, ureg.Quantity) or (q.dimensionless and not target.dimensionless):
        return False
    if q.check(target.dimensionality):
        mode, to = "mul", target.units
    elif unit == "A/m" and q.check(ureg.tesla.dimensionality):
        mode, to = "tesla", "T"
    elif unit == "A/m" and q.check(ureg.oersted.dimensionality):
        mode, to = "oersted", "oersted"
    elif unit == "A/m/s" and q.check((ureg.tesla / ureg.second).dimensionality):
        mode, to = "tesla", "T/s"
    elif unit == "A/m/s" and q.check((ureg.oersted / ureg.second).dimensionality):
        mode, to = "oersted", "oersted/s"
    else:
        return False
    factor = float(q.to(to).magnitude)
    checks = [(x, value)] + [(y, _to_si_pint(f"{y!r} {unit_text}", unit)) for y in (0.0, 3.0)]
    return _learn_factor(("to_si", unit_text, unit), mode, factor, checks)


def _to_si_pint(text, unit: str, where: str = "", hint_unit: str | None = None) -> float:
    """to_si through pint (the reference the learnt factors reproduce)."""
    hint = hint_unit or unit
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
            f"{_where(where)}the number {text!r} has no unit; write it with a unit, e.g. \"{text} {hint}\""
        )
    if not isinstance(text, str):
        raise UnitError(f"{_where(where)}expected a string like \"1.3 nm\", got {type(text).__name__} {text!r}")
    s = _clean(text)
    try:
        q = ureg.Quantity(s)
    except Exception as exc:  # pint raises several types for unparsable text
        raise UnitError(f"{_where(where)}cannot read {text!r} as a value with unit ({exc.__class__.__name__})") from None
    if not isinstance(q, ureg.Quantity):
        q = ureg.Quantity(float(q), "")
    if q.dimensionless and not target.dimensionless:
        raise UnitError(
            f"{_where(where)}{text!r} has no unit; write it with a unit, e.g. \"{q.magnitude} {hint}\""
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
    plan = _factor(_LEARNT.get("factors", "convert", from_unit, to_unit))
    if plan is not None:
        return float(_MODES[plan[0]](value, plan[1]))
    out = _convert_pint(value, from_unit, to_unit)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        factor = _convert_pint(1.0, from_unit, to_unit)
        checks = [(float(value), out)] + [(y, _convert_pint(y, from_unit, to_unit)) for y in (0.0, 3.0)]
        _learn_factor(("convert", from_unit, to_unit), "mul", factor, checks)
    return out


def _convert_pint(value: float, from_unit: str, to_unit: str) -> float:
    ureg = registry()
    return float(ureg.Quantity(value, _canon(from_unit)).to(_canon(to_unit)).magnitude)


def from_si(value: float, si_unit: str, unit: str) -> float:
    """Express an SI value in ``unit`` (the inverse of to_si, fields in tesla included)."""
    if unit == si_unit:
        return float(value)
    if si_unit == "K" and unit == "degC":
        return float(value) - 273.15
    plan = _factor(_LEARNT.get("factors", "from_si", si_unit, unit))
    if plan is not None:
        return float(_MODES[plan[0]](value, plan[1]))
    ureg = registry()
    q = ureg.Quantity(1.0, _canon(unit))
    if si_unit == "A/m" and q.check(ureg.tesla.dimensionality):
        def tesla(v):
            return float(ureg.Quantity(v * MU0, "T").to(unit).magnitude)

        out, mode, factor, reference = tesla(value), "mu0", float(ureg.Quantity(1.0, "T").to(unit).magnitude), tesla
    else:
        def plain(v):
            return convert(v, si_unit, unit)

        out, mode, factor, reference = plain(value), "mul", _convert_pint(1.0, si_unit, unit), plain
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        checks = [(float(value), out)] + [(y, reference(y)) for y in (0.0, 3.0)]
        _learn_factor(("from_si", si_unit, unit), mode, factor, checks)
    return out


def linear_map(unit: str, si_unit: str, where: str = "") -> tuple[float, float]:
    """(scale, offset) such that value_si = scale * value + offset for numbers written in
    ``unit`` (a data-file column); offset is non-zero only for degC/degF temperatures."""
    zero = to_si(f"0 {unit}", si_unit, where)
    one = to_si(f"1 {unit}", si_unit, where)
    return one - zero, zero
