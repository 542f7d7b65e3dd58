"""Releases: immutable bundles, integrity checks, comparison verdicts, golden manifest and report.

Three real bench-suite runs (both simulators) serve the whole module: release 1.0.0 of the demo
card, the same card released again (byte-identity), and a changed card (the regression to be
caught).  Variants (tampered or interface-changed bundles, an interrupted release) are derived
from these by copying and editing files, or by reusing a suite result already computed.
"""
from __future__ import annotations

import copy
import dataclasses
import hashlib
import json
import shutil
import stat
from pathlib import Path

import numpy as np
import pytest

from compactgen.model.card import load_card
from compactgen.cli import main
from compactgen.errors import InputError, ReleaseError
from compactgen.jobs.release import bundle as bundle_mod
from compactgen.jobs.release.bundle import FORMAT, MANIFEST, OLD_MANIFEST, VOLATILE, ReleaseRefused, check_bundle, interface_record, load_bundle, manifest_text, seal
from compactgen.jobs.release.changes import markdown
from compactgen.jobs.release.commands import compare_dirs, demo_edited_card, make_release, renamed_card
from compactgen.jobs.release.compare import _error, band_for, compare_curve_tables, compare_interface, fitted_names
from compactgen.jobs.release.curves import CurveTable, read_csv
from compactgen.jobs.release.semver import parse_version
from compactgen.harness.verify import run_suite

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "pmtj35_demo.toml"
pytestmark = [pytest.mark.simulator, pytest.mark.xdist_group("release")]  # one worker builds the bundles once


def _quiet(msg: str) -> None:
    pass


def _changed_card(tmp: Path) -> Path:
    """The demo card with RA 5 % higher as if re-fitted (listed in [provenance]) and the
    calibrated voltage range cut by hand: a change the comparison must catch."""
    text = EXAMPLE.read_text()
    assert 'ra = "4.0 ohm*um^2"' in text and 'v_max = "1.2 V"' in text
    text = text.replace('ra = "4.0 ohm*um^2"', 'ra = "4.2 ohm*um^2"').replace('v_max = "1.2 V"', 'v_max = "1.1 V"')
    text += ('\n[provenance]\nfitted = ["ra"]\n'
             'data = { "rv_sweep.csv" = "' + "ab" * 32 + '" }\n')
    p = tmp / "pmtj35_demo_changed.toml"
    p.write_text(text)
    return p


def _suite(card_path: Path):
    card = load_card(card_path)
    ir = card.ir()
    return run_suite(ir, card.device.benches(ir, card.values))


@pytest.fixture(scope="module")
def rel(tmp_path_factory):
    """Bundles shared by the module (three real suite runs)."""
    from conftest import needs

    needs("ngspice", "vacask", "openvaf", "ld")
    root = tmp_path_factory.mktemp("releases")
    v1 = make_release(EXAMPLE, "1.0.0", root / "a", progress=_quiet)
    v1b = make_release(EXAMPLE, "1.0.0", root / "b", progress=_quiet)
    v2_card = _changed_card(root)
    v2_suite = _suite(v2_card)
    return dict(root=root, v1=v1, v1b=v1b, v2_card=v2_card, v2_suite=v2_suite)


@pytest.fixture(scope="module")
def v2(rel):
    """1.1.0 of the changed card against 1.0.0: refused first, then released with a reason."""
    root = rel["root"] / "a"
    with pytest.raises(ReleaseRefused) as refused:
        make_release(rel["v2_card"], "1.1.0", root, against=rel["v1"].path, suite=rel["v2_suite"], progress=_quiet)
    leftovers = sorted(p.name for p in root.iterdir())
    out = make_release(rel["v2_card"], "1.1.0", root, against=rel["v1"].path, suite=rel["v2_suite"],
                       accept="RA re-fitted on new data; v_max cut to the measured range", progress=_quiet)
    return dict(refused=refused.value, leftovers=leftovers, out=out)


