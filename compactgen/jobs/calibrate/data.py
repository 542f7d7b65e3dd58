"""Measured-data ingest: CSV with units in the header, ``# key: value`` metadata, one schema per
measurement type.  Values are converted to SI once, here (through ``compactgen.model.units``);
the original units are kept for plots and reports.

Every error is a DataError that names the file, the line and the column (or metadata key),
the value and what was expected.  Nothing is guessed: a missing area, temperature or
polarity that the fit needs is an error, not a default.
"""
from __future__ import annotations

import hashlib
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from compactgen.errors import DataError, UnitError
from compactgen.model.units import linear_map, to_si
from compactgen.jobs.calibrate.schemas import SCHEMAS, ColumnSpec, Schema

_HEADER_CELL = re.compile(r"^\s*(?P<name>[^\[\]]*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?\s*$")
_META = re.compile(r"^#\s*(?P<key>[A-Za-z][A-Za-z0-9 _\-]*?)\s*:\s*(?P<value>.*?)\s*$")
#: unit spellings pint would read as something else than a person means
_AMBIGUOUS = {
    "mt": "pint reads 'mt' as millimetric ton; write mT for millitesla",
    "MT": "pint reads 'MT' as megatesla; write mT for millitesla",
    "t": "pint reads 't' as metric ton; write T for tesla",
    "a.u.": "arbitrary units cannot be converted; give the physical unit",
    "a.u": "arbitrary units cannot be converted; give the physical unit",
    "au": "'au' may mean astronomical or arbitrary units; give the physical unit",
    "arb": "arbitrary units cannot be converted; give the physical unit",
    "arb.": "arbitrary units cannot be converted; give the physical unit",
    "arb. units": "arbitrary units cannot be converted; give the physical unit",
}
_DIGIT_EXPONENT = re.compile(r"[A-Za-z]\d")


@dataclass
class Dataset:
    """One measured file, in SI."""

    path: Path
    schema: Schema
    meta: dict[str, str]  # raw metadata text, keys normalised
    meta_line: dict[str, int]
    columns: dict[str, np.ndarray]  # SI floats, or str arrays for text columns
    units: dict[str, str]  # column -> unit as written in the file
    lines: np.ndarray  # file line number of each row (1-based)
    sha256: str
    ignored: list[str] = field(default_factory=list)

    @property
    def kind(self) -> str:
        return self.schema.key

    @property
    def name(self) -> str:
        return self.path.name

    def __len__(self) -> int:
        return len(self.lines)

    def has(self, column: str) -> bool:
        return column in self.columns

    def meta_si(self, key: str, need: str = "") -> float | str:
        """A metadata value in SI (or its text); a missing key is a DataError saying why it is needed."""
        spec = self.schema.meta_specs().get(key)
        if key not in self.meta:
            why = need or self.schema.why.get(key, "the fit")
            ex = f"; add a line like '{spec.example}' above the header" if spec and spec.example else ""
            raise DataError(f"{self.path}: metadata '{key}' is missing; it is needed for {why} "
                            f"(the fit does not guess it){ex}")
        text = self.meta[key]
        where = f"{self.path}, line {self.meta_line[key]}, metadata '{key}'"
        if spec is None or spec.si_unit is None:
            if spec is not None and spec.choices:
                norm = _choice(text, spec.choices)
                if norm is None:
                    raise DataError(f"{where}: {text!r} is not one of {', '.join(spec.choices)}")
                return norm
            return text
        try:
            return to_si(text, spec.si_unit, where=where, hint_unit=spec.example_unit)
        except UnitError as exc:
            raise DataError(str(exc)) from None

    def area(self) -> float:
        """Junction area [m^2] from the ``diameter`` or ``area`` metadata."""
        if "area" in self.meta:
            a = float(self.meta_si("area"))
        elif "diameter" in self.meta:
            d = float(self.meta_si("diameter"))
            a = math.pi * d * d / 4
        else:
            raise DataError(f"{self.path}: metadata 'diameter' (or 'area') is missing; it is needed for "
                            f"{self.schema.why.get('diameter', 'the junction area')} (the fit does not guess it); "
                            "add a line like '# diameter: 35 nm' above the header")
        if not a > 0:
            raise DataError(f"{self.path}: the junction area must be positive (got {a:g} m^2)")
        return a

    def where(self, row: int, column: str) -> str:
        return f"{self.path}, line {int(self.lines[row])}, column '{column}'"


