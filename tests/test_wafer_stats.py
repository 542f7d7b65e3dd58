"""Wafer statistics: device table and tagged data, the population analysis against a synthetic
wafer's truth, the card's [variation] and correlated global draws, and the whole command with its
Monte Carlo proof in ngspice.  Every wafer here is SYNTHETIC (compactgen.jobs.wafer.synthetic)."""
from __future__ import annotations

import csv
import json
import math
from pathlib import Path

import numpy as np
import pytest

from compactgen.errors import CardError, DataError
from compactgen.jobs.wafer.population import _reml, analyse
from compactgen.jobs.wafer.synthetic import make_wafer
from compactgen.jobs.wafer.table import load_wafer, read_device_table
from compactgen.model.card import load_card, parse_card

from helpers import population_checks

ROOT = Path(__file__).resolve().parent.parent
CARD = ROOT / "examples" / "pmtj35_demo.toml"


@pytest.fixture(scope="module")
def card():
    return load_card(CARD)


def _population_from_truth(truth: dict, folder: Path):
    """Devices with their true per-device values (no fit), as wafer-stats hands them to analyse()."""
    tab = read_device_table(folder / "devices.csv")
    dies = tab.dies()
    r2 = np.array([x * x + y * y for x, y in dies])
    out = []
    for d in tab.devices:
        if truth["bad_devices"].get(d.id) == "missing":
            continue
        v = truth["device_values"][d.id]
        de = d.drawn_diameter - truth["diameter_offset_m"]
        area = math.pi / 4 * de**2
        k = dies.index(d.die)
        out.append(dict(id=d.id, die=k, drawn=d.drawn_diameter, area=area, values=v, stderr={},
                        rho2=float(r2[k] / r2.max()), r_p=v["ra"] / area))
    return out


def test_balanced_reml_equals_the_anova_estimator():
    """One size, n devices per die, no fit noise: REML equals the ANOVA (method of moments)
    estimator of the one-way random-effects model, sigma_m^2 = MSW, sigma_g^2 = (MSB - MSW)/n
    (S. R. Searle, G. Casella, C. E. McCulloch, Variance Components, Wiley (1992), sections 3.5
    and 3.7: for balanced data the REML solution is the ANOVA one when that is positive)."""
    rng = np.random.default_rng(5)
    a, n = 30, 4
    y = 0.7 + 0.05 * np.repeat(rng.standard_normal(a), n) + 0.03 * rng.standard_normal(a * n)
    die = np.repeat(np.arange(a), n)
    ybar = y.reshape(a, n).mean(axis=1)
    msw = float(np.sum((y.reshape(a, n) - ybar[:, None]) ** 2) / (a * (n - 1)))
    msb = float(n * np.sum((ybar - y.mean()) ** 2) / (a - 1))
    sg, sm, beta, _ = _reml(y, np.zeros(a * n, int), die, np.ones(a * n), np.zeros(a * n), 1, a)
    assert sm**2 == pytest.approx(msw, rel=2e-3)
    assert sg**2 == pytest.approx((msb - msw) / n, rel=2e-3)
    assert beta[0] == pytest.approx(y.mean(), rel=1e-9)


def test_population_recovers_the_truth_within_its_intervals(card, tmp_path):
    """A synthetic population of 40 dies x 4 sizes x 3 devices (true values, no fits): the true
    global sigmas, mismatch sigmas, means, correlations and the diameter offset against their 95 %
    bootstrap intervals.  Thirteen intervals at 95 % miss the truth now and then by chance (a
    coverage study of this estimator, 60 wafers: 92 % global, 93 % mismatch); three or more misses
    have a probability of about 2.5 % (binomial), so at most two are allowed.  The planted
    degraded-TMR and high-RA devices are flagged as outliers."""
    truth = make_wafer(card, tmp_path, n_dies=40, per_size=3, seed=11)
    devs = _population_from_truth(truth, tmp_path)
    names = list(truth["parameters"])
    pop = analyse(devs, names, truth["area_ref_m2"], bootstrap=150, seed=2)
    checks = population_checks(truth, pop, names)
    checks.append(("diameter offset", truth["diameter_offset_m"], pop.offset_ci))
    misses = [(what, true, ci) for what, true, ci in checks if not ci[0] <= true <= ci[1]]
    assert len(checks) == 13 and len(misses) <= 2, misses
    for what, true, (lo, hi) in misses:  # a miss is a near miss, not a wrong estimate
        assert lo - (hi - lo) <= true <= hi + (hi - lo), (what, true, lo, hi)
    planted = {d for d, k in truth["bad_devices"].items() if k in ("low_tmr", "high_ra")}
    assert planted <= set(pop.outliers)
    assert len(set(pop.outliers) - planted) <= 1  # the 5-robust-sd rule flags (almost) no good device


