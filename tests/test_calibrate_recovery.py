"""Parameter recovery on the bundled synthetic data (stt-mtj and dw-mtj cards), and `compactgen fit`
end to end: the fitted card is valid, carries uncertainties and provenance, builds, and the
input card is never overwritten; data of the wrong type for a card kind are refused."""
from __future__ import annotations

import hashlib
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from compactgen.jobs.build import build_files
from scipy import constants as C

from compactgen.jobs.calibrate import dw_fit
from compactgen.jobs.calibrate.commands import demo_data_files, dw_demo_data_files, run_fit
from compactgen.jobs.calibrate.data import read_all, read_dataset
from compactgen.jobs.calibrate.models import nuisance_from
from compactgen.jobs.calibrate.runner import fit_card
from compactgen.jobs.calibrate.synthetic import make_wall_data
from compactgen.model.card import load_card
from compactgen.cli import main
from compactgen.errors import DataError, InputError

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
DEMO = EXAMPLES / "pmtj35_demo.toml"
TRUTH = EXAMPLES / "data" / "truth_pmtj35.toml"
DW_DEMO = EXAMPLES / "dwtrack_demo.toml"
DW_TRUTH = EXAMPLES / "data" / "truth_dwtrack.toml"


@pytest.fixture(scope="module")
def example_fit():
    return fit_card(load_card(DEMO), read_all(demo_data_files()))


def test_recovers_the_truth_from_the_example_data(example_fit):
    """Every free parameter of the joint fit (R-V, two R-H sweep rates, switching counts) lies within two
    standard errors of the synthetic truth; starting values are the (different) demo card's."""
    truth = load_card(TRUTH)
    tv = {**truth.values, **nuisance_from(truth)}
    cf = example_fit
    assert cf.outcome.success
    assert set(cf.free) == {"ra", "tmr0", "v_half", "ki", "ms", "alpha", "eta", "attempt_time",
                            "activation_exponent", "offset_field"}
    for n in cf.free:
        se = cf.stderr[n]
        assert math.isfinite(se) and se > 0
        assert abs(cf.values[n] - tv[n]) <= 2 * se, (n, cf.values[n], tv[n], se)
    # the demo card starts far away: most parameters start more than 2 s.e. from the truth
    assert sum(abs(cf.start[n] - tv[n]) > 2 * cf.stderr[n] for n in cf.free) >= 5
    # derived figures agree with the truth card's own figures within 2 s.e.
    from compactgen.model.evaluate import figures

    tf = figures(truth.ir())
    assert abs(cf.figures["delta"][1] - tf["delta"]) <= 2 * cf.figures["delta"][2]
    assert abs(cf.figures["i_c0"][1] - tf["i_c0"]) <= 2 * cf.figures["i_c0"][2]
    # ki and ms are reported as strongly correlated (Delta ~ Ms H_k,eff V): the fit says so
    assert any("ki and ms" in w for w in cf.outcome.warnings)


def test_fit_command_writes_a_valid_card_with_provenance(example_fit, tmp_path):
    out = tmp_path / "fitted.toml"
    report = tmp_path / "report.html"
    data = demo_data_files()
    rc = main(["fit", str(DEMO), *map(str, data), "-o", str(out), "--report", str(report), "--truth", str(TRUTH),
               "--name", "pmtj35_fit"])
    assert rc == 0
    card = load_card(out)
    assert card.name == "pmtj35_fit" and card.kind == "stt-mtj"
    doc = tomllib.loads(out.read_text())
    prov = doc["provenance"]
    assert prov["tool"].startswith("compactgen ")
    assert {d["sha256"] for d in prov["data"]} == {hashlib.sha256(p.read_bytes()).hexdigest() for p in data}
    assert set(prov["free"]) == set(example_fit.free)
    assert set(prov["nuisance"]) == {"attempt_time", "activation_exponent", "offset_field"}
    assert set(card.uncertainty) == {"ra", "tmr0", "v_half", "ki", "ms", "alpha", "eta"}
    for n, se in card.uncertainty.items():
        assert se == pytest.approx(example_fit.stderr[n], rel=1e-9)
        assert card.values[n] == pytest.approx(example_fit.values[n], rel=1e-9)
    # the fitted card builds (Verilog-A, ngspice library, datasheet) and differs from the input
    files = build_files(card)
    assert "module pmtj35_fit" in files["pmtj35_fit.va"]
    assert card.values["ra"] != load_card(DEMO).values["ra"]
    html = report.read_text()
    assert "within 2 s.e." in html and html.count("data:image/png;base64") >= 5