def _writable_copy(src: Path, dst: Path) -> Path:
    shutil.copytree(src, dst)
    for p in [dst, *dst.rglob("*")]:
        p.chmod(p.stat().st_mode | stat.S_IWUSR)
    return dst


# ---- versions (no simulator) -------------------------------------------------------------------
@pytest.mark.parametrize("text, why", [
    ("1.0", "not 3"), ("v1.0.0", "starts with a letter"), ("01.0.0", "leading zero"),
    ("1.0.0-", "pre-release identifier ''"), ("1.0.0-01", "leading zero"), ("1.0.x", "PATCH 'x'"),
    ("1.0.0+", "build identifier ''"), ("1.0.0-a_b", "pre-release identifier 'a_b'"), (" 1.0.0", "spaces"),
])
def test_invalid_versions_are_refused_with_the_reason(text, why):
    # rules: Semantic Versioning 2.0.0, items 2, 9, 10 (T. Preston-Werner, semver.org)
    with pytest.raises(InputError, match="semantic version") as exc:
        parse_version(text)
    assert why in str(exc.value)


def test_version_precedence_follows_the_specification():
    # the ordered example of Semantic Versioning 2.0.0, item 11 (semver.org)
    chain = ["1.0.0-alpha", "1.0.0-alpha.1", "1.0.0-alpha.beta", "1.0.0-beta", "1.0.0-beta.2", "1.0.0-beta.11",
             "1.0.0-rc.1", "1.0.0", "2.0.0", "2.1.0", "2.1.1"]
    versions = [parse_version(v) for v in chain]
    assert all(a < b for a, b in zip(versions, versions[1:]))
    assert sorted(reversed(versions)) == versions
    assert parse_version("1.0.0+20130313144700") == parse_version("1.0.0")  # build metadata ignored (item 10)
    assert str(parse_version("1.0.0-beta.11+exp.sha.5114f85")) == "1.0.0-beta.11+exp.sha.5114f85"


def test_cli_refuses_a_bad_version_before_any_work(tmp_path, capsys):
    assert main(["release", str(EXAMPLE), "1.0", "-o", str(tmp_path / "r")]) == 2
    err = capsys.readouterr().err
    assert "release VERSION '1.0'" in err and "not 3" in err
    assert not (tmp_path / "r").exists()


def test_release_version_is_the_argument_after_the_card(tmp_path, capsys):
    # `--version` is the program's own option (it prints compactgen's version), not the release's
    for argv in (["--version", "1.0.0"], ["1.0.0", "--version", "1.0.0"], []):
        assert main(["release", str(EXAMPLE), *argv, "-o", str(tmp_path / "r")]) == 2
        assert f"`compactgen release {EXAMPLE} 1.2.0 -o RELEASES`" in capsys.readouterr().err
    assert not (tmp_path / "r").exists()


# ---- comparison pieces (no simulator) ------------------------------------------------------------
def test_interface_breaks_are_flagged_and_additions_are_not():
    base = json.loads(json.dumps(interface_record(load_card(EXAMPLE).ir())))
    assert compare_interface(base, copy.deepcopy(base)) == []
    new = copy.deepcopy(base)
    new["ports"] = list(reversed(new["ports"]))
    new["parameters"] = [p for p in new["parameters"] if p["name"] != "xi_fl"]
    for p in new["parameters"]:
        if p["name"] == "eta":
            p["name"] = "eta_stt"
        if p["name"] == "state0":
            p["default"] = -1.0
    new["parameters"].append({"name": "r_series", "unit": "ohm", "kind": "model", "default": 0.0})
    new["conventions"][2] = new["conventions"][2].replace("toward the parallel", "toward the antiparallel")
    new["lib_sections"] = [s for s in new["lib_sections"] if s != "ss"] + ["corner_x"]
    new["range_output"]["name"] = "stress"
    changes = {c.item: c for c in compare_interface(base, new)}
    assert changes["port order"].breaking and changes["port order"].new == "b t"
    assert changes["parameter xi_fl"].breaking and "removed" in changes["parameter xi_fl"].new
    assert changes["parameter eta"].breaking and "eta_stt" in changes["parameter eta"].note  # renamed?
    assert changes["default of instance parameter state0"].breaking
    assert changes["conventions (sign, ports, states)"].breaking
    assert not changes["parameter r_series"].breaking  # an addition leaves netlists working
    assert changes[".lib section ss"].breaking and not changes[".lib section corner_x"].breaking
    assert changes["range output"].breaking and changes["range output"].new == "stress [1]"


