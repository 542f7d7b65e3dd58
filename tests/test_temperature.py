"""Temperature laws: published check values, the laws over the full -40..150 degC range, dtemp,
and the temperature reaching both simulators.

Check values are PHYSICS.md section 9 (computed there by independent scripts); each test computes
its own numbers from the sympy blocks and compares with them.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

from compactgen.harness.benches import Bench, Metric, dc_resistance_at
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.physics import temperature as tl
from compactgen.physics import tunnelling
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures
from compactgen.harness.verify import run_suite

from helpers import card_with, example_card

T_RANGE = np.linspace(-40.0, 150.0, 96) + ZERO_CELSIUS


def num(expr) -> float:
    return float(sp.sympify(expr).evalf(17))


def test_bloch_and_callen_callen_check_9a():
    # PHYSICS 9, CHECK 9a: Tc = 1000 K, T = 300 K -> Ms(T)/Ms(0) = 0.835683;
    # K ratio n = 3 (Callen & Callen, J. Phys. Chem. Solids 27, 1271 (1966)): 0.583613, n = 2: 0.698366
    ratio = num(tl.magnetisation_ratio(300, 0, 1000))
    assert ratio == pytest.approx(0.835683, abs=1e-6)
    assert num(tl.callen_callen(1, ratio, 3)) == pytest.approx(0.583613, abs=1e-6)
    assert num(tl.callen_callen(1, ratio, 2)) == pytest.approx(0.698366, abs=1e-6)
    # relative to tnom the ratio is exactly 1 at tnom
    assert num(tl.magnetisation_ratio(300.15, 300.15, 1000)) == 1.0


def test_shang_polarisation_check_9b():
    # C. H. Shang et al., Phys. Rev. B 58, R2917 (1998): P = P0 (1 - a T^1.5); PHYSICS CHECK 9b:
    # P0 = 0.65, a = 2e-5, T = 300 K -> P = 0.582450, TMR = 1.026854, TMR(0) = 1.463203 (Julliere)
    p = 0.65 * num(tl.polarisation_ratio(300, 0, 2e-5))
    assert p == pytest.approx(0.582450, abs=1e-6)
    assert num(tunnelling.julliere_tmr(p, p)) == pytest.approx(1.026854, abs=1e-6)
    assert num(tunnelling.julliere_tmr(0.65, 0.65)) == pytest.approx(1.463203, abs=1e-6)
    # Julliere inverted (PHYSICS CHECK 7.1: TMR = 1.3 <=> P = 0.627646)
    assert num(tunnelling.julliere_polarisation(1.3)) == pytest.approx(0.627646, abs=1e-6)


def test_laws_are_clamped_beyond_their_domain():
    # above the Curie temperature and for a polarisation driven below zero the laws stay finite
    # and positive instead of changing sign (the failure mode of ECOSYSTEM 1.4)
    assert num(tl.bloch_factor(1500, 1000)) == pytest.approx(1e-3)
    assert num(tl.polarisation_ratio(5000, 300, 2e-5)) == 0.0
    assert num(tl.device_temperature(200, -500)) == 1.0


@pytest.mark.parametrize("overrides", [{}, {"aniso_exp": 2.0, "t_curie": 600.0}, {"pol_decay": 5e-5}])
def test_figures_over_minus_40_to_150_degc(overrides):
    """Delta, I_c0, TMR (via R_AP), Ms: finite, positive and falling with temperature over the
    whole automotive-plus range, for the demo card and for two harsher temperature laws."""
    ir = example_card().ir()
    rows = [figures(ir, overrides, temperature=t) for t in T_RANGE]
    for key in ("delta", "i_c0", "hk_eff", "r_ap", "f_fmr", "retention"):
        vals = np.array([r[key] for r in rows])
        assert np.all(np.isfinite(vals)) and np.all(vals > 0), key
        assert np.all(np.diff(vals) < 0), f"{key} does not fall monotonically with temperature"
    r_p = np.array([r["r_p"] for r in rows])
    assert np.all(r_p == r_p[0])  # R_P is temperature independent in this model


def test_figures_at_tnom_equal_the_nominal_values():
    ir = example_card().ir()
    at_tnom = figures(ir)  # default: the card's tnom (27 degC)
    assert at_tnom == figures(ir, temperature=300.15)
    # Delta at tnom is the nominal barrier over k_B tnom
    ref = ReferenceModel(ir)
    delta_nom = ref.num[sp.Symbol("delta_nom", real=True)]
    assert at_tnom["delta"] == pytest.approx(delta_nom, rel=1e-12)


def test_dtemp_adds_to_the_simulator_temperature():
    ir = example_card().ir()
    a = ReferenceModel(ir, {"dtemp": 40.0}, temperature=300.0)
    b = ReferenceModel(ir, temperature=340.0)
    y = np.array([0.1, 0.0, -0.99])
    node_v = {"t": 0.3, "b": 0.0}
    assert np.allclose(a.rhs(node_v, y), b.rhs(node_v, y), rtol=1e-12)
    assert a.terminal_currents(node_v, y)["t"] == pytest.approx(b.terminal_currents(node_v, y)["t"], rel=1e-12)


def test_too_large_polarisation_decay_is_refused():
    from compactgen.errors import RangeError

    with pytest.raises(RangeError, match=r"pol_decay = 9e-05 1/K\^1.5 must be below \(1 - P\)/tnom\^1.5 = "):
        card_with("stt-mtj", "hot", tmr0="9.0", pol_decay='"9e-5 1/K^1.5"')


@pytest.mark.simulator
def test_dtemp_reaches_both_simulators(ngspice, vacask):
    """An instance offset of +100 K at a 25 degC circuit: the AP resistance (TMR(T)) in ngspice
    and VACASK equals the reference at 125 degC."""
    ir = example_card().ir()
    why = "DC operating point; reltol 1e-6 (as the R-V benches)"
    bench = Bench("rv_dtemp", "R-V, AP, 25 degC + dtemp 100 K", "dc", {},
                  [Metric(f"R at {v:+.2f} V", "ohm", dc_resistance_at("t", "b", v), 1e-3, 0.0, why)
                   for v in (-0.5, 0.1, 0.5)],
                  instance={"state0": -1.0, "dtemp": 100.0}, sweep=("t", -0.5, 0.5, 0.1),
                  temperature=25.0 + ZERO_CELSIUS)
    result = run_suite(ir, [bench])
    assert result.passed, result.table()
    hot = ReferenceModel(ir, {"state0": -1.0}, temperature=125.0 + ZERO_CELSIUS)
    r_hot = 0.1 / hot.terminal_currents({"t": 0.1, "b": 0.0}, hot.initial)["t"]
    for sim in ("ngspice", "vacask"):
        row = result.rows[1]
        assert row.values[sim] == pytest.approx(r_hot, rel=1e-6)
    assert not math.isclose(r_hot, 0.1 / ReferenceModel(ir, {"state0": -1.0}, temperature=298.15)
                            .terminal_currents({"t": 0.1, "b": 0.0}, hot.initial)["t"], rel_tol=1e-3)


def test_datasheet_states_delta_retention_and_wer():
    from compactgen.jobs.build import build_files

    md = build_files(example_card())["pmtj35_demo.md"]
    ir = example_card().ir()
    d25 = figures(ir, temperature=298.15)["delta"]
    d85 = figures(ir, temperature=358.15)["delta"]
    assert f"**{d25:.1f} at 25 degC**" in md and f"**{d85:.1f} at 85 degC**" in md
    assert "| I/I_c0 | 2 ns | 5 ns | 10 ns | 20 ns |" in md
    assert ".lib pmtj35_demo.lib tt" in md and "no substitute for qualification" in md
