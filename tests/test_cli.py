"""The command line: init/build round trip and every bad-input path (exit 2, one line, no output)."""
from __future__ import annotations

import contextlib
import io
import json
import subprocess
import sys

import pytest

from compactgen.jobs.build import BUILD_FORMAT, BUILD_MANIFEST
from compactgen.model.card import load_card, starter_card
from compactgen.cli import main
from compactgen.jobs.release.bundle import FORMAT as RELEASE_FORMAT

from helpers import EXAMPLES


def run(*args: str) -> tuple[int, str]:
    """Run the command in this process; return (exit status, what it printed on stderr)."""
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(list(args))
    return code, err.getvalue()


def test_console_script_runs():
    proc = subprocess.run([sys.executable, "-m", "compactgen.cli", "--version"], capture_output=True, text=True)
    assert proc.returncode == 0 and proc.stdout.startswith("compactgen ")


def test_init_then_build(tmp_path):
    card = tmp_path / "card.toml"
    assert main(["init", "stt-mtj", "-o", str(card), "--name", "mydev"]) == 0
    assert load_card(card).name == "mydev"
    out = tmp_path / "out"
    assert main(["build", str(card), "-o", str(out)]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["manifest.json", "mydev.card.toml", "mydev.lib", "mydev.md", "mydev.osdi", "mydev.osdi.lib",
                     "mydev.va"]
    build_manifest = json.loads((out / BUILD_MANIFEST).read_text())
    assert build_manifest["format"] == BUILD_FORMAT == "compactgen-build/1"  # not a release manifest
    assert BUILD_FORMAT != RELEASE_FORMAT and set(build_manifest["files"]) == set(names) - {
        BUILD_MANIFEST, "mydev.card.toml"}
    first = {p.name: p.read_bytes() for p in out.iterdir()}
    assert main(["build", str(card), "-o", str(out)]) == 0
    assert {p.name: p.read_bytes() for p in out.iterdir()} == first
    md = (out / "mydev.md").read_text()
    for section in ("## Cautions", "no substitute for silicon qualification", "## Ports (in order)",
                    "## Conventions", "## Parameters", "Calibrated range", "breakdown"):
        assert section in md


def test_init_refuses_to_overwrite(tmp_path):
    card = tmp_path / "card.toml"
    card.write_text("keep me")
    code, err = run("init", "stt-mtj", "-o", str(card))
    assert code == 2
    assert "exists" in err and card.read_text() == "keep me"


def test_unknown_kind(tmp_path):
    code, err = run("init", "spin-valve", "-o", str(tmp_path / "c.toml"))
    assert code == 2 and "unknown device kind 'spin-valve'" in err and "stt-mtj" in err


BASE = starter_card("stt-mtj", "bad")


@pytest.mark.parametrize("edit, message", [
    (lambda t: t.replace("[device]", "[device"), "not valid TOML"),
    (lambda t: t.replace("alpha = 0.01", "alfa = 0.01"), "unknown parameter in [parameters] 'alfa' (did you mean 'alpha'?)"),
    (lambda t: t.replace('diameter = "40.0 nm"', ""), "[parameters] diameter is missing; expected a value in (5, 1000] nm"),
    (lambda t: t.replace('ms = "1.0 MA/m"', 'ms = "3 nm"'), "[parameters] ms: '3 nm' has the wrong dimension: expected [A/m]"),
    (lambda t: t.replace('hx = "0.0 mT"', 'hx = "3 nm"'), "[parameters] hx: '3 nm' has the wrong dimension"),
    (lambda t: t.replace('diameter = "40.0 nm"', 'diameter = "2 um"'), "diameter = '2 um' is outside the allowed range (5, 1000] nm"),
    (lambda t: t.replace("tmr0 = 1.5", "tmr0 = nan"), "[parameters] tmr0: value nan [1] is not a finite number"),
    (lambda t: t.replace('t_free = "1.3 nm"', "t_free = 1.3"), "the number 1.3 has no unit"),
    # a number without a unit: the hint is in the unit the parameter's allowed range is written in
    (lambda t: t.replace('diameter = "40.0 nm"', "diameter = 35"),
     '[parameters] diameter: the number 35 has no unit; write it with a unit, e.g. "35 nm" (allowed range (5, 1000] nm)'),
    (lambda t: t.replace('diameter = "40.0 nm"', 'diameter = "35"'),
     '[parameters] diameter: \'35\' has no unit; write it with a unit, e.g. "35 nm" (allowed range (5, 1000] nm)'),
    (lambda t: t.replace('ms = "1.0 MA/m"', "ms = 1.1"), 'e.g. "1.1 MA/m" (allowed range'),
    (lambda t: t + '\n[uncertainty]\ndiameter = 2\n', '[uncertainty] diameter: the number 2 has no unit; write it with a unit, e.g. "2 nm"'),
    (lambda t: t.replace('name = "bad"', 'name = "Bad-Name"'), "[device] name = 'Bad-Name' must be lower-case"),
    (lambda t: t.replace('demag = "cylinder"', 'demag = "sphere"'), "[options] demag = 'sphere'; expected one of"),
    (lambda t: t.replace('ki = "1.3 mJ/m^2"', 'ki = "0.2 mJ/m^2"'), "must be positive (perpendicular free layer"),
])
def test_bad_card_is_one_clear_line_and_no_output(tmp_path, edit, message):
    card = tmp_path / "card.toml"
    card.write_text(edit(BASE))
    out = tmp_path / "out"
    code, err = run("build", str(card), "-o", str(out))
    assert code == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert str(card) in lines[0]
    assert message in lines[0]
    assert not out.exists()


def test_failed_build_into_existing_folder_leaves_it_as_it_was(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("x")
    card = tmp_path / "card.toml"
    card.write_text(BASE.replace("tmr0 = 1.5", "tmr0 = -1"))
    code, err = run("build", str(card), "-o", str(out))
    assert code == 2 and "tmr0" in err
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]


def test_missing_card_file(tmp_path):
    code, err = run("build", str(tmp_path / "nope.toml"), "-o", str(tmp_path / "o"))
    assert code == 2 and "no such card file" in err


def test_verify_refuses_edited_build(tmp_path):
    out = tmp_path / "out"
    assert main(["build", str(EXAMPLES / "pmtj35_demo.toml"), "-o", str(out)]) == 0
    lib = out / "pmtj35_demo.lib"
    lib.write_text(lib.read_text().replace("+ eta=", "+ eta=0.1*"))
    code, err = run("verify", str(out))
    assert code == 2 and "edited by hand" in err  # bad input: exit 2 like every other


@pytest.mark.parametrize("sim, fragment", [
    ("nonesuch", "unknown simulator 'nonesuch'; expected some of ngspice, ngspice-osdi, vacask, all, or none"),
    ("ngspice,xyce", "unknown simulator 'xyce'"),
    (",", "no simulator named"),
])
def test_verify_with_an_unknown_simulator_is_bad_input(tmp_path, sim, fragment):
    report = tmp_path / "verify.html"
    code, err = run("verify", str(EXAMPLES / "pmtj35_demo.toml"), "--sim", sim, "--report", str(report))
    assert code == 2 and fragment in err and err.count("\n") == 1
    assert not report.exists()


def test_build_into_a_file_is_bad_input(tmp_path):
    target = tmp_path / "occupied"
    target.write_text("a file, not a folder")
    code, err = run("build", str(EXAMPLES / "pmtj35_demo.toml"), "-o", str(target))
    assert code == 2 and "exists and is not a folder" in err and target.read_text() == "a file, not a folder"


@pytest.mark.parametrize("argv", [
    ["build", "{missing}.toml", "-o", "{tmp}/b"],
    ["verify", "{missing}.toml"],
    ["verify", "{example}", "--sim", "nonesuch"],
    ["release", "{example}", "not-a-version", "-o", "{tmp}/r"],
    ["range-report", "{missing}.raw"],
    ["fit", "{example}", "{missing}.csv", "-o", "{tmp}/f.toml"],
    ["compare", "{missing}", "{missing}2"],
    ["check-release", "{missing}"],
    ["init", "no-such-kind", "-o", "{tmp}/i.toml"],
])
def test_bad_input_exits_2_in_every_command(argv, tmp_path, capsys):
    """Bad input (a missing file, an unknown simulator or kind, a malformed version) is exit 2 in every
    command, with a message naming what was wrong; exit 1 is kept for a check that ran and failed."""
    fill = {"missing": str(tmp_path / "nothere"), "tmp": str(tmp_path), "example": str(EXAMPLES / "pmtj35_demo.toml")}
    args = [a.format(**fill) for a in argv]
    try:
        status = main(args)
    except SystemExit as exc:  # argparse's own refusals
        status = exc.code
    assert status == 2, (args, capsys.readouterr())
    err = capsys.readouterr().err
    assert "error" in err and ("nothere" in err or "nonesuch" in err or "not-a-version" in err
                               or "no-such-kind" in err), err
