"""ParamSpec: the single source of a parameter's name, unit, default, range, meaning and source.

One table of ParamSpecs per device kind feeds card validation, the starter card, the
Verilog-A declarations (``units``/``desc`` attributes and ``from`` ranges), the ngspice
``.subckt`` parameter line and the datasheet.  Names are identical in the card, in sympy,
in Verilog-A and in ngspice, so they are lower-case snake case and checked against the
reserved words of every target.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import sympy as sp

from .errors import RangeError

#: words a parameter may not be called because a target language or simulator owns them
RESERVED = frozenset(
    """
    begin end module endmodule analog parameter real integer from exclude inf if else for
    while case default function ln log exp sqrt abs min max pow time temper temp tnom_c
    m pi e area mult scale dtemp_c ddt idt ddx branch electrical inout input output
    vt limexp string genvar localparam table abstime include define
    """.split()
)
_NAME = re.compile(r"^[a-z][a-z0-9_]{0,30}$")


@dataclass(frozen=True)
class ParamSpec:
    """One model or instance parameter (SI units throughout)."""

    name: str
    unit: str  # SI unit, pint syntax; "1" for dimensionless
    default: float
    lo: float
    hi: float
    desc: str
    source: str = "illustrative default, no source"
    kind: str = "model"  # "model" or "instance"
    lo_open: bool = False
    hi_open: bool = False
    card_unit: str | None = None  # unit the starter card writes the default in
    group: str = "general"
    required: bool = False  # a card must give it (no sensible default exists)
    computed: str = ""  # non-empty: the default is computed at build time (says from what)

    def __post_init__(self):
        if not _NAME.match(self.name) or self.name in RESERVED:
            raise ValueError(f"parameter name {self.name!r} is not allowed (reserved or not snake case)")
        if self.kind not in ("model", "instance"):
            raise ValueError(f"parameter {self.name}: kind must be 'model' or 'instance'")
        self.check(self.default, where=f"default of {self.name}")

    @property
    def symbol(self) -> sp.Symbol:
        return symbol_for(self)

    def check(self, value: float, where: str = "") -> float:
        """Return ``value`` if it is inside the allowed range, else raise RangeError."""
        if not math.isfinite(value):
            raise RangeError(f"{where or self.name}: value {value!r} [{self.unit}] is not finite")
        lo_bad = value < self.lo or (self.lo_open and value == self.lo)
        hi_bad = value > self.hi or (self.hi_open and value == self.hi)
        if lo_bad or hi_bad:
            raise RangeError(
                f"{where or self.name}: value {value:.6g} [{self.unit}] is outside the allowed range "
                f"{self.range_text()} ({self.desc})"
            )
        return value

    def range_text(self, unit: str | None = None) -> str:
        """The allowed range, in ``unit`` (default: the SI unit)."""
        from .units import from_si

        unit = unit or self.unit
        conv = (lambda x: x) if unit == self.unit else (lambda x: x if math.isinf(x) else from_si(x, self.unit, unit))
        lb = "(" if self.lo_open else "["
        rb = ")" if self.hi_open else "]"
        u = "" if unit in ("1", "") else f" {unit}"
        return f"{lb}{_fmt(conv(self.lo))}, {_fmt(conv(self.hi))}{rb}{u}"

    def card_text(self, value: float | None = None) -> str:
        """The value as written in a card, in the card unit."""
        from .units import from_si

        v = self.default if value is None else value
        unit = self.card_unit or self.unit
        num = float(f"{from_si(v, self.unit, unit):.12g}")
        if unit in ("1", ""):
            return repr(num)
        return f"{num!r} {unit}"


def _fmt(x: float) -> str:
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:.6g}"


def symbol_for(spec: ParamSpec) -> sp.Symbol:
    assumptions = {"real": True}
    if spec.lo > 0 or (spec.lo == 0 and spec.lo_open):
        assumptions["positive"] = True
    elif spec.lo >= 0:
        assumptions["nonnegative"] = True
    return sp.Symbol(spec.name, **assumptions)


@dataclass
class ParamTable:
    """An ordered collection of ParamSpecs with lookup by name."""

    specs: list[ParamSpec] = field(default_factory=list)

    def __post_init__(self):
        names = [s.name for s in self.specs]
        dup = {n for n in names if names.count(n) > 1}
        if dup:
            raise ValueError(f"duplicate parameter names: {sorted(dup)}")

    def __iter__(self):
        return iter(self.specs)

    def __len__(self):
        return len(self.specs)

    def __contains__(self, name: str) -> bool:
        return any(s.name == name for s in self.specs)

    def __getitem__(self, name: str) -> ParamSpec:
        for s in self.specs:
            if s.name == name:
                return s
        raise KeyError(name)

    def names(self) -> list[str]:
        return [s.name for s in self.specs]

    def defaults(self) -> dict[str, float]:
        return {s.name: s.default for s in self.specs}

    def symbols(self) -> dict[str, sp.Symbol]:
        return {s.name: s.symbol for s in self.specs}
