"""Card checks across parameters: the documented ranges are reachable, and a refused
combination is reported in card terms (values with card units and the allowed relation)."""
from __future__ import annotations

import contextlib
import io

import pytest

from compactgen.card import starter_card
from compactgen.cli import main
from compactgen.constants import MU0


def run(*args: str) -> tuple[int, str]:
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(list(args))
    return code, err.getvalue()


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
