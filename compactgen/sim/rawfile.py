"""Reader for SPICE3 raw files as written by ngspice and VACASK.

A raw file holds one or more plots, one after another.  Each plot is a text header
(``Title:``, ``Plotname:``, ``Flags:``, ``No. Variables:``, ``No. Points:``, then one
``Variables:`` line per variable) followed by either ``Binary:`` and little-endian float64
data point by point (two float64 per value for complex plots) or ``Values:`` and ASCII data
(each point starts with its index; complex values are written as ``re,im``).
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from compactgen.errors import SimulationError

__all__ = ["RawPlot", "read_raw", "split_sweeps"]


@dataclass
class RawPlot:
    """A raw-file plot; ``data`` maps each variable name (as the file spells it) to values."""

    title: str
    plotname: str
    names: list[str]
    data: dict[str, np.ndarray]


@dataclass
class _Header:
    """The fields of one plot header that the data block needs."""

    title: str
    plotname: str
    complex: bool
    names: list[str]
    npoints: int
    kind: str  # "Binary" or "Values"


def read_raw(path: str | Path) -> list[RawPlot]:
    """Read every plot of the raw file ``path``.

    Raises SimulationError naming the file when it is missing, empty, has a malformed header,
    or holds fewer data than its header announces (ngspice leaves a header with no data
    behind when a run fails).
    """
    path = Path(path)
    try:
        blob = path.read_bytes()
    except OSError as exc:
        raise SimulationError(f"raw file {path}: cannot be read ({exc.strerror})") from exc
    if not blob.strip():
        raise SimulationError(f"raw file {path}: file is empty (the simulation wrote no data)")
    plots = []
    pos = 0
    while pos < len(blob) and blob[pos:].strip():
        header, pos = _read_header(blob, pos, path, len(plots) + 1)
        if header.kind == "Binary":
            columns, pos = _read_binary(blob, pos, header, path)
        else:
            columns, pos = _read_ascii(blob, pos, header, path)
        plots.append(RawPlot(title=header.title, plotname=header.plotname, names=header.names,
                             data=dict(zip(header.names, columns))))
    return plots


def _read_header(blob: bytes, pos: int, path: Path, index: int) -> tuple[_Header, int]:
    """Parse the text header that starts at ``pos``; return it and the offset of its data."""
    fields: dict[str, str] = {}
    names: list[str] = []
    where = f"raw file {path}, plot {index}"
    while True:
        end = blob.find(b"\n", pos)
        if end < 0:
            raise SimulationError(f"{where}: header ends without 'Binary:' or 'Values:' "
                                  "(the file is truncated; the simulation wrote no data)")
        line = blob[pos:end].decode("latin-1").rstrip("\r")
        pos = end + 1
        if "variables" in fields and line[:1] in ("\t", " ") and line.strip():
            parts = line.split()
            if len(parts) < 2:
                raise SimulationError(f"{where}: malformed variable line {line!r}")
            names.append(parts[1])
            continue
        key, sep, value = line.partition(":")
        if not sep:
            if line.strip():
                raise SimulationError(f"{where}: unexpected header line {line!r}")
            continue
        key = key.strip().lower()
        if key in ("binary", "values"):
            break
        fields[key] = value.strip()
    try:
        nvars = int(fields["no. variables"])
        npoints = int(fields["no. points"])
    except (KeyError, ValueError) as exc:
        raise SimulationError(f"{where}: header lacks a valid 'No. Variables' or 'No. Points' "
                              f"field (got {fields})") from exc
    if len(names) != nvars:
        raise SimulationError(f"{where}: header announces {nvars} variables but lists "
                              f"{len(names)}")
    if npoints == 0:
        raise SimulationError(f"{where}: 'No. Points' is 0 (the simulation wrote no data)")
    header = _Header(title=fields.get("title", ""), plotname=fields.get("plotname", ""),
                     complex="complex" in fields.get("flags", "").lower(), names=names,
                     npoints=npoints, kind="Binary" if key == "binary" else "Values")
    return header, pos


def _read_binary(blob: bytes, pos: int, header: _Header,
                 path: Path) -> tuple[list[np.ndarray], int]:
    """Read the float64 block of ``header`` at ``pos``; return its columns and the end offset."""
    width = 2 if header.complex else 1
    count = header.npoints * len(header.names) * width
    nbytes = 8 * count
    if len(blob) - pos < nbytes:
        have = (len(blob) - pos) // (8 * width * len(header.names))
        raise SimulationError(f"raw file {path}: plot {header.plotname!r} is truncated, header "
                              f"announces {header.npoints} points but the file holds {have}")
    values = np.frombuffer(blob, dtype="<f8", count=count, offset=pos)
    table = values.reshape(header.npoints, len(header.names) * width)
    if header.complex:
        table = table[:, 0::2] + 1j * table[:, 1::2]
    return [table[:, i].copy() for i in range(len(header.names))], pos + nbytes


def _read_ascii(blob: bytes, pos: int, header: _Header, path: Path) -> tuple[list[np.ndarray], int]:
    """Read the ``Values:`` block of ``header`` at ``pos``; return its columns and end offset."""
    nvars = len(header.names)
    end = blob.find(b"\nTitle:", pos)
    end = len(blob) if end < 0 else end + 1
    tokens = blob[pos:end].decode("latin-1").split()
    per_point = nvars + 1
    if len(tokens) < header.npoints * per_point:
        raise SimulationError(f"raw file {path}: plot {header.plotname!r} is truncated, header "
                              f"announces {header.npoints} points but the file holds "
                              f"{len(tokens) // per_point}")
    rows = np.array(tokens[:header.npoints * per_point], dtype=object).reshape(header.npoints,
                                                                               per_point)
    try:
        columns = [_ascii_column(rows[:, i + 1], header.complex) for i in range(nvars)]
    except ValueError as exc:
        raise SimulationError(f"raw file {path}: plot {header.plotname!r} has a malformed "
                              f"value ({exc})") from exc
    return columns, end


def _ascii_column(cells: np.ndarray, is_complex: bool) -> np.ndarray:
    """Convert one column of ASCII cells (``re,im`` pairs when complex) to numbers."""
    if not is_complex:
        return np.array([float(c) for c in cells])
    pairs = [c.split(",") for c in cells]
    return np.array([complex(float(re), float(im)) for re, im in pairs])


def split_sweeps(plot: RawPlot, sweep_column: str) -> list[dict[str, np.ndarray]]:
    """Split a swept plot (VACASK stacks every sweep point in one plot) into one dict per point.

    A new sweep point starts wherever the value of ``sweep_column`` changes.
    """
    if sweep_column not in plot.data:
        raise SimulationError(f"plot {plot.plotname!r} ({plot.title}) has no column "
                              f"{sweep_column!r}; columns are {plot.names}")
    cuts = np.flatnonzero(np.diff(plot.data[sweep_column]) != 0) + 1
    pieces = {name: np.split(values, cuts) for name, values in plot.data.items()}
    return [{name: pieces[name][i] for name in plot.names} for i in range(len(cuts) + 1)]