def _norm(name: str) -> str:
    return re.sub(r"[\s\-]+", "_", name.strip().lower())


def _choice(text: str, choices: tuple[str, ...]) -> str | None:
    """The allowed spelling of ``text`` (case-insensitive; arrows may be written '-', '>', 'to')."""
    t = text.strip()
    for c in choices:
        if t.lower() == c.lower():
            return c
    if any("->" in c for c in choices):
        u = re.sub(r"\s*(->|\u2192|>|-|\bto\b)\s*", "->", t, flags=re.IGNORECASE).upper()
        for c in choices:
            if u == c.upper():
                return c
    return None


def read_dataset(path: str | Path, kind: str | None = None) -> Dataset:
    """Read and check one data file; ``kind`` forces the measurement type."""
    parsed = _parse_file(Path(path), kind)
    return _dataset(parsed, parsed["rows"], parsed["row_lines"], {})


def read_device_datasets(path: str | Path, column: str = "device", add_meta=None) -> list[tuple[str, Dataset]]:
    """One file holding several devices, each row tagged with its device id in ``column`` (a text
    column, as many rows per device as a file of one device would hold), or one device named by
    ``# device: ID``: a (device id, Dataset) pair per device, in the order of first appearance,
    each checked on its own.  ``add_meta(device_id, meta, meta_line, where)`` (the file's metadata,
    their line numbers, and where the device is named: file, line, column or metadata key)
    returns metadata {key: text} that replaces or completes the file's (e.g.
    the diameter from a device table; it may check the file's own first).  A file that names no
    device is a DataError."""
    parsed = _parse_file(Path(path), None)
    names = parsed["names"]
    key = _norm(column)
    groups: dict[str, tuple[list, list]] = {}
    if key in names:
        k = names.index(key)
        for cells, line in zip(parsed["rows"], parsed["row_lines"]):
            dev = cells[k]
            if not dev:
                raise DataError(f"{parsed['path']}, line {line}, column '{key}': empty device id")
            rows, lines = groups.setdefault(dev, ([], []))
            rows.append(cells)
            lines.append(line)
    elif "device" in parsed["meta"]:
        groups[parsed["meta"]["device"].strip()] = (parsed["rows"], parsed["row_lines"])
    else:
        raise DataError(f"{parsed['path']}: names no device: add a column '{key}' with each row's device id, "
                        "or a line '# device: ID' above the header")
    out = []
    for dev, (rows, lines) in groups.items():
        where = (f"{parsed['path']}, line {lines[0]}, column '{key}'" if key in names
                 else f"{parsed['path']}, line {parsed['meta_line']['device']}, metadata 'device'")
        extra = add_meta(dev, dict(parsed["meta"]), dict(parsed["meta_line"]), where) if add_meta else {}
        out.append((dev, _dataset(parsed, rows, lines, {**extra, "device": dev})))
    return out


def read_csv_cells(path: Path) -> dict:
    """The CSV conventions of every data file, no schema: ``# key: value`` metadata (each once),
    the header of ``name [unit]`` cells (names normalised, each once), and the rows as text cells
    with their line numbers.  Returns path, meta, meta_line, names, units, header_at, sep, rows,
    row_lines, sha256."""
    if not path.is_file():
        raise DataError(f"{path}: no such data file")
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise DataError(f"{path}: not UTF-8 text (byte {exc.start})") from None
    lines = text.splitlines()
    meta: dict[str, str] = {}
    meta_line: dict[str, int] = {}
    header_at = None
    for i, line in enumerate(lines, start=1):
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            m = _META.match(s)
            if m:
                key = _norm(m.group("key"))
                if key in meta:
                    raise DataError(f"{path}, line {i}: metadata '{key}' given twice (first on line {meta_line[key]})")
                meta[key] = m.group("value")
                meta_line[key] = i
            continue
        header_at = i
        break
    if header_at is None:
        raise DataError(f"{path}: no header line (expected column names with units, e.g. 'field [mT],resistance [ohm]')")
    header = lines[header_at - 1]
    sep = "\t" if ("\t" in header and "," not in header) else ","
    names, units = [], []
    for col, cell in enumerate(header.split(sep), start=1):
        m = _HEADER_CELL.match(cell)
        if not m or not m.group("name"):
            raise DataError(f"{path}, line {header_at}, column {col}: cannot read header cell {cell!r}; "
                            "expected 'name [unit]'")
        name = _norm(m.group("name"))
        if name in names:
            raise DataError(f"{path}, line {header_at}: column '{name}' appears twice (ambiguous)")
        names.append(name)
        units.append((m.group("unit") or "").strip())
    # rows
    rows: list[list[str]] = []
    row_lines: list[int] = []
    for i in range(header_at + 1, len(lines) + 1):
        s = lines[i - 1].strip()
        if not s or s.startswith("#"):
            continue
        cells = [c.strip() for c in lines[i - 1].split(sep)]
        if len(cells) != len(names):
            raise DataError(f"{path}, line {i}: {len(cells)} values, but the header has {len(names)} columns")
        rows.append(cells)
        row_lines.append(i)
    return dict(path=path, meta=meta, meta_line=meta_line, names=names, units=units, header_at=header_at, sep=sep,
                rows=rows, row_lines=row_lines, sha256=hashlib.sha256(raw).hexdigest())


