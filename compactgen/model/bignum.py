"""Values beyond the range of a double, such as a retention time tau0 exp(Delta) when a large
pillar gives Delta in the thousands.

Such a value is an ``Overflow``: a float that is +inf in arithmetic and comparisons (so code
that only needs "very large" keeps working) and keeps its base-10 logarithm.  It has one text
form everywhere (datasheet, manifests, release reports): e-notation with its true exponent,
"6.74976e+3728", and one JSON form: ``"value": null`` with ``"log10"`` beside it (most JSON
readers stop at the double range, and strict JSON has no inf).

Two Overflows compare equal as floats whatever their logarithms: compare them with ``log10_of``.
"""
from __future__ import annotations

import math

LN10 = math.log(10.0)


class Overflow(float):
    """A positive finite value too large for a double: +inf, carrying ``log10``."""

    log10: float

    def __new__(cls, log10: float):
        self = super().__new__(cls, math.inf)
        self.log10 = float(log10)
        return self

    def __reduce__(self):
        return (Overflow, (self.log10,))

    def __repr__(self) -> str:
        return f"Overflow(log10={self.log10!r})"


def is_overflow(x) -> bool:
    return isinstance(x, Overflow)


def log10_of(x: float) -> float:
    """log10 of a positive value, an Overflow included (nan for x <= 0)."""
    if isinstance(x, Overflow):
        return x.log10
    x = float(x)
    return math.log10(x) if x > 0 else math.nan


def exp(x: float, scale: float = 1.0) -> float:
    """scale * e**x, an Overflow when it exceeds the double range (scale > 0)."""
    try:
        value = scale * math.exp(x)
    except OverflowError:
        value = math.inf
    if math.isinf(value):
        return Overflow(math.log10(scale) + x / LN10)
    return value


def from_sympy(value) -> float:
    """A sympy number as a float; a positive finite one beyond the double range as an Overflow."""
    f = float(value)
    if math.isinf(f) and f > 0 and bool(getattr(value, "is_finite", False)):
        import mpmath

        with mpmath.workprec(80):
            return Overflow(float(mpmath.log10(value._to_mpmath(80))))
    return f


def sci(x: float, digits: int = 6) -> str:
    """``digits`` significant digits, like ``f"{x:.{digits}g}"``; an Overflow in e-notation with
    its true exponent ("6.74976e+3728")."""
    if not isinstance(x, Overflow):
        return f"{x:.{digits}g}"
    exponent = math.floor(x.log10)
    mantissa = 10 ** (x.log10 - exponent)
    text = f"{mantissa:.{digits - 1}f}".rstrip("0").rstrip(".")
    if text.startswith("10"):  # rounded up to the next decade
        text, exponent = "1", exponent + 1
    return f"{text}e+{exponent}"


def to_record(value: float) -> dict:
    """JSON fields of a value: {"value": x}, or {"value": None, "log10": l} for an Overflow
    (and {"value": None} for nan/inf, which strict JSON cannot hold)."""
    if isinstance(value, Overflow):
        return {"value": None, "log10": value.log10}
    if value is None or not math.isfinite(value):
        return {"value": None}
    return {"value": value}


def from_record(rec: dict) -> float | None:
    """The value of a record written by ``to_record`` (None when it holds none)."""
    if rec.get("value") is None:
        return Overflow(rec["log10"]) if rec.get("log10") is not None else None
    return float(rec["value"])
