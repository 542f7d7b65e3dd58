"""Measurement types the fit understands: the columns and metadata each one needs.

A data file is CSV (comma or tab separated) with optional ``# key: value`` metadata lines,
then one header line of column names with units in brackets (``field [mT]``), then rows.
Column names are case-insensitive; spaces and dashes count as underscores.
"""
from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class ColumnSpec:
    name: str
    si_unit: str | None  # None: a text column (choices), "1": a dimensionless number
    desc: str
    choices: tuple[str, ...] = ()
    integer: bool = False
    example: str = ""  # how to write the header cell


@dataclass(frozen=True)
class MetaSpec:
    key: str
    si_unit: str | None  # None: a text value from ``choices``
    desc: str
    choices: tuple[str, ...] = ()
    example: str = ""

    @property
    def example_unit(self) -> str | None:
        """The unit the example line writes the value in ("nm" of "# diameter: 35 nm"), if any."""
        value = self.example.partition(":")[2].split(None, 1)
        return value[1] if len(value) == 2 else None


@dataclass(frozen=True)
class Schema:
    key: str
    title: str
    #: groups of columns; each group needs exactly one of its alternatives
    columns: tuple[tuple[ColumnSpec, ...], ...]
    optional: tuple[ColumnSpec, ...] = ()
    #: groups of metadata keys; each group needs one of its alternatives
    meta: tuple[tuple[MetaSpec, ...], ...] = ()
    optional_meta: tuple[MetaSpec, ...] = ()
    why: dict[str, str] = field(default_factory=dict)  # metadata key -> why the fit needs it

    def column_specs(self) -> dict[str, ColumnSpec]:
        out = {c.name: c for group in self.columns for c in group}
        out.update({c.name: c for c in self.optional})
        return out

    def meta_specs(self) -> dict[str, MetaSpec]:
        out = {m.key: m for group in self.meta for m in group}
        out.update({m.key: m for m in self.optional_meta})
        return out

    def describe(self) -> str:
        cols = ", ".join(" or ".join(f"{c.example or c.name}" for c in g) for g in self.columns)
        return f"{self.key} ({self.title}): columns {cols}"


STATES = ("P", "AP")
DIRECTIONS = ("P->AP", "AP->P")
POLARITIES = ("top-to-bottom", "bottom-to-top")
WALLS = ("up-down", "down-up")

_AREA = (MetaSpec("diameter", "m", "pillar diameter (area = pi d^2/4)", example="# diameter: 35 nm"),
         MetaSpec("area", "m^2", "junction area", example="# area: 962 nm^2"))
_TEMP = MetaSpec("temperature", "K", "sample temperature", example="# temperature: 300 K")
_DEVICE = (MetaSpec("device", None, "device identifier"), MetaSpec("wafer", None, "wafer identifier"),
           MetaSpec("date", None, "measurement date"), MetaSpec("synthetic", None, "how synthetic data were made"))

RESISTANCE_FIELD = Schema(
    "resistance-field", "resistance versus perpendicular field loops (R-H)",
    columns=((ColumnSpec("field", "A/m", "perpendicular field (+ along the reference layer)", example="field [mT]"),),
             (ColumnSpec("resistance", "ohm", "junction resistance at the read bias", example="resistance [ohm]"),)),
    optional=(ColumnSpec("loop", "1", "loop index (repeated loops)", integer=True, example="loop"),),
    meta=(_AREA, (_TEMP,),
          (MetaSpec("read_bias", "V", "read bias of the loop", example="# read_bias: 50 mV"),),
          (MetaSpec("sweep_rate", "A/m/s", "field sweep rate dH/dt", example="# sweep_rate: 10 mT/s"),
           MetaSpec("hold_time", "s", "time the field is held at each step", example="# hold_time: 1 s"))),
    optional_meta=_DEVICE,
    why={"diameter": "RA = R * area", "temperature": "the thermal stability factor Delta = E_b/(k_B T)",
         "read_bias": "R_AP depends on bias through the TMR roll-off",
         "sweep_rate": "the thermally activated switching field depends on the sweep rate"},
)

RESISTANCE_BIAS = Schema(
    "resistance-bias", "resistance or current versus bias in the P and AP states (R-V, I-V), or TMR versus bias",
    columns=((ColumnSpec("voltage", "V", "bias across the junction", example="voltage [V]"),),
             (ColumnSpec("resistance", "ohm", "junction resistance V/I", example="resistance [ohm]"),
              ColumnSpec("current", "A", "junction current", example="current [uA]"),
              ColumnSpec("tmr", "1", "TMR ratio (R_AP - R_P)/R_P", example="tmr [%]"))),
    optional=(ColumnSpec("state", None, "prepared state", choices=STATES, example="state"),),
    meta=(_AREA,),
    optional_meta=(_TEMP, *_DEVICE),
    why={"diameter": "RA = R * area"},
)

SWITCHING = Schema(
    "switching", "switching probability versus pulse width and amplitude (attempts and switched counts)",
    columns=((ColumnSpec("pulse_width", "s", "pulse duration", example="pulse_width [ns]"),),
             (ColumnSpec("voltage", "V", "pulse amplitude across the junction (signed)", example="voltage [V]"),
              ColumnSpec("current", "A", "pulse current (signed)", example="current [uA]")),
             (ColumnSpec("direction", None, "write direction", choices=DIRECTIONS, example="direction"),),
             (ColumnSpec("attempts", "1", "number of pulses", integer=True, example="attempts"),),
             (ColumnSpec("switched", "1", "pulses that switched", integer=True, example="switched"),
              ColumnSpec("probability", "1", "switched fraction", example="probability"))),
    meta=(_AREA, (_TEMP,),
          (MetaSpec("polarity", None, "sign convention of the amplitude: positive conventional current flows from "
                    "the top (free-layer) electrode to the bottom (reference-layer) electrode, or the reverse",
                    choices=POLARITIES, example="# polarity: top-to-bottom"),)),
    optional_meta=_DEVICE,
    why={"diameter": "current density and the free-layer volume", "temperature": "Delta = E_b/(k_B T)",
         "polarity": "which current sign writes which state"},
)

WALL_VELOCITY = Schema(
    "wall-velocity", "domain-wall velocity versus current density (and optionally field)",
    columns=((ColumnSpec("current_density", "A/m^2", "current density in the heavy metal, along +x",
                         example="current_density [A/cm^2]"),),
             (ColumnSpec("velocity", "m/s", "wall velocity along +x (signed)", example="velocity [m/s]"),)),
    optional=(ColumnSpec("field", "A/m", "perpendicular field", example="field [mT]"),),
    meta=(),
    optional_meta=(MetaSpec("wall", None, "wall type: up-down (Q = +1) or down-up (Q = -1); needed with a field "
                            "column", choices=WALLS, example="# wall: up-down"), _TEMP, *_DEVICE),
    why={"wall": "under a perpendicular field up-down and down-up walls move in opposite directions"},
)

SCHEMAS: dict[str, Schema] = {s.key: s for s in (RESISTANCE_FIELD, RESISTANCE_BIAS, SWITCHING, WALL_VELOCITY)}