def test_fit_never_overwrites_its_input(tmp_path):
    src = tmp_path / "card.toml"
    src.write_text(DEMO.read_text())
    before = src.read_bytes()
    rv = str(EXAMPLES / "data" / "rv_bias.csv")
    assert main(["fit", str(src), rv, "-o", str(src)]) == InputError.exit_status
    assert main(["fit", str(src), rv, "-o", str(tmp_path / "." / "card.toml")]) == InputError.exit_status
    assert src.read_bytes() == before
    out = tmp_path / "other.toml"
    out.write_text("keep me")
    with pytest.raises(InputError, match="exists already"):
        run_fit(src, [rv], out)
    assert out.read_text() == "keep me"
    assert main(["fit", str(src), rv, "-o", str(out), "--force"]) == 0
    assert load_card(out).values["ra"] == pytest.approx(4.4e-12, rel=1e-3)


def test_free_and_fix_choices(tmp_path):
    card = load_card(DEMO)
    rv = read_dataset(EXAMPLES / "data" / "rv_bias.csv")
    cf = fit_card(card, [rv], fix=["v_half"])
    assert cf.free == ["ra", "tmr0"] and cf.values["v_half"] == card.values["v_half"]
    assert any("v_half fixed by request" in n for n in cf.fixed_notes)
    with pytest.raises(InputError, match="unknown parameter 'rho'"):
        fit_card(card, [rv], free=["rho"])
    with pytest.raises(InputError, match="diameter cannot be fitted"):
        fit_card(card, [rv], free=["diameter"])


@pytest.fixture(scope="module")
def dw_fit_result():
    return fit_card(load_card(DW_DEMO), read_all(dw_demo_data_files()))


def test_dw_card_recovers_the_track_truth(dw_fit_result, tmp_path):
    """The dw-mtj card path: the synthetic wall velocities of examples/data/wall (made from the truth card
    truth_dwtrack.toml) fitted to the demo card.  dmi, theta_sh and alpha come back within two standard errors
    from a start many standard errors away; the DMI saturation speed v_D = (pi/2) gamma_e D/Ms (A. Thiaville
    et al., EPL 100, 57002 (2012)), computed here with scipy.constants, matches the fitted figure."""
    truth = load_card(DW_TRUTH)
    cf = dw_fit_result
    assert truth.kind == "dw-mtj" and cf.card.kind == "dw-mtj"
    assert cf.outcome.success and cf.outcome.warnings == []
    assert cf.free == ["dmi", "theta_sh", "alpha"]
    for n in cf.free:
        se = cf.stderr[n]
        assert 0 < se < 0.05 * abs(truth.values[n]), (n, se)
        assert abs(cf.values[n] - truth.values[n]) <= 2 * se, (n, cf.values[n], truth.values[n], se)
        assert abs(cf.start[n] - truth.values[n]) > 5 * se, n
    # what wall velocities cannot separate is the truth's in the demo card, and stays as given
    for n in ("ms", "t_free", "ki", "kv", "a_ex", "xi_sot", "h_dep"):
        assert cf.values[n] == cf.card.values[n] == truth.values[n], n
    assert any(n.startswith("ms, ki, kv, a_ex, t_free fixed") for n in cf.fixed_notes)
    gamma_e = abs(C.physical_constants["electron gyromag. ratio"][0])
    _, v_d, se, unit, _ = cf.figures["v_dmi"]
    assert unit == "m/s"
    assert v_d == pytest.approx(math.pi / 2 * gamma_e * cf.values["dmi"] / cf.values["ms"], rel=1e-9)
    assert abs(v_d - math.pi / 2 * gamma_e * truth.values["dmi"] / truth.values["ms"]) <= 2 * se
    # the bundled files are labelled synthetic and are reproduced byte for byte from the truth card (dw-mtj names)
    files = dw_demo_data_files()
    assert all("synthetic" in read_dataset(f).meta and "truth_dwtrack.toml" in read_dataset(f).meta["synthetic"]
               for f in files)
    again = make_wall_data(truth, tmp_path, seed=2026, source="examples/data/truth_dwtrack.toml")
    assert [p.read_bytes() for p in again] == [f.read_bytes() for f in files]
    # points the card's pinning would hold are flagged (here: a card with a 40 mT depinning field)
    warn = dw_fit._pinning_warnings(cf.blocks, dict(cf.values, h_dep=40e-3 / C.mu_0))
    assert len(warn) == 2 and all("below the card's depinning threshold" in w for w in warn)
    assert "wall_velocity_field.csv: wall velocity: 5 point(s)" in " ".join(warn)  # 12..36 mT


