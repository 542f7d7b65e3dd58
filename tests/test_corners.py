"""Process corners and Monte Carlo: the .lib sections, the Verilog-A corner parameter, and the
corner ordering at every temperature in both simulators."""
from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pytest

from compactgen.targets import render
from compactgen.statistics.corners import corner_table, format_rows, ordering_problems
from compactgen.model.evaluate import figures

from helpers import example_card


def test_sigma_from_card_uncertainty():
    from compactgen.model.card import parse_card

    text = (Path(__file__).resolve().parent.parent / "examples" / "pmtj35_demo.toml").read_text()
    card = parse_card(text + '\n[uncertainty]\nra = "0.2 ohm*um^2"\n', "<fit>")
    assert card.values["sigma_global_ra"] == pytest.approx(0.2 / 4.0)  # standard error / value
    assert card.values["sigma_global_tmr0"] == 0.03  # no fit: the default


def test_corner_multipliers_are_lognormal_in_sigma():
    ir = example_card().ir()
    base = figures(ir)["r_p"]
    assert figures(ir, {"corner": 3.0})["r_p"] == pytest.approx(base * np.exp(3 * 0.03), rel=1e-12)
    assert figures(ir, {"corner": -3.0})["r_p"] == pytest.approx(base * np.exp(-3 * 0.03), rel=1e-12)
    # mismatch scales with 1/sqrt(area): a device of area_ref has sigma sl, a 4x larger one sl/2
    area = np.pi * 35e-9**2 / 4
    over = {"draw_mismatch_ra": 1.0, "area_ref": area}
    assert figures(ir, over)["r_p"] == pytest.approx(base * np.exp(0.015), rel=1e-12)
    over = {"draw_mismatch_ra": 1.0, "area_ref": area / 4}
    assert figures(ir, over)["r_p"] == pytest.approx(base * np.exp(0.0075), rel=1e-12)


@pytest.mark.simulator
def test_monte_carlo_sections_in_ngspice(ngspice_cli):
    """mc_local gives every instance its own resistance, mc_global one shared shift, tt none;
    .options seed makes the draws repeatable."""
    from compactgen.sim import run_ngspice_batch

    ir = example_card().ir()
    with tempfile.TemporaryDirectory() as tmp:
        lib = Path(tmp) / f"{ir.name}.lib"
        lib.write_text(render.ngspice(ir))

        def run(section, seed=3):
            deck = "\n".join([f"mc {section}", f".lib {lib} {section}", ".options seed=" + str(seed)]
                             + [f"V{k} n{k} 0 DC 0.1\nX{k} n{k} 0 {ir.name}" for k in range(3)] + [".op", ".end"])
            data = run_ngspice_batch(deck)
            return np.array([0.1 / -data[f"v{k}#branch"][0] for k in range(3)])

        tt, loc, glob = run("tt"), run("mc_local"), run("mc_global")
        assert np.allclose(tt, tt[0], rtol=1e-12)
        assert np.ptp(loc) / tt[0] > 1e-3  # three different draws
        assert np.allclose(glob, glob[0], rtol=1e-12) and not np.isclose(glob[0], tt[0], rtol=1e-4)
        assert np.array_equal(run("mc_local"), loc)  # same seed, same draws


@pytest.mark.simulator
@pytest.mark.slow
def test_corner_order_at_every_temperature(ngspice, vacask):
    """ss switches slower and needs more current than tt, ff the other way, at -40, 25 and 125 degC,
    in the reference, in ngspice (.lib sections) and in VACASK (corner parameter); both
    simulators within 2 % of the reference."""
    ir = example_card().ir()
    rows = corner_table(ir, t_stop=4e-9, max_step=4e-12)
    print(format_rows(rows))
    assert not ordering_problems(rows), ordering_problems(rows)
    for r in rows:
        for sim in ("ngspice", "vacask"):
            assert r[sim] == pytest.approx(r["reference"], rel=0.02), (r["corner"], r["temp_c"], sim)
