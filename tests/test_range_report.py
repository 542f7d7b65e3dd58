"""`compactgen range-report RAWFILE [--lib NAME.lib]`: every instance and stretch of time where a
model's range output exceeded 1; exit 0 none, 1 some, 2 bad input."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from compactgen.targets import render
from compactgen.harness.benches import Pwl
from compactgen.cli import main
from compactgen.errors import OutOfCalibratedRange
from compactgen.jobs.range_report import read_library, scan
from compactgen.harness.reference import ReferenceModel
from compactgen.sim.tools import ngspice_command, run_tool

from helpers import example_card


def write_ascii_raw(path: Path, columns: dict[str, np.ndarray], plotname: str = "Transient Analysis") -> Path:
    """A minimal SPICE3 ASCII raw file (one real plot) with the given vectors, first = scale."""
    names = list(columns)
    n = len(columns[names[0]])
    lines = ["Title: test", "Date: -", f"Plotname: {plotname}", "Flags: real", f"No. Variables: {len(names)}",
             f"No. Points: {n}", "Variables:"]
    lines += [f"\t{i}\t{name}\t{'time' if i == 0 else 'voltage'}" for i, name in enumerate(names)]
    lines.append("Values:")
    for k in range(n):
        lines.append(f" {k}\t{float(columns[names[0]][k])!r}")
        lines += [f"\t{float(columns[name][k])!r}" for name in names[1:]]
    path.write_text("\n".join(lines) + "\n")
    return path


T = np.linspace(0.0, 10e-9, 11)


def test_lists_each_instance_and_stretch_and_exits_1(tmp_path, capsys):
    raw = write_ascii_raw(tmp_path / "a.raw", {
        "time": T,
        "v(x1.drive_ratio)": np.array([0, 0.5, 1.2, 1.3, 0.9, 0.2, 1.1, 0.3, 0, 0, 0.0]),
        "v(xarr.x3.drive_ratio)": np.array([0, 0, 0, 0, 0, 0, 0, 0, 0, 2.5, 3.0]),
        "v(x2.drive_ratio)": np.full(11, 1.0),  # exactly at the limit is inside
        "v(x1.mz)": np.zeros(11),
    })
    assert main(["range-report", str(raw)]) == 1
    out = capsys.readouterr().out
    assert "3 instance(s) with a range output" in out and "2 instance(s) left" in out and "3 stretch(es)" in out
    instances, found = scan(raw)
    assert instances == ["x1", "x2", "xarr.x3"]
    got = [(e.instance, e.start, e.end, e.peak, e.at) for e in found]
    assert got == [("x1", T[2], T[3], 1.3, T[3]), ("x1", T[6], T[6], 1.1, T[6]), ("xarr.x3", T[9], T[10], 3.0, T[10])]


def test_inside_the_range_exits_0(tmp_path, capsys):
    raw = write_ascii_raw(tmp_path / "b.raw", {"time": T, "v(x1.drive_ratio)": np.linspace(0, 1, 11)})
    assert main(["range-report", str(raw)]) == 0
    assert "stayed inside" in capsys.readouterr().out


@pytest.mark.parametrize("case", ["missing", "not_raw", "truncated", "no_drive_ratio", "bad_lib"])
def test_bad_input_exits_2_with_a_clear_message(tmp_path, capsys, case):
    args = ["range-report"]
    if case == "missing":
        args.append(str(tmp_path / "nope.raw"))
        expect = "no such raw file"
    elif case == "not_raw":
        (tmp_path / "deck.cir").write_text("* a deck\nR1 a 0 1\n.end\n")
        args.append(str(tmp_path / "deck.cir"))
        expect = "not a readable SPICE3 raw file"
    elif case == "truncated":
        raw = write_ascii_raw(tmp_path / "t.raw", {"time": T, "v(x1.drive_ratio)": T * 0})
        raw.write_text(raw.read_text()[:-40])
        args.append(str(raw))
        expect = "truncated"
    elif case == "no_drive_ratio":
        args.append(str(write_ascii_raw(tmp_path / "n.raw", {"time": T, "v(out)": T})))
        expect = "no vectors named <instance>.drive_ratio"
    else:
        args += [str(write_ascii_raw(tmp_path / "l.raw", {"time": T, "v(x1.drive_ratio)": T * 0})), "--lib",
                 str(tmp_path / "l.raw")]
        expect = "not an ngspice library written by `compactgen build`"
    assert main(args) == 2
    err = capsys.readouterr().err
    assert expect in err and err.count("\n") == 1, err


def test_lib_selects_the_instances_of_its_model_and_shows_its_outputs(tmp_path):
    ir = example_card().ir()
    lib_path = tmp_path / f"{ir.name}.lib"
    lib_path.write_text(render.ngspice(ir))
    lib = read_library(lib_path)
    assert lib.model == ir.name and set(lib.outputs) == {"res", "jdens", "drive_ratio"}
    assert "v_max = 1.2 V" in lib.limits
    raw = write_ascii_raw(tmp_path / "c.raw", {
        "time": T,
        "v(x1.drive_ratio)": np.array([0, 0, 1.5, 0, 0, 0, 0, 0, 0, 0, 0.0]),
        "v(x1.res)": np.full(11, 9.5), "v(x1.jdens)": np.full(11, -30.0),
        "v(xother.drive_ratio)": np.full(11, 2.0),  # another model's instance: no res/jdens nodes
    })
    instances, found = scan(raw, lib)
    assert instances == ["x1"] and len(found) == 1
    assert found[0].others == {"res": 9.5, "jdens": -30.0}


@pytest.mark.simulator
def test_a_real_ngspice_run_reports_the_stretch_the_reference_predicts(tmp_path, ngspice_cli, capsys):
    # one junction driven beyond v_max = 1.2 V for a nanosecond, another kept inside by a series
    # resistor; the reported stretch matches where the reference model's range output exceeds 1
    ir = example_card().ir()
    lib = tmp_path / f"{ir.name}.lib"
    lib.write_text(render.ngspice(ir))
    corners = ((0.0, 0.0), (0.5e-9, 0.0), (0.55e-9, 1.4), (1.5e-9, 1.4), (1.55e-9, 0.5), (3e-9, 0.5))
    pwl = " ".join(f"{t!r} {v!r}" for t, v in corners)
    (tmp_path / "deck.cir").write_text(f"""overdrive
