"""Card checks across parameters: the documented ranges are reachable, and a refused
combination is reported in card terms (values with card units and the allowed relation)."""
from __future__ import annotations

import codecs
import contextlib
import io
import math
import re

import pytest

from compactgen.model.card import load_card, parse_card, starter_card
from compactgen.cli import main
from compactgen.model.constants import MU0
from compactgen.errors import CardError, RenamedInCard
from compactgen.model.params import RESERVED, reserved_reason
from compactgen.model.evaluate import figures

from helpers import card_with


def run(*args: str) -> tuple[int, str]:
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(list(args))
    return code, err.getvalue()


def _polarisation(tmr: float) -> float:
    """Julliere inverted for identical electrodes: TMR = 2P^2/(1 - P^2)."""
    return math.sqrt(tmr / (2 + tmr))


# ---- tmr0 and pol_decay ----------------------------------------------------------------------
@pytest.mark.parametrize("kind, tmr0, tnom", [
    ("stt-mtj", 0.0, 300.15), ("stt-mtj", 5.0, 300.15), ("stt-mtj", 8.5, 300.15), ("stt-mtj", 10.0, 300.15),
    ("stt-mtj", 10.0, 150.0), ("stt-mtj", 10.0, 500.0), ("stt-mtj", 4.0, 500.0),
    ("sot-mtj", 10.0, 500.0), ("dw-mtj", 10.0, 500.0),
])
def test_documented_tmr0_range_is_reachable_without_pol_decay(kind, tmr0, tnom):
    card = card_with(kind, "hightmr", tmr0=repr(tmr0), tnom=f'"{tnom} K"')
    assert "pol_decay" not in card.given
    a = card.values["pol_decay"]
    p = _polarisation(tmr0)
    # the polarisation extrapolated to 0 K (Shang's law) stays below 1, with room to spare
    p0 = p / (1 - a * tnom ** 1.5)
    assert 0 <= a and p0 < 1 and (p0 - p) <= (1 - p) / 2 * (1 + 1e-12)
    if (1 - p) / tnom ** 1.5 > 2 * 2e-5:  # where the kind default is valid with the same room, it is kept
        assert a == 2e-5
    ir = card.ir()
    for t in (0.5 * tnom, tnom, 1.2 * tnom):  # TMR(T) is finite and follows P(T)
        f = figures(ir, temperature=t)
        tmr_t = f["r_ap"] / f["r_p"] - 1
        p_t = p * (1 - a * t ** 1.5) / (1 - a * tnom ** 1.5)
        assert tmr_t == pytest.approx(2 * p_t ** 2 / (1 - p_t ** 2), rel=1e-9, abs=1e-12)


def test_starter_card_explains_the_tmr0_pol_decay_relation():
    text = starter_card("stt-mtj")
    line = next(x for x in text.splitlines() if x.startswith("# pol_decay = "))
    for fragment in ("computed from tmr0 and tnom unless given", "sqrt(tmr0/(2 + tmr0))",
                     "must be below (1 - P)/tnom^1.5"):
        assert fragment in line


def test_given_pol_decay_too_large_for_tmr0_is_refused_in_card_terms(tmp_path):
    card = tmp_path / "card.toml"
    card.write_text(starter_card("stt-mtj", "hightmr").replace("tmr0 = 1.5", "tmr0 = 10")
                    .replace('# pol_decay = "2e-05 1/K^1.5"', 'pol_decay = "3e-5 1/K^1.5"'))
    out = tmp_path / "out"
    code, err = run("build", str(card), "-o", str(out))
    bound = (1 - _polarisation(10.0)) / 300.15 ** 1.5
    assert code == 2 and err.count("\n") == 1 and not out.exists()
    assert err.startswith(f"compactgen build: error: {card}: pol_decay = 3e-05 1/K^1.5 must be below "
                          f"(1 - P)/tnom^1.5 = {bound:.4g} 1/K^1.5 for tmr0 = 10 at tnom = 27 degC")
    assert "(got" not in err


# ---- refusals in card terms ----------------------------------------------------------------------
def _thin_film_hk_eff(ki, ms, t_free):
    """H_k,eff = 2 K_i/(mu0 Ms t) - Ms for a thin film (N_z = 1, N_x = 0), K_b = 0."""
    return 2 * ki / (MU0 * ms * t_free) - ms