def test_dw_default_free_and_bad_choices():
    """Current sweeps alone fix theta_sh/alpha only (alpha fixed); field sweeps free alpha.  Parameters the wall
    velocities do not inform are refused before any model is built."""
    current, field = (read_dataset(f) for f in dw_demo_data_files())
    free, notes = dw_fit.default_free([current])
    assert free == ["dmi", "theta_sh"] and any(n.startswith("alpha fixed:") for n in notes)
    assert dw_fit.default_free([current, field])[0] == ["dmi", "theta_sh", "alpha"]
    card = load_card(DW_DEMO)
    with pytest.raises(InputError, match="track_length cannot be fitted to wall velocities"):
        fit_card(card, [current], free=["track_length"])
    with pytest.raises(InputError, match="unknown parameter 'ra_x'"):
        fit_card(card, [current], free=["ra_x"])


def test_dw_fit_command(dw_fit_result, tmp_path):
    """`compactgen fit examples/dwtrack_demo.toml <wall files> -o fitted.toml`: a valid dw-mtj card with the
    fitted values, their standard errors, provenance listing the dw-mtj parameters fixed, and a report with the
    recovered-versus-true table; the fitted card builds."""
    out = tmp_path / "fitted.toml"
    report = tmp_path / "report.html"
    files = dw_demo_data_files()
    rc = main(["fit", str(DW_DEMO), *map(str, files), "-o", str(out), "--report", str(report),
               "--truth", str(DW_TRUTH)])
    assert rc == 0
    card = load_card(out)
    assert card.kind == "dw-mtj" and card.name == "dwtrack_demo_fit"
    assert set(card.uncertainty) == {"dmi", "theta_sh", "alpha"}
    for n, se in card.uncertainty.items():
        assert se == pytest.approx(dw_fit_result.stderr[n], rel=1e-3)
        assert card.values[n] == pytest.approx(dw_fit_result.values[n], rel=1e-6)
    prov = tomllib.loads(out.read_text())["provenance"]
    assert prov["free"] == ["dmi", "theta_sh", "alpha"] and prov["fixed"] == ["a_ex", "ki", "ms", "xi_sot"]
    assert "kept" not in prov
    assert {d["sha256"] for d in prov["data"]} == {hashlib.sha256(p.read_bytes()).hexdigest() for p in files}
    assert {d["measurement"] for d in prov["data"]} == {"wall-velocity"} and "nuisance" not in prov
    html = report.read_text()
    assert "within 2 s.e." in html and html.count("data:image/png;base64") >= 3
    assert "Fixed parameters (held at their card values)</h2><p><code>a_ex</code>, <code>ki</code>" in html
    assert "module dwtrack_demo_fit" in build_files(card)["dwtrack_demo_fit.va"]