def _parse_file(path: Path, kind: str | None) -> dict:
    """Header, metadata, schema, column units and raw rows of a data file (nothing converted)."""
    cells = read_csv_cells(path)
    meta, meta_line, names, units, header_at = (cells[k] for k in ("meta", "meta_line", "names", "units", "header_at"))
    rows, row_lines = cells["rows"], cells["row_lines"]
    schema = _pick_schema(path, kind or meta.get("measurement"), names, meta_line.get("measurement"))
    specs = schema.column_specs()
    for group in schema.columns:
        present = [c.name for c in group if c.name in names]
        if not present:
            want = " or ".join(f"'{c.example or c.name}'" for c in group)
            raise DataError(f"{path}, line {header_at}: missing column {want} for a {schema.key} file "
                            f"(columns found: {', '.join(names)})")
        if len(present) > 1:
            raise DataError(f"{path}, line {header_at}: columns {', '.join(present)} are alternatives; give only one")
    if schema is SCHEMAS["resistance-bias"] and "tmr" not in names and "state" not in names:
        raise DataError(f"{path}, line {header_at}: missing column 'state' (P or AP) for resistance or current "
                        "versus bias")
    used = [n for n in names if n in specs]
    ignored = [n for n in names if n not in specs]
    # units of the used columns
    maps: dict[str, tuple[float, float]] = {}
    for n, u in zip(names, units):
        if n not in specs:
            continue
        maps[n] = _column_map(path, header_at, n, u, specs[n])
    if not rows:
        raise DataError(f"{path}: no data rows after the header (line {header_at})")
    return dict(path=path, schema=schema, meta=meta, meta_line=meta_line, names=names, units=units, used=used,
                ignored=ignored, specs=specs, maps=maps, rows=rows, row_lines=row_lines, header_at=header_at,
                sha256=cells["sha256"])


def _dataset(parsed: dict, rows: list[list[str]], row_lines: list[int], extra_meta: dict[str, str]) -> Dataset:
    """A checked Dataset from some rows of a parsed file; ``extra_meta`` (added or replacing the
    file's) is attributed to the header line."""
    path, names, units, used, specs, maps = (parsed[k] for k in ("path", "names", "units", "used", "specs", "maps"))
    meta = {**parsed["meta"], **extra_meta}
    meta_line = {**parsed["meta_line"], **{k: parsed["header_at"] for k in extra_meta}}
    columns: dict[str, np.ndarray] = {}
    for n in used:
        k = names.index(n)
        cells = [r[k] for r in rows]
        columns[n] = _column_values(path, row_lines, n, cells, specs[n], maps[n])
    ds = Dataset(path, parsed["schema"], meta, meta_line, columns, {n: units[names.index(n)] for n in used},
                 np.asarray(row_lines), parsed["sha256"], parsed["ignored"])
    _check_rows(ds)
    _check_meta(ds)
    return ds


def _pick_schema(path: Path, kind: str | None, names: list[str], meta_line: int | None) -> Schema:
    if kind:
        key = _norm(kind).replace("_", "-")
        if key not in SCHEMAS:
            where = f"{path}, line {meta_line}, metadata 'measurement'" if meta_line else f"{path}"
            raise DataError(f"{where}: unknown measurement type {kind!r}; expected one of {', '.join(SCHEMAS)}")
        return SCHEMAS[key]
    score = {s.key: sum(any(c.name in names for c in g) for g in s.columns) for s in SCHEMAS.values()}
    fits = [s for s in SCHEMAS.values() if score[s.key] == len(s.columns)]
    if len(fits) == 1:
        return fits[0]
    if not fits:
        best = max(score.values())
        near = [s for s in SCHEMAS.values() if score[s.key] == best]
        if best >= 2 and len(near) == 1:
            return near[0]  # the missing column is reported by the caller
        known = "; ".join(s.describe() for s in SCHEMAS.values())
        raise DataError(f"{path}: the columns ({', '.join(names)}) match no measurement type; expected {known}")
    raise DataError(f"{path}: the columns match several measurement types ({', '.join(s.key for s in fits)}); "
                    "add a line '# measurement: TYPE' above the header")