@pytest.mark.parametrize("kind, edits, expected", [
    ("sot-mtj", {'line_width = "': 'line_width = "30 nm"'},
     ["line_width = 30 nm must be at least the pillar diameter = 40 nm"]),
    ("sot-mtj", {'line_length = "': 'line_length = "35 nm"'},
     ["line_length = 35 nm must be longer than the pillar diameter = 40 nm"]),
    ("stt-mtj", {'ki = "': 'ki = "0.2 mJ/m^2"', 'demag = "': 'demag = "thin-film"'},
     [f"the effective anisotropy field H_k,eff = {_thin_film_hk_eff(0.2e-3, 1e6, 1.3e-9) / 1e3:.4g} kA/m must be "
      "positive", "ki = 0.2 mJ/m^2", "ms = 1 MA/m", "t_free = 1.3 nm", "demag_nz = 1"]),
    ("dw-mtj", {'wall0 = "': 'wall0 = "600 nm"'},
     ["wall0 = 600 nm must lie inside the track (at most track_length = 500 nm)"]),
    ("dw-mtj", {'mtj_length = "': 'mtj_length = "400 nm"'},
     ["the junction (mtj_start = 150 nm + mtj_length = 400 nm) must lie inside the track (track_length = 500 nm)"]),
])
def test_cross_parameter_refusal_names_values_units_and_relation(tmp_path, kind, edits, expected):
    lines = []
    for line in starter_card(kind, "bad").splitlines():
        for start, new in edits.items():
            if line.startswith(start):
                line = new
        lines.append(line)
    card = tmp_path / "card.toml"
    card.write_text("\n".join(lines) + "\n")
    assert card.read_text() != starter_card(kind, "bad")
    out = tmp_path / "out"
    code, err = run("build", str(card), "-o", str(out))
    assert code == 2 and err.count("\n") == 1 and not out.exists(), err
    assert err.startswith(f"compactgen build: error: {card}: ")
    for fragment in expected:
        assert fragment in err
    assert "(got" not in err and "margin" not in err
    # variation spreads and draws are not card values of the device: not listed
    assert "sigma_global_" not in err and "draw_global_" not in err and "area_ref" not in err


# ---- encodings and model names -------------------------------------------------------------------
ENCODINGS = {
    "utf-8": lambda t: t.encode("utf-8"),
    "utf-8 with BOM": lambda t: codecs.BOM_UTF8 + t.encode("utf-8"),
    "utf-16 LE with BOM": lambda t: codecs.BOM_UTF16_LE + t.replace("\n", "\r\n").encode("utf-16-le"),
    "utf-16 BE with BOM": lambda t: codecs.BOM_UTF16_BE + t.encode("utf-16-be"),
}


@pytest.mark.parametrize("encoding", list(ENCODINGS))
def test_cards_in_utf8_or_utf16_with_bom_are_read(tmp_path, encoding):
    text = starter_card("stt-mtj", "enc").replace('description = "', 'description = "Grüße, µ-pillar: ')
    card = tmp_path / "card.toml"
    card.write_bytes(ENCODINGS[encoding](text))
    out = tmp_path / "out"
    code, err = run("build", str(card), "-o", str(out))
    assert code == 0, err
    assert load_card(card).values == load_card(out / "enc.card.toml").values
    copy = (out / "enc.card.toml").read_bytes()
    assert copy.decode("utf-8").replace("\r\n", "\n") == text  # the bundle keeps it as UTF-8, no BOM
    assert "Grüße, µ-pillar" in (out / "enc.md").read_text(encoding="utf-8")


@pytest.mark.parametrize("label, encode, fragment", [
    ("latin-1", lambda t: t.encode("latin-1"), "line 9, column 18: byte 0xfc is not UTF-8"),
    ("utf-16 without BOM", lambda t: t.encode("utf-16-le"), "NUL bytes"),
    ("utf-32", lambda t: t.encode("utf-32"), "UTF-32 text"),
    ("truncated utf-16", lambda t: t.encode("utf-16")[:-1], "UTF-16 byte-order mark but byte"),
])
def test_other_encodings_are_one_clear_line_exit_2(tmp_path, label, encode, fragment):
    text = starter_card("stt-mtj", "enc").replace('description = "', 'description = "Grüße ')
    assert text.splitlines()[8].startswith('description = "Grü')  # line 9; column 18 is the u-umlaut
    card = tmp_path / "card.toml"
    card.write_bytes(encode(text))
    out = tmp_path / "out"
    code, err = run("build", str(card), "-o", str(out))
    assert code == 2 and err.count("\n") == 1 and not out.exists(), err
    assert err.startswith(f"compactgen build: error: {card}: ") and fragment in err and "UTF-8" in err


def test_every_reserved_word_is_refused_as_model_name_with_its_reason():
    base = starter_card("stt-mtj", "placeholder")
    assert len(RESERVED) > 300
    for word in sorted(RESERVED):
        with pytest.raises(CardError) as exc:
            parse_card(base.replace('name = "placeholder"', f'name = "{word}"'), "w.toml")
        msg = str(exc.value)
        assert msg.startswith(f"w.toml: [device] name = '{word}' is reserved: {reserved_reason(word)};"), msg
        assert exc.value.exit_status == 2


