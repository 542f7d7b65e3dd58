"""The sot-mtj and dw-mtj kinds end to end: rendered models (golden files), both Verilog-A front
ends, starter cards, and clear errors on bad input."""
from __future__ import annotations

from pathlib import Path

import pytest

from compactgen.targets import render
from compactgen.model.card import load_card, parse_card, starter_card
from compactgen.cli import main
from compactgen.errors import RangeError
from compactgen.sim import admsxml_check, compile_va

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
CARDS = {"sot-mtj": EXAMPLES / "sot50_demo.toml", "dw-mtj": EXAMPLES / "dwtrack_demo.toml"}


@pytest.fixture(scope="module")
def irs():
    return {kind: load_card(path).ir() for kind, path in CARDS.items()}


@pytest.mark.parametrize("kind", sorted(CARDS))
def test_rendered_verilog_a_golden(irs, kind, file_regression):
    file_regression.check(render.verilog_a(irs[kind]), extension=".va", basename=f"golden_{kind.replace('-', '_')}")


@pytest.mark.parametrize("kind", sorted(CARDS))
def test_rendered_ngspice_golden(irs, kind, file_regression):
    file_regression.check(render.ngspice(irs[kind]), extension=".lib", basename=f"golden_{kind.replace('-', '_')}")


@pytest.mark.simulator
@pytest.mark.parametrize("kind", sorted(CARDS))
def test_both_verilog_a_front_ends_accept_the_model(irs, kind, tmp_path, openvaf, admsxml):
    ir = irs[kind]
    va = tmp_path / f"{ir.name}.va"
    va.write_text(render.verilog_a(ir))
    osdi = compile_va(va)
    assert Path(osdi).is_file() and Path(osdi).stat().st_size > 0
    admsxml_check(va)


@pytest.mark.parametrize("kind", sorted(CARDS))
def test_starter_card_is_valid(kind):
    card = parse_card(starter_card(kind), "<starter>")
    assert card.kind == kind


def card_with(kind: str, **changes: str) -> str:
    """The example card with some [parameters] lines replaced (values as they appear in TOML)."""
    lines = CARDS[kind].read_text().splitlines()
    out = []
    for line in lines:
        key = line.split("=", 1)[0].strip()
        out.append(f"{key} = {changes.pop(key)}" if key in changes and not line.startswith("#") else line)
    assert not changes, f"keys not in the card: {changes}"
    return "\n".join(out) + "\n"


@pytest.mark.parametrize("kind, changes, words", [
    ("dw-mtj", {"track_length": '"80 nm"'}, ["track_length", "mtj_length"]),  # a track shorter than the junction
    ("dw-mtj", {"mtj_start": '"450 nm"'}, ["mtj_start = 450 nm + mtj_length = ", "track_length = "]),  # junction beyond the end
    ("dw-mtj", {"a_ex": '"100 pJ/m"', "track_length": '"120 nm"', "mtj_start": '"10 nm"', "mtj_length": '"50 nm"'},
     ["track_length", "wall widths", "a_ex"]),  # a wall too wide for the track
    ("dw-mtj", {"wall0": '"600 nm"'}, ["wall0", "track_length"]),
    ("sot-mtj", {"line_width": '"40 nm"'}, ["line_width", "diameter"]),
    ("sot-mtj", {"theta_sh": "0.0"}, ["theta_sh"]),
    ("sot-mtj", {"hx": '"400 mT"'}, ["hx", "H_k,eff"]),
])
def test_bad_geometry_gives_a_clear_error(tmp_path, kind, changes, words):
    bad = tmp_path / "bad.toml"
    bad.write_text(card_with(kind, **changes))
    with pytest.raises(RangeError) as err:
        load_card(bad)
    msg = str(err.value)
    assert str(bad) in msg
    for w in words:
        assert w in msg


def test_unit_and_range_errors_name_file_and_key(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text(card_with("dw-mtj", pin_pitch='"25"'))
    out = tmp_path / "out"
    assert main(["build", str(bad), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert str(bad) in err and "pin_pitch" in err
    assert not out.exists()  # nothing half-written
    bad.write_text(card_with("sot-mtj", t_hm='"200 nm"'))
    assert main(["build", str(bad), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert "t_hm" in err and "nm" in err and not out.exists()


def test_build_writes_the_datasheet_with_the_internal_node(tmp_path):
    out = tmp_path / "dw"
    assert main(["build", str(CARDS["dw-mtj"]), "-o", str(out)]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert names == ["dwtrack_demo.card.toml", "dwtrack_demo.lib", "dwtrack_demo.md", "dwtrack_demo.osdi",
                     "dwtrack_demo.osdi.lib", "dwtrack_demo.va", "manifest.json"]
    sheet = (out / "dwtrack_demo.md").read_text()
    assert "`mid`" in sheet and "`xw`" in sheet and "v_dmi" in sheet


def test_no_figure_is_named_like_a_parameter_of_any_kind():
    """A figure named like a parameter (dw-mtj's rest wall angle was `phi0`, the macrospin kinds'
    instance parameter) reads in the datasheet and manifest as that parameter's value."""
    from compactgen.devices import get_kind, kinds

    params = {name: kind for kind in kinds() for name in get_kind(kind).table().names()}
    for kind in sorted(kinds()):
        figures = [f.name for f in parse_card(starter_card(kind)).ir().figures]
        assert figures and len(figures) == len(set(figures))
        clashes = {f: params[f] for f in figures if f in params}
        assert not clashes, f"{kind}: figure(s) named like a parameter (of kind): {clashes}"
    dw = [f.name for f in parse_card(starter_card("dw-mtj")).ir().figures]
    assert "phi_wall_rest" in dw and "phi0" not in dw