def test_renames_compactgen_made_are_named_as_such_not_guessed():
    """A bundle from before the renames (kb, sg_/sl_/zg_/zl_) against one after: every removed
    parameter is matched with its documented new name (difflib alone took sl_ra for sigma_global_ra)."""
    new = json.loads(json.dumps(interface_record(load_card(EXAMPLE).ir())))
    old = copy.deepcopy(new)
    back = {"kv": "kb", "sigma_global_": "sg_", "sigma_mismatch_": "sl_", "draw_global_": "zg_", "draw_mismatch_": "zl_"}
    for prm in old["parameters"]:
        for now, before in back.items():
            if prm["name"] == now or (now.endswith("_") and prm["name"].startswith(now)):
                prm["name"] = before + prm["name"][len(now):] if now.endswith("_") else before
    changes = {c.item: c for c in compare_interface(old, new)}
    removed = {k: c for k, c in changes.items() if c.new.startswith("removed")}
    added = {k: c for k, c in changes.items() if c.new.startswith("added")}
    assert len(removed) == len(added) >= 5 and len(removed) + len(added) == len(changes)
    assert all(c.breaking and "renamed to" in c.note and "by compactgen" in c.note for c in removed.values())
    assert "'sigma_mismatch_ra'" in changes["parameter sl_ra"].note and "by compactgen" in changes["parameter sl_ra"].note
    assert "'kv'" in changes["parameter kb"].note


def test_interface_record_names_the_range_output_with_unit_and_description():
    ir = load_card(EXAMPLE).ir()
    rec = interface_record(ir)
    assert rec["range_output"] == {"name": "drive_ratio", "unit": "1", "description": ir.range_output().desc}
    assert "calibrated limit" in rec["range_output"]["description"]
    assert "drive_ratio" not in [o["name"] for o in rec["outputs"]]  # listed once, as the range output
    old = copy.deepcopy(rec)
    del old["range_output"]  # a bundle made before the record held it: nothing to compare
    assert compare_interface(old, rec) == []


def test_bands_come_from_one_table_with_reasons():
    assert band_for("r_p", "ohm").rtol == 0.01
    assert band_for("switching time", "s").rtol == 0.05
    assert band_for("i_c0", "A").label == "current / threshold"
    assert band_for("tmr_read", "1").label == "TMR ratio"
    assert band_for("final m_z", "1").atol == 0.02
    retention = band_for("retention", "s")  # log scale: a factor 2 either way is one band
    assert retention.log and _error(1e3, 2e3, retention) == pytest.approx(1.0) == _error(1e3, 500.0, retention)
    assert all(b.band.reason for b in __import__("compactgen.jobs.release.compare", fromlist=["x"]).FIGURE_BANDS)


def test_curves_compare_on_the_common_range():
    x_old = np.linspace(0.0, 1e-9, 101)
    x_new = np.linspace(0.0, 1.2e-9, 241)
    old = CurveTable("time", "s", x_old, {"reference:mz": ("1", np.tanh(x_old / 3e-10))})
    same = CurveTable("time", "s", x_new, {"reference:mz": ("1", np.tanh(x_new / 3e-10))})
    row = compare_curve_tables("b", old, same)
    assert row.status == "within band" and row.error < 0.05 and "over [0, 1e-09] s" in row.note
    moved = CurveTable("time", "s", x_old, {"reference:mz": ("1", np.tanh(x_old / 3e-10) + 0.03)})
    row = compare_curve_tables("b", old, moved)
    assert row.status == "OUTSIDE BAND" and row.error == pytest.approx(1.5, rel=1e-9)  # 0.03 against 0.02