.lib {lib} tt
Vt t 0 PWL({pwl})
X1 t 0 {ir.name} state0=-1
X2 t m {ir.name} state0=1
R2 m 0 20k
.options method=trap reltol=1e-4 abstol=1e-12 vntol=1e-7 chgtol=1e-20
.tran 10p 3n 0 2p
.end
""")
    (tmp_path / ".spiceinit").write_text("set num_threads=1\n")
    code, log = run_tool([ngspice_command(), "-b", "-r", "out.raw", "deck.cir"], cwd=tmp_path, timeout=300,
                         what="ngspice overdrive deck")
    assert (tmp_path / "out.raw").is_file(), log
    assert main(["range-report", str(tmp_path / "out.raw"), "--lib", str(lib)]) == 1
    out = capsys.readouterr().out
    assert "x1 " in out and "x2 " not in out
    instances, found = scan(tmp_path / "out.raw", read_library(lib))
    assert instances == ["x1", "x2"] and [e.instance for e in found] == ["x1"]
    model = ReferenceModel(ir, {"state0": -1.0})
    grid = np.linspace(0, 3e-9, 3001)
    with pytest.warns(OutOfCalibratedRange):  # the reference warns too
        tr = model.transient({"t": Pwl(corners)}, 3e-9, t_eval=grid)
    s = model.output("drive_ratio", {"t": tr.voltages["t"], "b": tr.voltages["b"]},
                     [tr.states[x.name] for x in ir.states])
    over = grid[s > 1]
    # ngspice's time points are at most 2 ps apart (step cap): the stretch ends agree within 2 ps
    assert found[0].start == pytest.approx(over[0], abs=2e-12)
    assert found[0].end == pytest.approx(over[-1], abs=2e-12)
    assert found[0].peak == pytest.approx(float(np.max(s)), rel=1e-3)  # reltol 1e-4 deck, sampled output
