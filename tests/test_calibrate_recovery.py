"""Parameter recovery on the bundled synthetic data, the domain-wall model, and `compactgen fit`
end to end: the fitted card is valid, carries uncertainties and provenance, builds, and the
input card is never overwritten."""
from __future__ import annotations

import hashlib
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from compactgen.build import build_files
from compactgen.calibrate.commands import demo_data_files, run_fit
from compactgen.calibrate.data import read_all, read_dataset
from compactgen.calibrate.models import nuisance_from
from compactgen.calibrate.runner import fit_card, fit_wall_data
from compactgen.calibrate.synthetic import TRUTH_WALL, make_wall_data
from compactgen.calibrate.wall import wall_specs
from compactgen.card import load_card
from compactgen.cli import main
from compactgen.errors import InputError

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
DEMO = EXAMPLES / "pmtj35_demo.toml"
TRUTH = EXAMPLES / "data" / "truth_pmtj35.toml"


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
    from compactgen.reference import figures

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


def test_wall_velocity_recovery(tmp_path):
    """Rigid-wall steady state (PHYSICS 6.3) fitted to synthetic velocities versus current density and
    versus field: D, theta_SH and alpha come back within two standard errors, from a distant start."""
    files = make_wall_data(tmp_path, seed=11)
    start = dict(TRUTH_WALL, d_dmi=0.5e-3, theta_sh=0.2, alpha=0.4)
    out = fit_wall_data(read_all(files), start, ["d_dmi", "theta_sh", "alpha"])
    assert out.success
    for n in ("d_dmi", "theta_sh", "alpha"):
        assert abs(out.values[n] - TRUTH_WALL[n]) <= 2 * out.stderr[n], (n, out.values[n], out.stderr[n])
        assert out.stderr[n] < 0.05 * abs(TRUTH_WALL[n])
    # a device kind with its own parameter names maps them
    names = {"d_dmi": "dmi", "theta_sh": "spin_hall_angle"}
    specs = {names.get(k, k): s for k, s in wall_specs().items()}
    vals = {names.get(k, k): v for k, v in start.items()}
    out2 = fit_wall_data(read_all(files), vals, ["dmi", "spin_hall_angle", "alpha"], specs=specs, names=names)
    assert out2.values["dmi"] == pytest.approx(out.values["d_dmi"], rel=1e-6)
    assert np.isfinite(out2.stderr["spin_hall_angle"])