def test_fixed_and_kept_parameters_are_not_taken_for_fitted_ones(tmp_path):
    # `compactgen fit` lists the parameters it held at their card values as `fixed`; cards fitted
    # by earlier versions say `kept`: both load, and neither list counts as re-fitted
    for key in ("fixed", "kept"):
        card_path = tmp_path / f"{key}.toml"
        card_path.write_text(EXAMPLE.read_text() + f'\n[provenance]\nfree = ["ra"]\n{key} = ["alpha", "ms"]\n')
        card = load_card(card_path)
        assert card.provenance[key] == ["alpha", "ms"]
        assert fitted_names({"provenance": card.provenance, "parameters": {}}) == {"ra"}


def test_demo_card_edit(tmp_path):
    v2 = load_card(demo_edited_card(EXAMPLE, tmp_path / "v2.toml", ra_factor=1.1, tmr0=1.42))
    v1 = load_card(EXAMPLE)
    assert v2.values["ra"] == pytest.approx(1.1 * v1.values["ra"], rel=1e-12)
    assert v2.values["tmr0"] == 1.42
    assert {k for k in v1.values if v1.values[k] != v2.values[k]} == {"ra", "tmr0"}


def test_renamed_card_keeps_values_uncertainty_and_provenance(tmp_path):
    src = tmp_path / "fitted.toml"
    src.write_text(EXAMPLE.read_text().replace('name = "pmtj35_demo"', 'name = "pmtj35_fit"')
                   + '\n[uncertainty]\nra = "0.01 ohm*um^2"\n\n[provenance]\nfree = ["ra"]\n')
    card = load_card(renamed_card(src, "pmtj35_demo", tmp_path / "renamed.toml"))
    fitted = load_card(src)
    assert card.name == "pmtj35_demo" and card.values == fitted.values
    assert card.uncertainty == fitted.uncertainty and card.provenance == {"free": ["ra"]}


# ---- releases (simulators) ----------------------------------------------------------------------
def test_bundle_holds_everything_and_checks_out(rel):
    path = rel["v1"].path
    assert path.name == "pmtj35_demo-1.0.0"
    names = {p.relative_to(path).as_posix() for p in path.rglob("*") if p.is_file()}
    assert {"pmtj35_demo.card.toml", "pmtj35_demo.va", "pmtj35_demo.lib", "pmtj35_demo.md", "verify.html",
            "release.json"} <= names
    assert "manifest.json" not in names  # the build's manifest (another schema) is not bundled
    m = json.loads((path / MANIFEST).read_text())
    assert m["format"] == FORMAT == "compactgen-release/1"
    assert set(m["benches"]) == {n[len("curves/"):-4] for n in names if n.startswith("curves/")}
    assert (path / "pmtj35_demo.card.toml").read_text() == EXAMPLE.read_text()  # the card, frozen as given
    assert check_bundle(path).ok
    assert not any(p.name.startswith(".") for p in path.parent.iterdir())  # no staging left


def test_curve_files_carry_units_and_agree_with_the_bench_figures(rel):
    path = rel["v1"].path
    m = json.loads((path / MANIFEST).read_text())
    text = (path / "curves" / "rv_parallel.csv").read_text()
    header = [ln for ln in text.splitlines() if not ln.startswith("#")][0]
    assert header.startswith("voltage_t [V],") and "ngspice:current_t [A]" in header and "vacask:mz [1]" in header
    tab = read_csv(text, "rv_parallel.csv")
    k = int(np.argmin(np.abs(tab.x - 0.1)))
    for src in ("reference", "ngspice", "ngspice-osdi", "vacask"):
        r = tab.x[k] / tab.values(f"{src}:current_t")[k]
        assert r == pytest.approx(m["benches"]["rv_parallel"]["metrics"]["R at +0.10 V"][src], rel=1e-8)
    wave = read_csv((path / "curves" / "write_to_p_2ic0.csv").read_text(), "w.csv")
    assert wave.grid == "time" and wave.unit("reference:mz") == "1"
    assert wave.values("reference:mz")[0] < -0.99 and wave.values("vacask:mz")[-1] > 0.98