def test_device_table_and_tagged_files_name_file_line_and_column(tmp_path):
    f = tmp_path / "devices.csv"
    head = "device,die_x [mm],die_y [mm],diameter [nm]\n"
    for text, msg in (
            (head + "A1,0,0,35\nA2,0,0,fifty\n", r"devices.csv, line 3, column 'diameter': 'fifty' is not a number"),
            (head.replace("nm", "kg") + "A1,0,0,35\n", r"line 1, column 'diameter': unit \[kg\] is not a unit of length"),
            ("device,die_x [mm],diameter [nm]\nA1,0,35\n", r"line 1: missing column 'die_y'"),
            (head + "A1,0,0,35\nA1,1,0,35\n", r"line 3, column 'device': device 'A1' listed twice")):
        f.write_text(text)
        with pytest.raises(DataError, match=msg):
            read_device_table(f)
    f.write_text("device,die_x [mm],die_y [mm],diameter [nm]\nA1,0,0,35\nA2,0,0,50\n")
    rv = tmp_path / "rv.csv"
    rv.write_text("device,voltage [V],resistance [ohm],state\nA1,0.1,4000,P\nA1,0.1,9000,AP\nB7,0.1,4000,P\n")
    with pytest.raises(DataError, match=r"rv.csv, line 4, column 'device': device 'B7' is not in the device table"):
        load_wafer(tmp_path)
    rv.write_text("# diameter: 40 nm\ndevice,voltage [V],resistance [ohm],state\nA1,0.1,4000,P\nA1,0.1,9000,AP\n")
    with pytest.raises(DataError, match=r"rv.csv, line 1, metadata 'diameter': '40 nm' disagrees with the device "
                                        r"table's drawn size of A1 \(.*devices.csv, line 2: 35 nm\)"):
        load_wafer(tmp_path)
    rv.write_text("device,voltage [V],resistance [ohm],state\nA1,0.1,4000,P\nA1,0.1,-9000,AP\n")
    with pytest.raises(DataError, match=r"rv.csv, line 3, column 'resistance': resistance must be positive"):
        load_wafer(tmp_path, accepts=("resistance-bias",))
    # one device per file, named in the metadata; the table's size completes the file
    rv.write_text("# device: A2\nvoltage [V],resistance [ohm],state\n0.1,4000,P\n0.1,9000,AP\n")
    w = load_wafer(tmp_path, accepts=("resistance-bias",), diameter_offset=4e-9)
    assert w.problems == {"A1": "no measurement rows in any file"}
    assert w.datasets["A2"][0].area() == pytest.approx(math.pi / 4 * 46e-9**2, rel=1e-9)


def test_example_wafer_is_labelled_synthetic_and_read():
    """examples/data/wafer: every file says it is synthetic; the table and the tagged files read, and
    the planted device without data is reported."""
    folder = ROOT / "examples" / "data" / "wafer"
    for f in sorted(folder.glob("*.csv")):
        first = f.read_text().splitlines()[0]
        assert first.startswith("# synthetic: generated by") and first.endswith("not measured"), f
    truth = json.loads((folder / "truth.json").read_text())
    w = load_wafer(folder)
    assert len(w.table.devices) == truth["devices"] == 80 and len(w.table.dies()) == truth["dies"]
    missing = {d for d, k in truth["bad_devices"].items() if k == "missing"}
    assert set(w.problems) == missing


