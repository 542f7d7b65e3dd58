"""Wafer statistics of dw-mtj tracks from wall velocities: the population analysis against a
synthetic dw wafer's truth, the whole command through the per-device wall-velocity fits, and the
error for a kind wafer-stats does not handle.  Every wafer here is SYNTHETIC
(compactgen.jobs.wafer.synthetic.make_dw_wafer)."""
from __future__ import annotations

import csv
import math
import tomllib
from pathlib import Path

import pytest

from compactgen.jobs.wafer.population import analyse
from compactgen.jobs.wafer.synthetic import make_dw_wafer
from compactgen.jobs.wafer.table import read_device_table
from compactgen.model.card import load_card

from helpers import population_checks

ROOT = Path(__file__).resolve().parent.parent
CARD = ROOT / "examples" / "dwtrack_demo.toml"


@pytest.fixture(scope="module")
def card():
    return load_card(CARD)


def test_dw_population_recovers_the_truth_within_its_intervals(card, tmp_path):
    """A synthetic track wafer of 30 dies x 3 track widths x 2 devices (true per-device values, no
    fits): true global sigmas (random part plus radial trend over these dies), mismatch sigmas,
    means and global correlations of dmi, theta_sh, alpha against their 95 % bootstrap intervals
    over dies.  Twelve intervals: with 30 dies the percentile bootstrap covers less than 95 % (our
    own check, seeds 1-8: 87 of 96 intervals, the global sigmas 19 of 24), so at a miss rate of
    0.1 per interval three misses have a probability of about 9 % and four or more of about 2.6 %
    (binomial): at most three are allowed, each a near miss.  The planted DMI-halved and
    high-damping devices are flagged as outliers, no good device is."""
    truth = make_dw_wafer(card, tmp_path, n_dies=30, per_size=2, seed=11)
    tab = read_device_table(tmp_path / "devices.csv")
    dies = tab.dies()
    devs = [dict(id=d.id, die=dies.index(d.die), drawn=d.drawn_diameter, area=d.drawn_area,
                 values=truth["device_values"][d.id], stderr={})
            for d in tab.devices if truth["bad_devices"].get(d.id) != "missing"]
    names = list(truth["parameters"])
    assert names == ["dmi", "theta_sh", "alpha"] and truth["area_ref_m2"] == pytest.approx(60e-9 * 200e-9)
    pop = analyse(devs, names, truth["area_ref_m2"], bootstrap=150, seed=2)
    checks = population_checks(truth, pop, names)
    misses = [(what, true, ci) for what, true, ci in checks if not ci[0] <= true <= ci[1]]
    assert len(checks) == 12 and len(misses) <= 3, misses
    for what, true, (lo, hi) in misses:
        assert lo - (hi - lo) <= true <= hi + (hi - lo), (what, true, lo, hi)
    planted = {d for d, k in truth["bad_devices"].items() if k in ("low_dmi", "high_alpha")}
    assert planted and planted <= set(pop.outliers)
    assert set(pop.outliers) - planted - {d for d, k in truth["bad_devices"].items() if k == "stuck"} == set()


def test_dw_wafer_stats_through_the_wall_velocity_fits(card, tmp_path):
    """12 dies x 2 track widths (MTJ areas 6000 and 24000 nm^2) through `compactgen wafer-stats`:
    each good device's fitted dmi, theta_sh, alpha lie within 5 of their standard errors of the
    device's true values (the fit path recovers every device), the population means' 95 %
    intervals hold the true means (one near miss allowed: 12 dies), every planted bad device is
    reported with its reason (no data, a stuck wall whose fit is not physical, DMI halved and
    damping raised as outliers), the card carries sigmas for theta_sh only (the one parameter the
    dw-mtj kind varies) and the spread of dmi and alpha in [variation.population], and the report
    says why there is no Monte Carlo proof."""
    from compactgen.cli import main

    folder = tmp_path / "wafer"
    truth = make_dw_wafer(card, folder, n_dies=12, per_size=1, seed=5, widths_nm=(30.0, 120.0))
    out = tmp_path / "out"
    rc = main(["wafer-stats", str(CARD), str(folder), "-o", str(out), "--bootstrap", "60", "--workers", "1",
               "--truth", str(folder / "truth.json")])
    assert rc == 0
    text = (out / "device_fits.csv").read_text().splitlines()
    assert text[0].startswith("# per-device fits") and "MTJ area on the track" in text[0]
    rows = list(csv.reader(text[1:]))
    body = {r[0]: dict(zip(rows[0], r)) for r in rows[1:]}
    assert len(body) == truth["devices"] == 24
    for dev, kind in truth["bad_devices"].items():
        assert body[dev]["status"] in ("excluded", "outlier") and body[dev]["reason"], (dev, kind, body[dev])
    used = [d for d, r in body.items() if r["status"] == "used"]
    assert len(used) == 24 - len(truth["bad_devices"])
    scale = {"dmi": 1e3, "theta_sh": 1.0, "alpha": 1.0}
    for d in used:
        for n, s in scale.items():
            val, se = float(body[d][f"{n} [{'mJ/m^2' if n == 'dmi' else '1'}]"]), \
                float(body[d][f"{n}_se [{'mJ/m^2' if n == 'dmi' else '1'}]"])
            assert abs(val - truth["device_values"][d][n] * s) < 5 * se, (d, n, val, se, truth["device_values"][d][n])
    new = tomllib.loads((out / "dwtrack_demo_wafer.toml").read_text())
    var, par = new["variation"], new["parameters"]
    assert var["origin"] == "wafer" and var["correlated"] == ["theta_sh"] and var["correlation"] == [[1.0]]
    assert "sigma_global_theta_sh" in par and "sigma_global_dmi" not in par and "sigma_global_alpha" not in par
    spread = var["population"]["spread_not_varied"]
    assert set(spread) == {"dmi", "alpha"} and all(0 < spread[n]["sigma_mismatch"] < 0.2 for n in spread)
    misses = []
    for n, s in (("dmi", 1e3), ("theta_sh", 1.0), ("alpha", 1.0)):
        lo, hi = var["intervals"][n]
        true = truth["parameters"][n]["mean"]
        if not lo <= true <= hi:
            misses.append(n)
            assert lo - (hi - lo) <= true <= hi + (hi - lo), (n, true, lo, hi)
    assert len(misses) <= 1, misses
    card_new = load_card(out / "dwtrack_demo_wafer.toml")
    assert card_new.values["area_ref"] == pytest.approx(6000e-18) and card_new.ir().global_correlation[0] == ("theta_sh",)
    report = (out / "wafer_report.html").read_text()
    assert "SYNTHETIC wafer" in report and "no Monte Carlo proof for dw-mtj" in report.replace("No Monte", "no Monte")
    assert "not varied by the dw-mtj kind" in report and "<b class=warn>missed</b>" not in report
    assert math.isfinite(float(body[used[0]]["j_half [MA/cm^2]"]))


def test_wafer_stats_names_an_unsupported_kind(tmp_path, capsys):
    from compactgen.cli import main

    folder = tmp_path / "wafer"
    folder.mkdir()
    (folder / "devices.csv").write_text("device,die_x [mm],die_y [mm],diameter [nm]\nA1,0,0,50\n")
    sot = ROOT / "examples" / "sot50_demo.toml"
    assert main(["wafer-stats", str(sot), str(folder), "-o", str(tmp_path / "out"), "--no-mc"]) == 2
    err = capsys.readouterr().err
    assert "sot50_demo.toml: wafer statistics are wired for dw-mtj and stt-mtj cards" in err and "sot-mtj" in err
    assert not (tmp_path / "out").exists()