def _column_map(path: Path, line: int, name: str, unit: str, spec: ColumnSpec) -> tuple[float, float]:
    where = f"{path}, line {line}, column '{name}'"
    if spec.si_unit is None:
        if unit:
            raise DataError(f"{where}: a text column takes no unit (got [{unit}])")
        return (1.0, 0.0)
    if spec.si_unit == "1" and unit in ("", "1", "-"):
        return (1.0, 0.0)
    if not unit:
        raise DataError(f"{where}: no unit; write the column as '{spec.example or name + ' [' + spec.si_unit + ']'}'")
    if unit in _AMBIGUOUS:
        raise DataError(f"{where}: ambiguous unit [{unit}]: {_AMBIGUOUS[unit]}")
    if _DIGIT_EXPONENT.search(unit):
        raise DataError(f"{where}: ambiguous unit [{unit}]: write powers with '^', e.g. A/cm^2")
    clean = re.sub(r"\b[Oo]hm\b", "ohm", unit)
    clean = re.sub(r"(?<=[kMGmuµ])Ohm\b", "ohm", clean)
    try:
        return linear_map(clean, spec.si_unit)
    except UnitError as exc:
        msg = str(exc)
        if "wrong dimension" in msg:
            raise DataError(f"{where}: unit [{unit}] has the wrong dimension for {spec.desc}; expected a unit "
                            f"convertible to [{spec.si_unit}]") from None
        raise DataError(f"{where}: unknown unit [{unit}]; expected a unit convertible to [{spec.si_unit}] "
                        f"(for example {spec.example or spec.si_unit})") from None


def cell_number(path, line: int, column: str, text: str) -> float:
    """A finite number from one cell; a DataError naming file, line and column otherwise."""
    if text == "":
        raise DataError(f"{path}, line {line}, column '{column}': empty value")
    try:
        x = float(text)
    except ValueError:
        raise DataError(f"{path}, line {line}, column '{column}': {text!r} is not a number") from None
    if not math.isfinite(x):
        raise DataError(f"{path}, line {line}, column '{column}': {text!r} is not a finite number (NaN or inf)")
    return x


def _column_values(path: Path, lines: list[int], name: str, cells: list[str], spec: ColumnSpec,
                   lin: tuple[float, float]) -> np.ndarray:
    if spec.si_unit is None:
        out = []
        for ln, c in zip(lines, cells):
            v = _choice(c, spec.choices)
            if v is None:
                raise DataError(f"{path}, line {ln}, column '{name}': {c!r} is not one of {', '.join(spec.choices)}")
            out.append(v)
        return np.asarray(out)
    vals = np.empty(len(cells))
    for k, (ln, c) in enumerate(zip(lines, cells)):
        x = cell_number(path, ln, name, c)
        if spec.integer and (x != round(x) or x < 0):
            raise DataError(f"{path}, line {ln}, column '{name}': {c!r} must be a whole number >= 0")
        vals[k] = x
    return vals * lin[0] + lin[1]


def _check_rows(ds: Dataset) -> None:
    c = ds.columns
    if ds.kind == "switching":
        n = c["attempts"]
        for r in np.nonzero(n < 1)[0]:
            raise DataError(f"{ds.where(r, 'attempts')}: {n[r]:g} attempts; need at least 1")
        if "probability" in c:
            p = c["probability"]
            for r in np.nonzero((p < 0) | (p > 1))[0]:
                raise DataError(f"{ds.where(r, 'probability')}: {p[r]:g} is outside [0, 1]")
            c["switched"] = np.round(p * n)
        k = c["switched"]
        for r in np.nonzero(k > n)[0]:
            raise DataError(f"{ds.where(r, 'switched')}: {k[r]:g} switched out of {n[r]:g} attempts "
                            "(more switched than attempted)")
        for r in np.nonzero(c["pulse_width"] <= 0)[0]:
            raise DataError(f"{ds.where(r, 'pulse_width')}: the pulse width must be positive")
    if ds.kind in ("resistance-field", "resistance-bias") and "resistance" in c:
        for r in np.nonzero(c["resistance"] <= 0)[0]:
            raise DataError(f"{ds.where(r, 'resistance')}: resistance must be positive")
    if ds.kind == "resistance-field":
        _check_sweep_order(ds)