def test_variation_table_is_checked(card):
    text = CARD.read_text()
    ok = text + '\n[variation]\norigin = "wafer"\ncorrelated = ["ra", "tmr0"]\ncorrelation = [[1.0, 0.5], [0.5, 1.0]]\n'
    c = parse_card(ok, "<w>")
    assert c.ir().global_correlation == (("ra", "tmr0"), ((1.0, 0.5), (0.5, 1.0)))
    bad = {
        "[[1.0, 0.5], [0.4, 1.0]]": "not symmetric: row 1, column 2",
        "[[1.0, 1.0], [1.0, 1.0]]": "not positive definite",
        "[[1.0, 1.5], [1.5, 1.0]]": r"row 1 \(ra\), column 2 \(tmr0\): 1.5 is not a number in \[-1, 1\]",
        "[[1.0, 0.5]]": "must be a 2 x 2 matrix",
    }
    for matrix, msg in bad.items():
        with pytest.raises(CardError, match=msg):
            parse_card(text + f'\n[variation]\ncorrelated = ["ra", "tmr0"]\ncorrelation = {matrix}\n', "<w>")
    with pytest.raises(CardError, match="'v_half' is not a varied parameter"):
        parse_card(text + '\n[variation]\ncorrelated = ["v_half"]\ncorrelation = [[1.0]]\n', "<w>")


@pytest.mark.simulator
def test_correlated_global_draws_in_the_mc_sections(card, tmp_path, ngspice_cli):
    """mc_global draws ra and tmr0 with the card's correlation 0.8 (Cholesky factor times independent
    agauss draws): over 60 runs the sample correlation lies in its 99 % Fisher-z interval
    (R. A. Fisher, Metron 1, 3 (1921)); every instance of a run shares the run's draw."""
    from compactgen.sim import run_ngspice_batch
    from compactgen.targets import render

    c = parse_card(CARD.read_text() + '\n[variation]\ncorrelated = ["ra", "tmr0"]\n'
                   'correlation = [[1.0, 0.8], [0.8, 1.0]]\n', "<w>")
    ir = c.ir()
    lib = tmp_path / f"{ir.name}.lib"
    lib.write_text(render.ngspice(ir))
    pairs = []
    for seed in range(1, 61):
        saves = " ".join(f"@i.x{k}.i{d}[dc]" for k in (1, 2) for d in ("draw_global_ra", "draw_global_tmr0"))
        deck = "\n".join([f"corr {seed}", f".lib {lib} mc_global", f".options seed={seed}", "V1 n1 0 0.01",
                          f"X1 n1 0 {ir.name}", f"X2 n1 0 {ir.name}", f".save all {saves}", ".tran 1p 2p", ".end"])
        data = run_ngspice_batch(deck)
        get = lambda k, d: float(data[f"@i.x{k}.i{d}[dc]#branch"][0])  # noqa: E731
        assert get(1, "draw_global_ra") == get(2, "draw_global_ra")
        pairs.append((get(1, "draw_global_ra"), get(1, "draw_global_tmr0")))
    r = np.corrcoef(np.array(pairs).T)[0, 1]
    z, half = math.atanh(0.8), 2.5758 / math.sqrt(len(pairs) - 3)
    assert math.tanh(z - half) <= r <= math.tanh(z + half), r


