"""Card checks across parameters: the documented ranges are reachable, and a refused
combination is reported in card terms (values with card units and the allowed relation)."""
from __future__ import annotations

import contextlib
import io
import math

import pytest

from compactgen.card import starter_card
from compactgen.cli import main
from compactgen.constants import MU0
from compactgen.reference import figures

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
    ("dw-mtj", {'mtj_length = "': 'mtj_length = "450 nm"'},
     ["the junction (mtj_start = 200 nm + mtj_length = 450 nm) must lie inside the track (track_length = 500 nm)"]),
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
    assert "sg_" not in err and "zg_" not in err and "area_ref" not in err