def test_wrong_data_type_for_the_card_kind(tmp_path, capsys):
    """R-H loops given to a dw-mtj card, wall velocities to an stt-mtj card: one error line naming the file and
    what the kind accepts; nothing written."""
    out = tmp_path / "never.toml"
    rh = EXAMPLES / "data" / "rh_loops_slow.csv"
    wall = dw_demo_data_files()[0]
    cases = ((DW_DEMO, rh, "resistance-field data cannot be fitted to a card of kind dw-mtj (it accepts "
                           "wall-velocity)"),
             (DEMO, wall, "wall-velocity data cannot be fitted to a card of kind stt-mtj (it accepts resistance-bias, "
                          "resistance-field, switching)"))
    for card, data, msg in cases:
        capsys.readouterr()
        assert main(["fit", str(card), str(data), "-o", str(out)]) == DataError.exit_status
        err = [ln for ln in capsys.readouterr().err.splitlines() if "error" in ln]
        assert err == [f"compactgen fit: error: {data}: {msg}"]
        assert not out.exists()
    assert main(["fit", str(EXAMPLES / "sot50_demo.toml"), str(wall), "-o", str(out)]) == InputError.exit_status
    assert "kind 'sot-mtj' is not wired yet (supported: stt-mtj, dw-mtj)" in capsys.readouterr().err


def _rewrite(src: Path, dst: Path, header: str, rows, meta_extra: str = "") -> Path:
    meta = [ln for ln in src.read_text().splitlines() if ln.startswith("#")]
    dst.write_text("\n".join(meta) + ("\n" + meta_extra if meta_extra else "") + "\n" + header + "\n"
                   + "\n".join(rows) + "\n")
    return dst


def test_other_forms_of_the_same_measurements(tmp_path):
    """I-V and TMR-V files made from the R-V data, an R-H file described by a hold time, and switching
    pulses given as voltages: each form fits to the same parameters as the original."""
    card = load_card(DEMO)
    rv = read_dataset(EXAMPLES / "data" / "rv_bias.csv")
    v, r, st = rv.columns["voltage"], rv.columns["resistance"], rv.columns["state"]
    ref = fit_card(card, [rv])
    iv = _rewrite(rv.path, tmp_path / "iv.csv", "voltage [V],current [uA],state",
                  [f"{a:.3f},{1e6 * a / b:.6g},{s}" for a, b, s in zip(v, r, st)])
    cf = fit_card(card, [read_dataset(iv)])
    for n in ("ra", "tmr0", "v_half"):  # same data, another estimator: agree within its standard error
        assert abs(cf.values[n] - ref.values[n]) < 2 * cf.stderr[n], n
    p_mask, ap_mask = st == "P", st == "AP"
    tmr = r[ap_mask] / r[p_mask] - 1  # rows are in the same voltage order for both states
    tv = _rewrite(rv.path, tmp_path / "tmr.csv", "voltage [V],tmr [%]",
                  [f"{a:.3f},{100 * t:.6g}" for a, t in zip(v[p_mask], tmr)])
    cf = fit_card(card, [read_dataset(tv)])
    assert cf.free == ["tmr0", "v_half"]
    for n in cf.free:
        assert abs(cf.values[n] - ref.values[n]) < 2 * cf.stderr[n], n
    # R-H loops stepped with a hold time instead of a sweep rate: a different switching-field law, still fits
    rh = EXAMPLES / "data" / "rh_loops_slow.csv"
    text = rh.read_text().replace("# sweep_rate: 0.01 T/s", "# hold_time: 0.3 s")
    (tmp_path / "rh_hold.csv").write_text(text)
    cf = fit_card(card, [read_dataset(tmp_path / "rh_hold.csv")])
    assert cf.outcome.success and {"ki", "offset_field"} <= set(cf.free)
    assert "hold time" in cf.blocks[1].info["how"]