@pytest.mark.simulator
def test_wafer_stats_end_to_end_with_monte_carlo_proof(card, tmp_path, ngspice_cli):
    """A small synthetic wafer (12 dies x 4 sizes x 2 devices) through the command: every planted bad
    device is reported (no data, failed fit or outlier) with its reason, the card carries the
    population's sigmas and correlation and builds, the ngspice mc section reproduces the measured
    spread of R_P, R_AP and TMR per size (sigmas inside their intervals, KS not rejecting)."""
    from compactgen.cli import main
    from compactgen.jobs.build import build_files

    folder = tmp_path / "wafer"
    truth = make_wafer(card, folder, n_dies=12, per_size=2, seed=3)
    out = tmp_path / "out"
    rc = main(["wafer-stats", str(CARD), str(folder), "-o", str(out), "--bootstrap", "60", "--workers", "1",
               "--mc-dies", "60", "--truth", str(folder / "truth.json")])
    assert rc == 0
    rows = list(csv.reader(l for l in (out / "device_fits.csv").read_text().splitlines() if not l.startswith("#")))
    head, body = rows[0], {r[0]: dict(zip(rows[0], r)) for r in rows[1:]}
    assert len(body) == truth["devices"] and "fit_p_min" in head
    for dev, kind in truth["bad_devices"].items():
        assert body[dev]["status"] in ("excluded", "outlier") and body[dev]["reason"], (dev, kind, body[dev])
    assert sum(r["status"] == "used" for r in body.values()) == truth["devices"] - len(truth["bad_devices"])
    new = load_card(out / "pmtj35_demo_wafer.toml")
    assert new.variation["origin"] == "wafer" and new.variation["correlated"] == ["ra", "tmr0", "ki"]
    for n in ("ra", "tmr0", "ki"):
        lo, hi = new.variation["intervals"][f"sigma_global_{n}"]
        assert lo <= new.values[f"sigma_global_{n}"] <= hi
    lib = build_files(new, compiled=False)["pmtj35_demo_wafer.lib"]
    assert "pmtj35_demo_wafer_draw_global_tmr0={" in lib and "*pmtj35_demo_wafer_draw_global_ra_z+" in lib
    sheet = build_files(new, compiled=False)["pmtj35_demo_wafer.md"]
    assert "measured wafer population" in sheet
    report = (out / "wafer_report.html").read_text()
    assert report.count("data:image/png;base64,") >= 6 and "KS p" in report
    assert "<b class=warn>missed</b>" not in report  # every planted bad device flagged


def test_release_comparison_flags_a_sigma_or_correlation_outside_its_band(card):
    """Two release manifests whose cards carry a [variation]: a mismatch sigma moved by 40 % and a
    correlation by 0.3 are flagged, a global sigma moved by 10 % is within its band; manifests
    without a [variation] add no rows."""
    from compactgen.jobs.release.bundle import variation_record
    from compactgen.jobs.release.compare import compare_variation

    var = ('\n[variation]\norigin = "wafer"\ncorrelated = ["ra", "tmr0"]\ncorrelation = [[1.0, 0.5], [0.5, 1.0]]\n'
           '[variation.intervals]\nsigma_mismatch_ra = [0.012, 0.018]\n')
    old_card = parse_card(CARD.read_text() + var, "<old>")
    new_card = parse_card(CARD.read_text().replace("[parameters]", "[parameters]\nsigma_mismatch_ra = 0.021\n"
                                                   "sigma_global_ra = 0.033")
                          + var.replace("0.5], [0.5", "0.8], [0.8"), "<new>")

    def manifest(c):
        return {"parameters": {k: {"value": v} for k, v in c.values.items()}, "variation": variation_record(c)}

    rows = {r.name: r for r in compare_variation(manifest(old_card), manifest(new_card))}
    assert rows["sigma_mismatch_ra"].status == "OUTSIDE BAND" and "outside the old release's 95 % interval" in \
        rows["sigma_mismatch_ra"].note
    assert rows["sigma_global_ra"].status == "within band"
    assert rows["correlation ra-tmr0"].status == "OUTSIDE BAND"
    assert rows["sigma_global_tmr0"].status == "identical"
    plain = {"parameters": {k: {"value": v} for k, v in card.values.items()}}
    assert compare_variation(plain, plain) == []


def test_bad_wafer_folder_exits_2_and_writes_nothing(tmp_path, capsys):
    from compactgen.cli import main

    folder = tmp_path / "wafer"
    folder.mkdir()
    (folder / "devices.csv").write_text("device,die_x [mm],die_y [mm],diameter [nm]\nA1,0,0,35\nA2,0,zero,35\n")
    (folder / "rv.csv").write_text("device,voltage [V],resistance [ohm],state\nA1,0.1,4000,P\n")
    out = tmp_path / "out"
    assert main(["wafer-stats", str(CARD), str(folder), "-o", str(out), "--no-mc"]) == 2
    assert "devices.csv, line 3, column 'die_y': 'zero' is not a number" in capsys.readouterr().err
    assert not out.exists()
