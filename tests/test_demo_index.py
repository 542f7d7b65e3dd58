"""`compactgen demo`: the start page index.html links every file the demo wrote, one line each, and
is written last (the slow steps -- verification, fits, releases -- are replaced by stand-ins that
write files of the same names; the build is real)."""
from __future__ import annotations

import re
import shutil
from types import SimpleNamespace

import pytest

from compactgen import cli
from compactgen.errors import ReleaseError

from helpers import EXAMPLES


@pytest.fixture
def quick_demo(tmp_path, monkeypatch):
    examples = tmp_path / "examples"
    examples.mkdir()
    shutil.copyfile(EXAMPLES / "sot50_demo.toml", examples / "sot50_demo.toml")
    monkeypatch.setattr(cli, "EXAMPLES", examples)
    monkeypatch.setenv("COMPACTGEN_DEMO_THERMAL", "0")

    def verify(card, sims=None, report=None, title=""):
        cli.Path(report).write_text("<html>verification</html>")
        return SimpleNamespace(passed=True)

    def fits(out):
        (out / "fit").mkdir(parents=True, exist_ok=True)
        (out / "fit" / "fit_report.html").write_text("<html>fit</html>")
        return []

    def release(out, runs):
        bundle = out / "releases" / "sot50_demo-1.1.0"
        (bundle / "curves").mkdir(parents=True)
        for name in ("release.json", "changes.html", "changes.md", "verify.html", "sot50_demo.va"):
            (bundle / name).write_text("x")
        for bench in ("read_parallel", "line_r"):
            (bundle / "curves" / f"{bench}.csv").write_text("x")
        (out / "releases" / ".sot50_demo-2.0.0.partial-1-x").mkdir()  # a staging folder is not listed
        return True

    monkeypatch.setattr(cli, "verify_card", verify)
    monkeypatch.setattr(cli, "_fitted_demo", fits)
    def wafer(out):
        (out / "wafer").mkdir(parents=True, exist_ok=True)
        for name in ("wafer_report.html", "device_fits.csv", "pmtj35_demo_wafer.toml"):
            (out / "wafer" / name).write_text("x")
        return True

    monkeypatch.setattr(cli, "_demo_release", release)
    monkeypatch.setattr(cli, "_demo_wafer", wafer)
    return tmp_path / "demo"


def test_index_links_every_file_with_what_it_is(quick_demo):
    out = quick_demo
    assert cli.main(["demo", "-o", str(out)]) == 0
    page = (out / "index.html").read_text()
    links = dict(re.findall(r"<li><a href='([^']+)'>[^<]+</a>: ([^<]+)</li>", page))
    files = {p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file() and ".partial-" not in str(p)}
    curves = "releases/sot50_demo-1.1.0/curves/"
    assert set(links) == (files - {"index.html"} - {f for f in files if f.startswith(curves)}) | {curves}
    assert links[curves].startswith("2 bench curve files")
    assert links["sot50_demo/sot50_demo.va"] == "Verilog-A module"
    assert links["sot50_demo/manifest.json"].startswith("build manifest")
    assert links["releases/sot50_demo-1.1.0/release.json"].startswith("release manifest")
    assert links["releases/sot50_demo-1.1.0/sot50_demo.va"] == "Verilog-A module"
    assert links["fit/fit_report.html"].startswith("fit report")
    assert links["wafer/wafer_report.html"].startswith("wafer statistics")
    assert links["sot50_demo.toml"].startswith("example card")
    assert "written by the demo" not in links.values()  # every file the demo writes is described
    assert "every bench passed" in page
    # a bundle made before the release manifest was renamed holds it as manifest.json
    assert cli._describe_demo_file(cli.Path("releases/x-1.0.0/manifest.json")).startswith("release manifest")


def test_a_failed_demo_leaves_no_index(quick_demo, monkeypatch):
    out = quick_demo
    out.mkdir()
    (out / "index.html").write_text("index of an earlier, complete run")

    def broken(out_dir, runs):
        raise ReleaseError("disk full (stand-in)")

    monkeypatch.setattr(cli, "_demo_release", broken)
    assert cli.main(["demo", "-o", str(out)]) == 2
    assert not (out / "index.html").exists()  # no page describing files this run did not finish
    assert (out / "sot50_demo" / "verify.html").is_file()  # the steps before the failure did run