def test_switching_pulses_given_as_voltages(tmp_path):
    """Voltage amplitudes are turned into currents with the junction conductance of the starting state;
    a file written in volts fits to the same switching parameters as the same pulses in amperes."""
    from scipy.optimize import brentq

    from compactgen.jobs.calibrate.models import stt_functions

    truth = load_card(TRUTH)
    fn = stt_functions(truth)
    a = fn.args(truth.values)
    sw = read_dataset(EXAMPLES / "data" / "switching.csv")
    rows = []
    for w, cur, d, n, k in zip(sw.columns["pulse_width"], sw.columns["current"], sw.columns["direction"],
                               sw.columns["attempts"], sw.columns["switched"]):
        mz0 = 1.0 if d == "P->AP" else -1.0
        volt = brentq(lambda vv: vv * fn.g(*a, vv, mz0) - cur, -3 * np.sign(-cur) * 0 - 3.0, 3.0, xtol=1e-14)
        rows.append(f"{w * 1e9:.6g},{volt:.9g},{d},{int(n)},{int(k)}")
    volts = _rewrite(sw.path, tmp_path / "switching_volts.csv",
                     "pulse_width [ns],voltage [V],direction,attempts,switched", rows)
    free = ["eta", "alpha", "attempt_time", "activation_exponent"]
    by_current = fit_card(truth, [sw], free=free)
    by_voltage = fit_card(truth, [read_dataset(volts)], free=free)
    for n in free:
        assert by_voltage.values[n] == pytest.approx(by_current.values[n], rel=1e-5)


def test_geometry_and_temperature_come_from_the_data(tmp_path):
    """The data's diameter and temperature become the fitted card's (demag_nz recomputed); files that
    disagree on them are refused: a card is one device at one temperature."""
    card = load_card(DEMO)
    rv = EXAMPLES / "data" / "rv_bias.csv"
    other = tmp_path / "rv_40nm.csv"
    other.write_text(rv.read_text().replace("# diameter: 35 nm", "# diameter: 40 nm")
                     .replace("# temperature: 27 degC", "# temperature: 85 degC"))
    cf = fit_card(card, [read_dataset(other)])
    assert cf.values["diameter"] == pytest.approx(40e-9, rel=1e-12)
    assert cf.values["tnom"] == pytest.approx(358.15, rel=1e-12)
    assert cf.values["demag_nz"] != pytest.approx(card.values["demag_nz"], rel=1e-3)
    assert any("diameter set from the data" in n for n in cf.fixed_notes)
    assert cf.values["ra"] == pytest.approx(4.4e-12 * (40 / 35) ** 2, rel=2e-3)  # same resistances, larger area
    with pytest.raises(DataError, match="rv_40nm.csv: diameter .* differs"):
        fit_card(card, [read_dataset(rv), read_dataset(other)])
    hot = tmp_path / "switching_hot.csv"
    hot.write_text((EXAMPLES / "data" / "switching.csv").read_text().replace("27 degC", "85 degC"))
    with pytest.raises(DataError, match="switching_hot.csv: temperature .* differs"):
        fit_card(card, [read_dataset(EXAMPLES / "data" / "rh_loops_slow.csv"), read_dataset(hot)])


def test_points_near_the_critical_current_are_flagged(tmp_path):
    truth = load_card(TRUTH)
    from compactgen.jobs.calibrate.models import stt_functions

    fn = stt_functions(truth)
    ic0 = fn.i_c0(*fn.args(truth.values))
    rows = [f"{w},{-1e6 * ic0 * i:.4f},AP->P,200,{k}" for w, i, k in
            ((100, 0.6, 20), (1000, 0.6, 150), (10, 0.75, 100), (5, 1.0, 120), (3, 2.0, 100), (2, 2.0, 30))]
    p = tmp_path / "near.csv"
    p.write_text("# diameter: 35 nm\n# temperature: 27 degC\n# polarity: bottom-to-top\n"
                 "pulse_width [ns],current [uA],direction,attempts,switched\n" + "\n".join(rows) + "\n")
    cf = fit_card(truth, [read_dataset(p)], free=["activation_exponent"])  # I_c0 stays the truth's
    assert any("within 10 % of the fitted I_c0" in w for w in cf.outcome.warnings)
