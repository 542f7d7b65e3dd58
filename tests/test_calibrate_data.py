"""Data ingest: unit conversions against exact factors, and every bad-data case named in the
issue with an error that names the file, the line and the column (or metadata key)."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as C

from compactgen.jobs.calibrate.data import read_dataset
from compactgen.model.card import load_card
from compactgen.jobs.calibrate.models import stt_blocks, stt_functions
from compactgen.errors import DataError

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
SWITCH_META = "# diameter: 35 nm\n# temperature: 300 K\n# polarity: top-to-bottom\n"


def write(tmp_path: Path, name: str, text: str) -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def test_unit_conversions_exact_factors(tmp_path):
    """1 Oe = 1000/(4 pi) A/m and mu0 H = 1 mT <-> H = 1e-3/mu0 A/m (common practice, no source; mu0 from
    CODATA 2022 via scipy.constants); 1 A/cm^2 = 1e4 A/m^2; 1 % = 0.01; 1 ns = 1e-9 s; degC + 273.15."""
    p = write(tmp_path, "units.csv", "# diameter: 35 nm\n# temperature: 27 degC\n# polarity: top-to-bottom\n"
              "pulse_width [ns],current [uA],direction,attempts,probability [%]\n"
              "2.5,-40,P->AP,100,37\n10,40,AP->P,100,100\n")
    ds = read_dataset(p)
    assert ds.kind == "switching"
    assert ds.columns["pulse_width"].tolist() == pytest.approx([2.5e-9, 10e-9], rel=1e-15)
    assert ds.columns["current"].tolist() == pytest.approx([-40e-6, 40e-6], rel=1e-15)
    assert ds.columns["probability"].tolist() == pytest.approx([0.37, 1.0], rel=1e-15)
    assert ds.columns["switched"].tolist() == [37, 100]
    assert ds.meta_si("temperature") == pytest.approx(300.15, abs=1e-12)
    assert ds.meta_si("diameter") == pytest.approx(35e-9, rel=1e-15)
    for unit, factor in (("Oe", 1000 / (4 * math.pi)), ("mT", 1e-3 / C.mu_0), ("T", 1 / C.mu_0),
                         ("kA/m", 1e3), ("A/m", 1.0), ("kOe", 1e6 / (4 * math.pi))):
        p = write(tmp_path, "rh.csv", "# diameter: 40 nm\n# temperature: 300 K\n# read_bias: 0.05 V\n"
                  f"# sweep_rate: 1 Oe/s\nfield [{unit}],resistance [kOhm]\n-2,2\n2,1\n")
        ds = read_dataset(p)
        assert ds.columns["field"].tolist() == pytest.approx([-2 * factor, 2 * factor], rel=1e-14)
        assert ds.columns["resistance"].tolist() == pytest.approx([2000.0, 1000.0], rel=1e-15)
        assert ds.meta_si("sweep_rate") == pytest.approx(1000 / (4 * math.pi), rel=1e-14)
    p = write(tmp_path, "dw.csv", "current_density [A/cm^2],velocity [um/ns]\n1e8,0.1\n")
    ds = read_dataset(p)
    assert ds.columns["current_density"][0] == pytest.approx(1e12, rel=1e-15)  # PHYSICS 11: 1e8 A/cm^2 = 1e12 A/m^2
    assert ds.columns["velocity"][0] == pytest.approx(100.0, rel=1e-14)
    p = write(tmp_path, "rv.csv", "# area: 1000 nm^2\nvoltage [mV],tmr [%]\n100,120\n")
    ds = read_dataset(p)
    assert ds.columns["voltage"][0] == pytest.approx(0.1, rel=1e-15)
    assert ds.columns["tmr"][0] == pytest.approx(1.2, rel=1e-15)
    assert ds.area() == pytest.approx(1e-15, rel=1e-15)
    p = write(tmp_path, "tabs.csv", "# Diameter: 35 nm\nVoltage [V]\tResistance [kOhm]\tState\n-0.1\t4.5\tap\n")
    ds = read_dataset(p)  # tab separated, names and choices case-insensitive
    assert ds.columns["resistance"][0] == pytest.approx(4500.0, rel=1e-15) and ds.columns["state"][0] == "AP"
    p = write(tmp_path, "rh2.csv", "# diameter: 40 nm\n# temperature: 300 K\n# read_bias: 50 mV\n"
              "# sweep_rate: 10 mT/s\nfield [mT],resistance [ohm]\n-2,2\n")
    assert read_dataset(p).meta_si("sweep_rate") == pytest.approx(1e-2 / C.mu_0, rel=1e-14)


BAD = [
    # (what, file text, fragments every message must contain)
    ("missing column", SWITCH_META + "pulse_width [ns],current [uA],direction,switched\n1,5,P->AP,3\n",
     ["line 4", "missing column", "attempts"]),
    ("unknown unit", "# diameter: 35 nm\nvoltage [V],resistance [bananas],state\n0.1,5,P\n",
     ["line 2", "column 'resistance'", "unknown unit [bananas]"]),
    ("ambiguous unit mt", "# diameter: 35 nm\n# temperature: 300 K\n# read_bias: 0.05 V\n# sweep_rate: 1 T/s\n"
     "field [mt],resistance [ohm]\n1,2\n", ["line 5", "column 'field'", "ambiguous unit [mt]"]),
    ("ambiguous unit cm2", "current_density [A/cm2],velocity [m/s]\n1,2\n",
     ["line 1", "column 'current_density'", "ambiguous unit [A/cm2]"]),
    ("wrong dimension", "# diameter: 35 nm\nvoltage [V],resistance [mT],state\n0.1,5,P\n",
     ["line 2", "column 'resistance'", "wrong dimension"]),
    ("NaN", "# diameter: 35 nm\nvoltage [V],resistance [ohm],state\n0.1,5,P\n0.2,NaN,P\n",
     ["line 4", "column 'resistance'", "NaN"]),
    ("empty cell", "# diameter: 35 nm\nvoltage [V],resistance [ohm],state\n0.1,,P\n",
     ["line 3", "column 'resistance'", "empty"]),
    ("not a number", "# diameter: 35 nm\nvoltage [V],resistance [ohm],state\n0.1,5 k,P\n",
     ["line 3", "column 'resistance'", "not a number"]),
    ("bad state", "# diameter: 35 nm\nvoltage [V],resistance [ohm],state\n0.1,5,parallel\n",
     ["line 3", "column 'state'", "not one of P, AP"]),
    ("counts larger than attempts", SWITCH_META + "pulse_width [ns],current [uA],direction,attempts,switched\n"
     "1,5,AP->P,100,3\n1,-5,P->AP,100,101\n", ["line 6", "column 'switched'", "101", "more switched than attempted"]),
    ("fractional counts", SWITCH_META + "pulse_width [ns],current [uA],direction,attempts,switched\n1,5,AP->P,10,2.5\n",
     ["line 5", "column 'switched'", "whole number"]),
    ("probability above 1", SWITCH_META + "pulse_width [ns],current [uA],direction,attempts,probability\n"
     "1,5,AP->P,100,1.2\n", ["line 5", "column 'probability'", "outside [0, 1]"]),
    ("probability below 0", SWITCH_META + "pulse_width [ns],current [uA],direction,attempts,probability [%]\n"
     "1,5,AP->P,100,-3\n", ["line 5", "column 'probability'", "outside [0, 1]"]),
    ("missing area", "voltage [V],resistance [ohm],state\n0.1,5,P\n", ["metadata 'diameter'", "missing", "RA"]),
    ("missing temperature", "# diameter: 35 nm\n# polarity: top-to-bottom\n"
     "pulse_width [ns],current [uA],direction,attempts,switched\n1,5,AP->P,10,2\n",
     ["metadata 'temperature'", "missing", "does not guess"]),
    ("missing polarity", "# diameter: 35 nm\n# temperature: 300 K\n"
     "pulse_width [ns],current [uA],direction,attempts,switched\n1,5,AP->P,10,2\n",
     ["metadata 'polarity'", "missing", "which current sign"]),
    ("bad polarity", "# diameter: 35 nm\n# temperature: 300 K\n# polarity: sideways\n"
     "pulse_width [ns],current [uA],direction,attempts,switched\n1,5,AP->P,10,2\n",
     ["line 3", "metadata 'polarity'", "not one of"]),
    ("temperature without unit", "# diameter: 35 nm\n# temperature: 300\n# polarity: top-to-bottom\n"
     "pulse_width [ns],current [uA],direction,attempts,switched\n1,5,AP->P,10,2\n",
     ["line 2", "metadata 'temperature'", "no unit", 'e.g. "300 K"']),
    ("diameter without unit", "# diameter: 35\nvoltage [V],resistance [ohm],state\n0.1,5,P\n",
     ["line 1", "metadata 'diameter'", "'35' has no unit", 'e.g. "35 nm"']),  # the example's unit, not "35 m"
    ("missing sweep rate", "# diameter: 35 nm\n# temperature: 300 K\n# read_bias: 50 mV\n"
     "field [mT],resistance [ohm]\n1,2\n", ["metadata 'sweep_rate'", "missing"]),
    ("missing read bias", "# diameter: 35 nm\n# temperature: 300 K\n# sweep_rate: 1 T/s\n"
     "field [mT],resistance [ohm]\n1,2\n", ["metadata 'read_bias'", "missing"]),
    ("wall type needed with a field", "current_density [A/m^2],field [mT],velocity [m/s]\n0,1,2\n",
     ["metadata 'wall'", "missing"]),
    ("short row", "# diameter: 35 nm\nvoltage [V],resistance [ohm],state\n0.1,5\n", ["line 3", "2 values"]),
    ("no schema", "time [s],voltage [V]\n1,2\n", ["match no measurement type"]),
    ("duplicate column", "voltage [V],voltage [mV],state\n1,2,P\n", ["line 1", "appears twice"]),
]


@pytest.mark.parametrize("what,text,fragments", BAD, ids=[b[0] for b in BAD])
def test_bad_data_is_refused_with_file_line_column(tmp_path, what, text, fragments):
    p = write(tmp_path, "bad_input.csv", text)
    with pytest.raises(DataError) as exc:
        read_dataset(p)
    msg = str(exc.value)
    assert "bad_input.csv" in msg
    for frag in fragments:
        assert frag in msg, f"{what}: {frag!r} not in {msg!r}"


def test_fit_time_data_errors(tmp_path):
    """Errors found when the data meet the model: a current sign that cannot write the stated state,
    a loop whose field sign is reversed, a wall file offered to an stt-mtj card."""
    card = load_card(EXAMPLES / "pmtj35_demo.toml")
    fn = stt_functions(card)
    p = write(tmp_path, "sw.csv", SWITCH_META + "pulse_width [ns],current [uA],direction,attempts,switched\n"
              "5,50,AP->P,10,2\n5,50,P->AP,10,2\n")
    with pytest.raises(DataError, match=r"sw\.csv, line 6, column 'current'.*cannot write P->AP"):
        stt_blocks(fn, [read_dataset(p)])
    rows = "\n".join(f"{h},{r}" for h, r in [(400, 2), (100, 2), (-100, 2), (-300, 1), (-400, 1), (-100, 1),
                                             (100, 1), (300, 2), (400, 2)])
    p = write(tmp_path, "rh.csv", "# diameter: 35 nm\n# temperature: 300 K\n# read_bias: 50 mV\n# sweep_rate: 1 T/s\n"
              f"field [mT],resistance [kohm]\n{rows}\n")
    with pytest.raises(DataError, match=r"rh\.csv, line \d+, column 'field'.*flip its sign"):
        stt_blocks(fn, [read_dataset(p)])
    with pytest.raises(DataError, match="wall_velocity_current.csv.*domain-wall"):
        stt_blocks(fn, [read_dataset(EXAMPLES / "data" / "wall" / "wall_velocity_current.csv")])


def test_example_files_are_labelled_synthetic_and_read():
    files = sorted(f for f in (EXAMPLES / "data").rglob("*.csv") if "wafer" not in f.parts)  # wafer: see test_wafer_stats
    assert len(files) == 6
    for f in files:
        first = f.read_text().splitlines()[0]
        assert first.startswith("# synthetic: generated by") and first.endswith("not measured"), f
        ds = read_dataset(f)
        assert len(ds) > 0 and len(ds.sha256) == 64
        assert np.all(np.isfinite(np.concatenate([v for v in ds.columns.values() if v.dtype.kind == "f"])))


# ---- row order of R-H loops ----------------------------------------------------------------------
def _loop_file(tmp_path: Path, name: str, reorder) -> tuple[Path, list[str]]:
    """examples/data/rh_loops_slow.csv with its data rows passed through ``reorder``."""
    lines = (EXAMPLES / "data" / "rh_loops_slow.csv").read_text().splitlines()
    head = next(i for i, x in enumerate(lines) if not x.startswith("#"))
    rows = reorder(lines[head + 1:])
    p = write(tmp_path, name, "\n".join(lines[:head + 1] + rows) + "\n")
    return p, p.read_text().splitlines()


def _reported_line(msg: str, path: Path) -> int:
    import re

    m = re.search(re.escape(str(path)) + r", line (\d+), column '(\w+)'", msg)
    assert m, msg
    return int(m.group(1))


def test_shuffled_loop_is_refused_for_its_row_order_not_its_sign(tmp_path):
    rng = np.random.default_rng(7)
    p, text = _loop_file(tmp_path, "rh_shuffled.csv", lambda rows: [rows[i] for i in rng.permutation(len(rows))])
    with pytest.raises(DataError) as exc:
        read_dataset(p)
    msg = str(exc.value)
    assert "column 'field'" in msg and "not monotone within a branch" in msg and "out of order" in msg
    assert "flip its sign" not in msg
    field = float(text[_reported_line(msg, p) - 1].split(",")[0])
    assert f"turns back at {field:.4g} mT" in msg
    assert abs(field) < 0.8 * 450  # a turn in mid-sweep, not at the +-450 mT extremes


def test_two_swapped_rows_in_a_branch_are_caught(tmp_path):
    def swap(rows):
        rows = list(rows)
        rows[40], rows[50] = rows[50], rows[40]
        return rows

    p, text = _loop_file(tmp_path, "rh_swapped.csv", swap)
    head = next(i for i, x in enumerate(text) if not x.startswith("#")) + 1  # 1-based line of the header
    with pytest.raises(DataError, match="out of order") as exc:
        read_dataset(p)
    assert head + 41 <= _reported_line(str(exc.value), p) <= head + 51


def test_loop_sorted_by_field_is_refused_for_its_row_order(tmp_path):
    p, _ = _loop_file(tmp_path, "rh_sorted.csv", lambda rows: sorted(rows, key=lambda r: float(r.split(",")[0])))
    ds = read_dataset(p)  # one monotone sweep per loop: the field alone cannot tell
    fn = stt_functions(load_card(EXAMPLES / "pmtj35_demo.toml"))
    with pytest.raises(DataError) as exc:
        stt_blocks(fn, [ds])
    msg = str(exc.value)
    assert "rh_sorted.csv, line" in msg and "rows are out of order" in msg and "flip its sign" not in msg


def test_field_jitter_below_two_steps_is_not_a_turn(tmp_path):
    rng = np.random.default_rng(3)

    def jitter(rows):
        out = []
        for r in rows:
            h, rest = r.split(",", 1)
            out.append(f"{float(h) + rng.uniform(-1.4, 1.4):.3f},{rest}")  # field step 3 mT
        return out

    p, _ = _loop_file(tmp_path, "rh_jitter.csv", jitter)
    fn = stt_functions(load_card(EXAMPLES / "pmtj35_demo.toml"))
    assert stt_blocks(fn, [read_dataset(p)])


def test_fit_command_names_the_row_order_and_writes_nothing(tmp_path, capsys):
    from compactgen.cli import main

    rng = np.random.default_rng(11)
    p, _ = _loop_file(tmp_path, "rh_shuffled.csv", lambda rows: [rows[i] for i in rng.permutation(len(rows))])
    out = tmp_path / "fitted.toml"
    assert main(["fit", str(EXAMPLES / "pmtj35_demo.toml"), str(p), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert "rh_shuffled.csv, line" in err and "out of order" in err and not out.exists()