@pytest.mark.parametrize("word, group", [
    ("module", "Verilog-A"), ("electrical", "disciplines.vams"), ("subckt", "ngspice"), ("pwl", "ngspice"),
    ("vsource", "VACASK"), ("dut_m", "compactgen"), ("mult", "instance parameter"),
])
def test_reserved_model_name_init_and_build_exit_2_and_write_nothing(tmp_path, word, group):
    card = tmp_path / "c.toml"
    code, err = run("init", "stt-mtj", "-o", str(card), "--name", word)
    assert code == 2 and not card.exists() and group in err and f"name = '{word}' is reserved" in err
    card.write_text(starter_card("stt-mtj", "ok").replace('name = "ok"', f'name = "{word}"'))
    code, err = run("build", str(card), "-o", str(tmp_path / "out"))
    assert code == 2 and err.count("\n") == 1 and group in err and not (tmp_path / "out").exists()


def test_reserved_groups_name_the_identifiers_our_decks_use():
    """The 'generated' group lists names our own deck templates really use at model level."""
    from compactgen.targets.render import TEMPLATE_DIR

    vacask = "".join(p.read_text() for p in (TEMPLATE_DIR / "vacask").glob("*.j2"))
    for used in re.findall(r"^\s*model (\w+) ", vacask.replace("{{ m.name }}", ""), re.MULTILINE):
        assert used in RESERVED


# ---- names renamed in this release: the old ones are read, with a warning, for one release ----------
def _old_names(text: str) -> str:
    """A card written with this release's names, turned back into the previous release's."""
    assert re.search(r"^kv = ", text, re.M)
    text = text.replace("\n[options]\n", "\n[model]\n")  # dw-mtj has no options
    return re.sub(r'^kv = "[^"]*"', 'kb = "2.5e4 J/m^3"', text, flags=re.M)


@pytest.mark.parametrize("kind", ["stt-mtj", "sot-mtj", "dw-mtj"])
def test_old_bulk_anisotropy_key_kb_is_read_into_kv_with_a_warning(kind):
    text = _old_names(starter_card(kind))
    with pytest.warns(RenamedInCard) as caught:
        card = parse_card(text, "old.toml")
    messages = [str(w.message) for w in caught]
    assert ("card old.toml: key [parameters] kb is renamed kv (bulk anisotropy); kb is accepted in this "
            "release only") in messages
    assert card.values["kv"] == 2.5e4 and "kv" in card.given and "kb" not in card.values
    assert parse_card(text.replace("[model]", "[options]").replace("kb =", "kv =")).values == card.values


@pytest.mark.parametrize("kind", ["stt-mtj", "sot-mtj"])  # the kinds with options
def test_old_options_table_model_is_read_with_a_warning_naming_options(kind):
    text = starter_card(kind).replace("\n[options]\n", "\n[model]\n")
    text = text.replace('demag = "cylinder"', 'demag = "thin-film"')
    with pytest.warns(RenamedInCard, match=r"card old\.toml: table \[model\] is renamed \[options\] .*\[model\] is "
                                           r"accepted in this release only"):
        card = parse_card(text, "old.toml")
    assert card.options["demag"] == "thin-film"


def test_old_variation_names_are_read_into_the_new_ones_with_a_warning():
    text = re.sub(r"^sigma_global_ra = .*\n|^sigma_mismatch_tmr0 = .*\n", "", starter_card("stt-mtj"), flags=re.M)
    text = text.replace("[parameters]\n", "[parameters]\nsg_ra = 0.07\nsl_tmr0 = 0.02\n")
    with pytest.warns(RenamedInCard) as caught:
        card = parse_card(text, "old.toml")
    messages = " | ".join(str(w.message) for w in caught)
    assert "key [parameters] sg_ra is renamed sigma_global_ra (global sigma)" in messages
    assert "key [parameters] sl_tmr0 is renamed sigma_mismatch_tmr0 (mismatch sigma)" in messages
    assert card.values["sigma_global_ra"] == 0.07 and card.values["sigma_mismatch_tmr0"] == 0.02


def test_old_and_new_name_together_is_refused_naming_both():
    text = re.sub(r"^(kv = .*)$", r'\1\nkb = "1 J/m^3"', starter_card("stt-mtj"), flags=re.M)
    with pytest.raises(CardError, match=r"both\.toml: \[parameters\] both kb and kv given; kb is the old name of "
                                        r"kv \(bulk anisotropy\): keep kv only"):
        parse_card(text, "both.toml")
    text = starter_card("stt-mtj").replace("[options]\n", '[model]\ndemag = "sphere"\n\n[options]\n')
    with pytest.raises(CardError, match=r"both \[model\] and \[options\] given"):
        parse_card(text, "both.toml")


def test_cards_with_current_names_load_without_a_rename_warning(tmp_path):
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", RenamedInCard)
        for kind in ("stt-mtj", "sot-mtj", "dw-mtj"):
            parse_card(starter_card(kind))
