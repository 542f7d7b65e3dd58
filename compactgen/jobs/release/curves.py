"""Bench curves as CSV: `# key: value` metadata lines, one header line with units in brackets,
then numbers.

    # model: pmtj35_demo 1.0.0
    # bench: write_to_p_2ic0
    ...
    time [s],voltage_t [V],voltage_b [V],reference:current_t [A],reference:mz [1],ngspice:mz [1],...

The first column is the grid: time for a transient (uniform, the bench's output step), the swept
terminal voltage for a DC sweep (the sweep points).  Terminal voltages are the stimulus and are
written once; currents (into the device at each terminal), internal-node voltages and states are
written per source
(reference, then each simulator), every source linearly interpolated onto the grid from its own
points (the reference solver's dense output at 0.5 ps, the simulators' own time steps).
"""
from __future__ import annotations

import io
import re
from dataclasses import dataclass, field

import numpy as np

from compactgen.errors import InputError

_HEAD = re.compile(r"^(?P<name>[^\[\]]+?)\s*\[(?P<unit>[^\[\]]*)\]$")
NUMBER_FORMAT = "%.10g"


@dataclass
class CurveTable:
    grid: str  # name of the first column, e.g. "time" or "voltage_t"
    grid_unit: str
    x: np.ndarray
    columns: dict[str, tuple[str, np.ndarray]]  # name -> (unit, values)
    meta: dict[str, str] = field(default_factory=dict)

    def unit(self, name: str) -> str:
        return self.grid_unit if name == self.grid else self.columns[name][0]

    def values(self, name: str) -> np.ndarray:
        return self.x if name == self.grid else self.columns[name][1]


def bench_grid(bench) -> tuple[str, str, np.ndarray]:
    if bench.analysis == "dc":
        return f"voltage_{bench.sweep[0]}", "V", bench.sweep_values()
    n = int(round(bench.t_stop / bench.t_step)) + 1
    return "time", "s", np.linspace(0.0, bench.t_stop, n)


def _on_grid(trace, bench, grid: np.ndarray, y: np.ndarray) -> np.ndarray:
    x = trace.t if bench.analysis == "tran" else trace.voltages[bench.sweep[0]]
    order = np.argsort(x, kind="stable")
    return np.interp(grid, np.asarray(x)[order], np.asarray(y)[order]) + 0.0  # + 0.0: no "-0" in the file


def curve_table(ir, run, meta: dict[str, str]) -> CurveTable:
    """The curves of one BenchRun (verify.py) on the bench's grid."""
    bench = run.bench
    grid_name, grid_unit, grid = bench_grid(bench)
    ref = run.traces["reference"]
    cols: dict[str, tuple[str, np.ndarray]] = {}
    for t in ir.terminals:
        name = f"voltage_{t.name}"
        if name != grid_name:
            cols[name] = ("V", _on_grid(ref, bench, grid, ref.voltages[t.name]))
    sources = ["reference"] + sorted(s for s in run.traces if s != "reference")  # fixed order, not finish order
    inner = [n.name for n in getattr(ir, "nodes", [])]
    for src in sources:
        tr = run.traces[src]
        for t in ir.terminals:
            cols[f"{src}:current_{t.name}"] = ("A", _on_grid(tr, bench, grid, tr.currents[t.name]))
        for n in inner:  # internal nodes are responses, written per source
            if n in tr.voltages:
                cols[f"{src}:voltage_{n}"] = ("V", _on_grid(tr, bench, grid, tr.voltages[n]))
        for s in ir.states:
            cols[f"{src}:{s.name}"] = (s.unit, _on_grid(tr, bench, grid, tr.states[s.name]))
    return CurveTable(grid_name, grid_unit, grid, cols, dict(meta))


def write_csv(table: CurveTable) -> str:
    out = io.StringIO()
    for k, v in table.meta.items():
        out.write(f"# {k}: {v}\n")
    names = [table.grid] + list(table.columns)
    out.write(",".join(f"{n} [{table.unit(n)}]" for n in names) + "\n")
    data = np.column_stack([table.x] + [table.columns[n][1] for n in table.columns])
    np.savetxt(out, data, fmt=NUMBER_FORMAT, delimiter=",")
    return out.getvalue()


def read_csv(text: str, where: str) -> CurveTable:
    """Parse a curve file written by write_csv; errors name the file and line."""
    meta: dict[str, str] = {}
    lines = text.splitlines()
    i = 0
    while i < len(lines) and lines[i].startswith("#"):
        key, sep, value = lines[i][1:].partition(":")
        if sep:
            meta[key.strip()] = value.strip()
        i += 1
    if i >= len(lines):
        raise InputError(f"{where}: no header line (expected e.g. 'time [s],reference:mz [1]')")
    heads = []
    for col, h in enumerate(lines[i].split(","), start=1):
        m = _HEAD.match(h.strip())
        if not m:
            raise InputError(f"{where}: line {i + 1}, column {col}: header {h!r} has no unit in brackets")
        heads.append((m["name"], m["unit"]))
    body = lines[i + 1:]
    try:
        data = np.loadtxt(body, delimiter=",", ndmin=2) if body else np.zeros((0, len(heads)))
    except ValueError as exc:
        raise InputError(f"{where}: unreadable numbers below line {i + 1}: {exc}") from None
    if data.shape[1] != len(heads):
        raise InputError(f"{where}: {data.shape[1]} numbers per row but {len(heads)} header columns")
    cols = {name: (unit, data[:, k]) for k, (name, unit) in enumerate(heads) if k > 0}
    return CurveTable(heads[0][0], heads[0][1], data[:, 0], cols, meta)