def test_rebuild_is_byte_identical_and_compares_clean(rel, capsys):
    a, b = rel["v1"].path, rel["v1b"].path
    files = sorted(p.relative_to(a).as_posix() for p in a.rglob("*") if p.is_file())
    assert files == sorted(p.relative_to(b).as_posix() for p in b.rglob("*") if p.is_file())
    differ = [f for f in files if (a / f).read_bytes() != (b / f).read_bytes()]
    assert differ == [MANIFEST]  # only the date (and so the manifest's own hash) differs
    ma, mb = (json.loads((p / MANIFEST).read_text()) for p in (a, b))
    assert {k: v for k, v in ma.items() if k not in VOLATILE} == {k: v for k, v in mb.items() if k not in VOLATILE}
    c = compare_dirs(a, b)
    assert c.clean and not c.params and not c.interface
    assert {r.status for r in c.figures + c.metrics} == {"identical"} == {r.status for r in c.curves}
    assert "same" not in markdown(c)  # one word for one verdict
    assert main(["compare", str(a), str(b)]) == 0
    assert "PASS" in capsys.readouterr().out


def test_existing_version_is_never_overwritten(rel):
    before = (rel["v1"].path / MANIFEST).read_bytes()
    with pytest.raises(ReleaseError, match="exists already; a release is never overwritten"):
        make_release(EXAMPLE, "1.0.0", rel["v1"].path.parent, progress=_quiet)
    assert (rel["v1"].path / MANIFEST).read_bytes() == before


def test_against_an_older_or_equal_version_is_refused(rel, tmp_path):
    with pytest.raises(InputError, match="not newer than the release compared against"):
        make_release(EXAMPLE, "1.0.0-rc.1", tmp_path, against=rel["v1"].path, progress=_quiet)


def test_a_model_failing_its_benches_is_not_released(rel, tmp_path):
    suite = copy.copy(rel["v1"].suite)
    run = suite.runs[0]
    bad = dataclasses.replace(run.rows[0], passed=False)
    suite.runs = [dataclasses.replace(run, rows=[bad] + run.rows[1:])] + suite.runs[1:]
    with pytest.raises(ReleaseRefused, match="a model that fails its benches is not released"):
        make_release(EXAMPLE, "2.0.0", tmp_path, suite=suite, progress=_quiet)
    assert not (tmp_path / "pmtj35_demo-2.0.0").exists()


def test_changed_parameter_is_caught_with_the_right_figures(rel, v2):
    refused = str(v2["refused"])
    assert "refused" in refused and "--accept" in refused
    assert "pmtj35_demo-1.1.0" not in v2["leftovers"]  # a refused release leaves no bundle ...
    assert "pmtj35_demo-1.1.0.refused.html" in v2["leftovers"]  # ... but the report to decide on
    c = v2["out"].comparison
    outside = {r.name for r in c.outside if r.group == "key figure"}
    assert outside == {"r_p", "r_ap"}  # RA scales both resistances; TMR, I_c0, Delta unchanged
    assert {r.name: r.status for r in c.figures}["tmr_read"] == "identical"
    r_p = next(r for r in c.figures if r.name == "r_p")
    assert r_p.rel == pytest.approx(0.05, rel=1e-9)  # R_P = RA / area, RA +5 %
    assert {f"{r.group}: {r.name}" for r in c.outside} >= {"rv_parallel: R at +0.10 V", "rv_antiparallel: R at +0.10 V"}
    assert not c.breaks
    origins = {p.name: p.origin for p in c.params}
    assert origins == {"ra": "re-fit", "v_max": "hand edit"}