#: a sweep may turn back only this close to its extremes (fraction of the loop's field span)
TURN_ZONE = 0.1


def _check_sweep_order(ds: Dataset) -> None:
    """The rows of an R-H loop must be in measurement order: the field runs monotonically along
    each branch and turns back only near the loop's extremes.  A turn in mid-sweep means rows
    out of order (a shuffled or merged file), which the branch analysis would otherwise read as
    switching in the wrong direction.  Field read-back jitter of up to two field steps (or 2 %
    of the span) is not a turn."""
    h = ds.columns["field"]
    loops = ds.columns.get("loop")
    groups = [np.arange(len(h))] if loops is None else [np.nonzero(loops == k)[0] for k in np.unique(loops)]
    for idx in groups:
        hh = h[idx]
        if len(hh) < 4:
            continue
        lo, hi = float(hh.min()), float(hh.max())
        span = hi - lo
        d = np.abs(np.diff(hh))
        if not span > 0 or not np.any(d > 0):
            continue
        tol = max(2.0 * float(np.median(d[d > 0])), 0.02 * span)
        for turn in _turns(hh, tol):
            if lo + TURN_ZONE * span < hh[turn] < hi - TURN_ZONE * span:
                row = int(idx[turn])
                loop = "" if loops is None else f" of loop {loops[row]:g}"
                raise DataError(
                    f"{ds.where(row, 'field')}: the field turns back at {_file_value(ds, 'field', hh[turn])} in "
                    f"mid-sweep{loop} (its sweep runs from {_file_value(ds, 'field', lo)} to "
                    f"{_file_value(ds, 'field', hi)}): the field column is not monotone within a branch, so the rows "
                    "are out of order (shuffled, sorted or merged files?). List the points in measurement order, "
                    "branch by branch; give separate sweeps (e.g. minor loops) their own 'loop' index")


def _turns(h: np.ndarray, tol: float) -> list[int]:
    """Indices where a sweep reverses direction, ignoring retreats of at most ``tol``."""
    turns = []
    direction = 0  # +1 rising, -1 falling, 0 not yet known
    hi_i = lo_i = 0  # running maximum / minimum since the last turn
    for k in range(1, len(h)):
        if h[k] > h[hi_i]:
            hi_i = k
        if h[k] < h[lo_i]:
            lo_i = k
        if direction >= 0 and h[hi_i] - h[k] > tol:  # falls back from the running maximum
            if direction > 0:
                turns.append(hi_i)
            direction, lo_i = -1, k
        elif direction <= 0 and h[k] - h[lo_i] > tol:  # rises from the running minimum
            if direction < 0:
                turns.append(lo_i)
            direction, hi_i = 1, k
    return turns


def _file_value(ds: Dataset, column: str, si_value: float) -> str:
    """A value of ``column`` in the unit the file writes it in."""
    from compactgen.model.units import from_si

    unit = ds.units.get(column, "")
    si = ds.schema.column_specs()[column].si_unit
    try:
        return f"{from_si(si_value, si, unit):.4g} {unit}"
    except Exception:  # an exotic spelling pint reads only through linear_map: fall back to SI
        return f"{si_value:.4g} {si}"


def _check_meta(ds: Dataset) -> None:
    """Every metadata group the schema requires must be present and readable."""
    for group in ds.schema.meta:
        present = [m.key for m in group if m.key in ds.meta]
        if not present:
            ds.meta_si(group[0].key)  # raises with the reason
        for key in present:
            ds.meta_si(key)
    if ds.kind == "wall-velocity" and "field" in ds.columns:
        ds.meta_si("wall", need="a file with a field column (up-down and down-up walls move oppositely in a field)")
    for key, spec in ds.schema.meta_specs().items():
        if key in ds.meta:
            ds.meta_si(key)


def read_all(paths) -> list[Dataset]:
    return [read_dataset(p) for p in paths]


__all__ = ["Dataset", "read_dataset", "read_device_datasets", "read_all"]
