"""The wafer folder: a device table and measurement files tagged with device ids.

Device table (``devices.csv`` in the folder, or ``--devices FILE``), the calibrate CSV
conventions (``# key: value`` metadata, units in brackets, comma or tab separated):

    device,die_x [mm],die_y [mm],diameter [nm],anything else
    D01-35a,0.0,0.0,35,...

- ``device``: the id (text, unique); ``die_x``, ``die_y``: the die's position, with a length unit
  (centre of the die on the wafer) or without one (die column and row indices); devices with the
  same position share a die; ``diameter`` (drawn, a length unit) or ``area`` (drawn, an area
  unit).  Further columns are kept as text for the per-device CSV.
- Measurement files: every other ``*.csv`` under the folder, of any type `compactgen fit` reads;
  each row carries its device id in a ``device`` column, or the whole file belongs to one device
  named by ``# device: ID``.  A file may leave out the diameter/area: the table gives it (a file
  that states one must agree with the table).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from compactgen.errors import DataError, UnitError
from compactgen.model.units import linear_map, to_si

TABLE_NAME = "devices.csv"


@dataclass
class Device:
    id: str
    die: tuple[float, float]
    drawn_area: float  # [m^2]
    line: int
    extra: dict[str, str] = field(default_factory=dict)

    @property
    def drawn_diameter(self) -> float:
        return math.sqrt(4 * self.drawn_area / math.pi)


@dataclass
class DeviceTable:
    path: Path
    devices: list[Device]
    position_unit: str  # "mm" (physical) or "" (die indices)
    meta: dict[str, str]

    def by_id(self) -> dict[str, Device]:
        return {d.id: d for d in self.devices}

    def dies(self) -> list[tuple[float, float]]:
        return sorted({d.die for d in self.devices})


def read_device_table(path: str | Path) -> DeviceTable:
    """Read and check the device table; every error names the file, the line and the column."""
    from compactgen.jobs.calibrate.data import cell_number, read_csv_cells

    path = Path(path)
    if not path.is_file():
        raise DataError(f"{path}: no device table (expected a CSV with columns device, die_x, die_y, "
                        "diameter [nm])")
    cells = read_csv_cells(path)
    meta, names, units, header_at = cells["meta"], cells["names"], cells["units"], cells["header_at"]
    for need in ("device", "die_x", "die_y"):
        if need not in names:
            raise DataError(f"{path}, line {header_at}: missing column '{need}' (columns found: {', '.join(names)}); "
                            "expected 'device,die_x [mm],die_y [mm],diameter [nm]'")
    size_cols = [n for n in ("diameter", "area") if n in names]
    if len(size_cols) != 1:
        raise DataError(f"{path}, line {header_at}: give exactly one of the columns 'diameter [nm]' (drawn) or "
                        f"'area [um^2]' (found: {', '.join(size_cols) or 'neither'})")
    size_col = size_cols[0]
    pos_units = {units[names.index(c)] for c in ("die_x", "die_y")}
    if len(pos_units) != 1:
        raise DataError(f"{path}, line {header_at}: die_x and die_y must have the same unit (got "
                        f"{', '.join(sorted(repr(u) for u in pos_units))})")
    pos_unit = pos_units.pop()
    pos_map = (1.0, 0.0) if pos_unit == "" else _map(path, header_at, "die_x", pos_unit, "mm")
    size_si = "m" if size_col == "diameter" else "m^2"
    if not units[names.index(size_col)]:
        raise DataError(f"{path}, line {header_at}, column '{size_col}': no unit; write "
                        f"'{'diameter [nm]' if size_col == 'diameter' else 'area [um^2]'}'")
    size_map = _map(path, header_at, size_col, units[names.index(size_col)], size_si)
    devices: list[Device] = []
    seen: dict[str, int] = {}
    for i, row_cells in zip(cells["row_lines"], cells["rows"]):
        row = dict(zip(names, row_cells))
        dev = row["device"]
        if not dev:
            raise DataError(f"{path}, line {i}, column 'device': empty device id")
        if dev in seen:
            raise DataError(f"{path}, line {i}, column 'device': device {dev!r} listed twice (first on line "
                            f"{seen[dev]})")
        seen[dev] = i
        x = cell_number(path, i, "die_x", row["die_x"]) * pos_map[0]
        y = cell_number(path, i, "die_y", row["die_y"]) * pos_map[0]
        size = cell_number(path, i, size_col, row[size_col]) * size_map[0]
        if not size > 0:
            raise DataError(f"{path}, line {i}, column '{size_col}': {row[size_col]!r} must be positive")
        area = size if size_col == "area" else math.pi / 4 * size**2
        extra = {k: v for k, v in row.items() if k not in ("device", "die_x", "die_y", size_col)}
        devices.append(Device(dev, (x, y), area, i, extra))
    if not devices:
        raise DataError(f"{path}: no devices after the header (line {header_at})")
    return DeviceTable(path, devices, "mm" if pos_unit else "", meta)


def _map(path, line, col, unit, si):
    try:
        return linear_map(unit, si)
    except UnitError:
        raise DataError(f"{path}, line {line}, column '{col}': unit [{unit}] is not a unit of "
                        f"{'length' if si in ('m', 'mm') else 'area'} (expected e.g. "
                        f"{'nm' if si == 'm' else 'mm' if si == 'mm' else 'um^2'})") from None


@dataclass
class WaferData:
    table: DeviceTable
    files: list[Path]
    datasets: dict[str, list]  # device id -> its Datasets
    problems: dict[str, str]  # device id -> why it has no usable data (reported, never dropped silently)


def data_files(folder: Path, table_path: Path) -> list[Path]:
    skip = {table_path.resolve()}
    return sorted(p for p in folder.rglob("*.csv") if p.resolve() not in skip
                  and not any(part.startswith(".") for part in p.relative_to(folder).parts))


def load_wafer(folder: str | Path, table_path: str | Path | None = None, diameter_offset: float = 0.0,
               accepts: tuple[str, ...] = ("resistance-bias", "resistance-field"), check=None) -> WaferData:
    """Read the table and every measurement file of a wafer folder.  ``diameter_offset`` [m] is
    subtracted from each drawn diameter (the electrical diameter the fits use).  A file row
    naming a device the table lacks is an error; a device with no rows is listed in
    ``problems``, and so is one whose data ``check(datasets)`` (the kind's ``missing_data``) finds
    short; without ``check`` a device needs every type in ``accepts``."""
    from compactgen.jobs.calibrate.data import read_device_datasets

    folder = Path(folder)
    if not folder.is_dir():
        raise DataError(f"{folder}: no such wafer folder")
    tpath = Path(table_path) if table_path else folder / TABLE_NAME
    table = read_device_table(tpath)
    by_id = table.by_id()
    files = data_files(folder, tpath)
    if not files:
        raise DataError(f"{folder}: no measurement files (*.csv besides the device table {tpath.name})")

    def meta_for(dev_id: str, meta: dict, meta_line: dict, named_at: str) -> dict[str, str]:
        """The electrical size from the table; a size the file states must match the drawn one."""
        dev = by_id.get(dev_id)
        if dev is None:
            raise DataError(f"{named_at}: device {dev_id!r} is not in the device table {tpath}")
        for key in ("diameter", "area"):
            if key in meta:
                where = f"{current[0]}, line {meta_line[key]}, metadata '{key}'"
                try:
                    val = to_si(meta[key], "m" if key == "diameter" else "m^2", where=where)
                except UnitError as exc:
                    raise DataError(str(exc)) from None
                got = val if key == "area" else math.pi / 4 * val**2
                if abs(got - dev.drawn_area) > 0.01 * dev.drawn_area:
                    raise DataError(f"{where}: {meta[key]!r} disagrees with the device table's drawn size of "
                                    f"{dev_id} ({tpath}, line {dev.line}: {dev.drawn_diameter * 1e9:.4g} nm); "
                                    "remove the size from the file or correct it")
        d = dev.drawn_diameter - diameter_offset
        out = {"diameter": f"{d * 1e9:.9g} nm"}
        if "area" in meta:
            out["area"] = f"{math.pi / 4 * (d * 1e9) ** 2:.9g} nm^2"
        return out

    per: dict[str, list] = {d.id: [] for d in table.devices}
    current = [None]
    for f in files:
        current[0] = f
        for dev_id, ds in read_device_datasets(f, add_meta=meta_for):
            if ds.kind not in accepts:
                raise DataError(f"{f}: {ds.kind} data are not used by the wafer statistics (they take "
                                f"{', '.join(accepts)})")
            per[dev_id].append(ds)
    problems = {d: "no measurement rows in any file" for d, v in per.items() if not v}
    for d, v in per.items():
        kinds = {ds.kind for ds in v}
        if not v:
            continue
        if check:
            why = check(v)
        else:
            why = f"only {', '.join(sorted(kinds))} data (needs {', '.join(accepts)})" if kinds != set(accepts) else ""
        if why:
            problems[d] = why
    return WaferData(table, files, per, problems)


def die_index(table: DeviceTable) -> tuple[dict[str, int], np.ndarray]:
    """Device id -> die number, and the die positions (n_dies x 2)."""
    dies = table.dies()
    num = {xy: k for k, xy in enumerate(dies)}
    return {d.id: num[d.die] for d in table.devices}, np.array(dies, float)