def test_accepted_release_records_the_reason(rel, v2):
    path = v2["out"].path
    assert check_bundle(path).ok
    m = json.loads((path / MANIFEST).read_text())
    reason = "RA re-fitted on new data; v_max cut to the measured range"
    assert m["comparison"]["accepted"] == reason
    assert m["comparison"]["against_manifest_sha256"] == json.loads((rel["v1"].path / MANIFEST).read_text())[
        "manifest_sha256"]
    assert m["data_sha256"] == {"data.rv_sweep.csv": "ab" * 32}
    assert fitted_names(m) == {"ra"}
    assert reason in (path / "changes.md").read_text() and reason in (path / "changes.html").read_text()
    assert not (path.parent / "pmtj35_demo-1.1.0.refused.html").exists()
    assert main(["compare", str(rel["v1"].path), str(path)]) == 1  # not accepted on this command line
    assert main(["compare", str(rel["v1"].path), str(path), "--accept", reason]) == 0


def test_an_older_bundle_with_manifest_json_is_still_read(rel, tmp_path, capsys):
    # bundles made before the release manifest was renamed hold it as manifest.json
    old = _writable_copy(rel["v1b"].path, tmp_path / "old" / "pmtj35_demo-1.0.0")
    (old / MANIFEST).rename(old / OLD_MANIFEST)
    result = check_bundle(old)
    assert result.ok and result.manifest_name == OLD_MANIFEST and not result.unexpected
    assert result.digest == hashlib.sha256((old / OLD_MANIFEST).read_bytes()).hexdigest()
    assert f"(sha256 of {OLD_MANIFEST})" in result.text()
    assert load_bundle(old).manifest["version"] == "1.0.0"
    # a new release compared against it is written with the new name and keeps its digest
    out = make_release(EXAMPLE, "1.0.1", tmp_path / "new", against=old, suite=rel["v1"].suite, progress=_quiet)
    assert (out.path / MANIFEST).is_file() and not (out.path / OLD_MANIFEST).exists()
    assert out.comparison.clean and out.manifest["comparison"]["against_digest"] == result.digest
    assert main(["check-release", str(out.path), "--against", str(old)]) == 0
    assert "unchanged since that release" in capsys.readouterr().out
    assert main(["compare", str(old), str(out.path)]) == 0


def test_interface_break_fails_the_comparison(rel, tmp_path):
    # a bundle whose model has its ports swapped and a parameter dropped (as a later generator
    # might produce): the manifest's interface record is what the comparison reads
    broken = _writable_copy(rel["v1b"].path, tmp_path / "pmtj35_demo-1.0.1")
    m = json.loads((broken / MANIFEST).read_text())
    m["version"] = "1.0.1"
    m["interface"]["ports"] = ["b", "t"]
    m["interface"]["parameters"] = [p for p in m["interface"]["parameters"] if p["name"] != "xi_fl"]
    (broken / MANIFEST).write_text(manifest_text(seal(m)))
    c = compare_dirs(rel["v1"].path, broken)
    assert {b.item for b in c.breaks} == {"port order", "parameter xi_fl"}
    assert not c.passed and "interface break" in c.verdict()
    assert main(["compare", str(rel["v1"].path), str(broken)]) == 1


def test_tampering_is_detected(rel, tmp_path, capsys):
    t = _writable_copy(rel["v1"].path, tmp_path / "tampered")
    with open(t / "pmtj35_demo.lib", "a") as fh:
        fh.write("* harmless-looking comment\n")
    (t / "curves" / "rv_parallel.csv").unlink()
    (t / "notes.txt").write_text("added later")
    result = check_bundle(t)
    assert (result.changed, result.missing, result.unexpected) == (
        ["pmtj35_demo.lib"], ["curves/rv_parallel.csv"], ["notes.txt"])
    assert main(["check-release", str(t)]) == 1
    out = capsys.readouterr().out
    assert "NOT INTACT" in out and "changed:    pmtj35_demo.lib" in out
    with pytest.raises(ReleaseError, match="must stay as released"):
        load_bundle(t)
    m = _writable_copy(rel["v1"].path, tmp_path / "edited-manifest")
    data = json.loads((m / MANIFEST).read_text())
    data["figures"]["r_p"]["value"] *= 1.001
    (m / MANIFEST).write_text(json.dumps(data, indent=2, sort_keys=True))
    assert "does not match its own manifest_sha256" in check_bundle(m).manifest_problem
    assert main(["check-release", str(rel["v1"].path)]) == 0


def test_interrupted_release_leaves_nothing_and_rerun_succeeds(rel, monkeypatch):
    root = rel["root"] / "interrupted"
    real = bundle_mod._write_one
    calls = []

    def failing(path, content):
        calls.append(path)
        if len(calls) == 4:
            raise OSError("disk full (simulated)")
        real(path, content)

    monkeypatch.setattr(bundle_mod, "_write_one", failing)
    with pytest.raises(OSError, match="simulated"):
        make_release(rel["v2_card"], "1.1.0", root, suite=rel["v2_suite"], progress=_quiet)
    assert len(calls) == 4
    assert list(root.iterdir()) == []  # neither the bundle nor its staging folder
    monkeypatch.setattr(bundle_mod, "_write_one", real)
    out = make_release(rel["v2_card"], "1.1.0", root, suite=rel["v2_suite"], progress=_quiet)
    assert check_bundle(out.path).ok and [p.name for p in root.iterdir()] == ["pmtj35_demo-1.1.0"]


# ---- golden files -------------------------------------------------------------------------------
def _golden_manifest(path: Path) -> dict:
    """The manifest without volatile fields (date, own hash), with the file hashes and the
    simulators' bench values replaced by placeholders, and floats to 6 significant digits.
    Simulator values carry round-off (e.g. 8e-15 where the reference has 0) that moves with any
    change of printing or solver; the benches' tolerances check them, not this file.  Files
    holding simulator output change with them, and the model files' text is pinned by the card
    hash and the model digest already."""
    m = json.loads((path / MANIFEST).read_text())
    for k in VOLATILE:
        m.pop(k)
    assert all(len(v) == 64 for v in m["files"].values())
    m["files"] = {k: "(sha256)" for k in m["files"]}
    for bench in m["benches"].values():
        for metric in bench["metrics"].values():
            for sim in m["simulators"]:
                assert isinstance(metric[sim], float) and metric["passed"]
                metric[sim] = "(simulated)"

    def r(x):
        if isinstance(x, float):
            return float(f"{x:.6g}")
        if isinstance(x, dict):
            return {k: r(v) for k, v in x.items()}
        if isinstance(x, list):
            return [r(v) for v in x]
        return x

    return r(m)


def test_golden_manifest(rel, data_regression):
    data_regression.check(_golden_manifest(rel["v1"].path))


def test_golden_comparison_report(rel, v2, file_regression):
    """The golden holds only what is deterministic: the report of the reference solutions'
    comparison.  Simulator results differ in their last digits from run to run (which source shows
    the largest change, 0.045 or 0.044 of a band); they are checked against their tolerance here:
    with the simulators included, every figure and curve set is inside or outside its band just as
    the reference's is (a simulator's round-off can only turn "identical" into "within band")."""
    full = v2["out"].comparison
    assert full.sources == ["reference", "ngspice", "ngspice-osdi", "vacask"]
    assert (v2["out"].path / "changes.md").read_text() == markdown(full)  # the bundle's report is the full one
    reason = "RA re-fitted on new data; v_max cut to the measured range"
    ref = compare_dirs(rel["v1"].path, v2["out"].path, accept=reason, simulators=())
    assert ref.sources == ["reference"]
    # the same verdict per figure (the order of the rows may differ: it sorts by the largest change)
    assert sorted((r.group, r.name, r.ok) for r in full.metrics) == sorted((r.group, r.name, r.ok) for r in ref.metrics)
    assert sorted((c.bench, c.ok) for c in full.curves) == sorted((c.bench, c.ok) for c in ref.curves)
    assert full.verdict() == ref.verdict()
    by_name = {(r.group, r.name): r for r in ref.metrics}
    for r_full in full.metrics:  # the reference is one of the sources compared
        r_ref = by_name[(r_full.group, r_full.name)]
        assert not (r_full.error < r_ref.error)  # NaN (a figure one version lacks) on both sides
    file_regression.check(markdown(ref), extension=".md")
