"""The free layer's rest state: a write does not depend on when it comes.

Checks against things outside the rest-state code: the laboratory-frame LLG (the co-rotating form
must give the same polar motion), the equipartition law <theta^2> = 1/Delta with the exponential
distribution's <ln X> = ln<X> - gamma_E (common practice, no source), Stoner-Wohlfarth statics
(E. C. Stoner and E. P. Wohlfarth, Phil. Trans. R. Soc. A 240, 599 (1948)), and the effective
barrier Delta (1 - i) under a sub-critical spin torque (R. H. Koch, J. A. Katine and J. Z. Sun,
Phys. Rev. Lett. 92, 088302 (2004)).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.optimize import minimize_scalar

from compactgen.harness.benches import Dc, Pulse, crossing_time
from compactgen.model.card import load_card, parse_card, starter_card
from compactgen.devices.stt_mtj import bias_for_current
from compactgen.physics import anisotropy, macrospin, thermal
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures
from compactgen.harness.verify import run_suite
from tests.helpers import EXAMPLES

EULER_GAMMA = 0.5772156649015329  # Euler's constant (handbook value)


def test_rest_angle_is_the_log_mean_of_the_boltzmann_cone() -> None:
    delta = 47.0
    # sample theta from p(theta) ~ theta exp(-Delta theta^2) (near-pole Boltzmann density)
    rng = np.random.default_rng(3)
    theta = np.sqrt(rng.exponential(1.0 / delta, 400_000))
    geometric = math.exp(np.mean(np.log(theta)))
    value = float(thermal.thermal_rest_angle(delta))
    assert value == pytest.approx(math.exp(-EULER_GAMMA / 2) / math.sqrt(delta), rel=1e-15)
    assert value == pytest.approx(geometric, rel=3e-3)  # Monte Carlo, 4e5 samples: ~1e-3 statistical


def test_corotating_form_keeps_the_polar_motion() -> None:
    """azimuthal = 0 removes only motion about z for an axially symmetric layer."""
    mx, my, mz, a, hk, ms, nx, nz, hz, hdl, hfl = sp.symbols("mx my mz a hk ms nx nz hz hdl hfl", real=True)
    m = (mx, my, mz)
    h = anisotropy.effective_field(m, hk, ms, (nx, nx, nz), (0, 0, hz))
    lab = macrospin.llg_explicit(m, h, a, hdl, hfl, (0, 0, 1))
    rot = macrospin.llg_explicit(m, h, a, hdl, hfl, (0, 0, 1), azimuthal=0)
    diff = lab - rot
    assert sp.simplify(diff[2]) == 0  # m_z(t) identical
    assert sp.simplify(diff[0] * mx + diff[1] * my) == 0  # no radial part: purely azimuthal
    assert sp.simplify(diff[0] * my - diff[1] * mx) != 0  # and the precession is what was removed


def test_tilted_rest_state_is_the_stoner_wohlfarth_minimum() -> None:
    hk, ht, hax = 4.0e5, 2.2e4, -3.0e4  # A/m: in-plane field, axial field against the pole
    s, c = anisotropy.tilted_rest_state(hk, ht, hax)

    def energy(theta):  # per mu0 Ms V
        return -0.5 * hk * math.cos(theta) ** 2 - ht * math.sin(theta) - hax * math.cos(theta)

    best = minimize_scalar(energy, bounds=(0.0, 0.5), method="bounded", options={"xatol": 1e-13})
    assert float(s) == pytest.approx(math.sin(best.x), rel=2e-5)
    assert float(c) ** 2 + float(s) ** 2 == pytest.approx(1.0, abs=1e-15)


@pytest.fixture(scope="module")
def stt():
    card = load_card(EXAMPLES / "pmtj35_demo.toml")
    return card, card.ir()


def test_rest_is_a_fixed_point_at_the_thermal_angle(stt) -> None:
    card, ir = stt
    model = ReferenceModel(ir, {"state0": -1.0})
    theta = math.asin(math.hypot(model.initial[0], model.initial[1]))
    delta = figures(ir, temperature=model.temperature)["delta"]
    assert theta == pytest.approx(math.exp(-EULER_GAMMA / 2) / math.sqrt(delta), rel=1e-3)
    tr = model.transient({}, 100e-9, t_eval=np.linspace(0, 100e-9, 11))
    assert np.max(np.abs(tr.states["mz"] - model.initial[2])) < 1e-9
    assert np.max(np.abs(tr.states["mx"] - model.initial[0])) < 1e-9


def test_write_time_does_not_depend_on_when_the_pulse_comes(stt) -> None:
    card, ir = stt
    model = ReferenceModel(ir, {"state0": -1.0})
    v = bias_for_current(model, 2.0 * figures(ir)["i_c0"], 1.0)
    times = []
    for delay in (2e-9, 200e-9):
        tr = ReferenceModel(ir, {"state0": -1.0}).transient({"t": Pulse(0.0, v, delay, 5e-11, 5e-11, 8e-9)},
                                                            delay + 6e-9)
        times.append(crossing_time(tr.t, tr.states["mz"], 0.0, delay, +1) - delay)
    assert np.all(np.isfinite(times))
    assert times[1] == pytest.approx(times[0], rel=1e-6)
    # the plain LLG forgets its initial tilt: the same write 200 ns later takes far longer
    lab = []
    theta = math.asin(math.hypot(model.initial[0], model.initial[1]))
    for delay in (2e-9, 20e-9):
        tr = ReferenceModel(ir, {"state0": -1.0, "thermal_rest": 0.0, "tilt0": theta}).transient(
            {"t": Pulse(0.0, v, delay, 5e-11, 5e-11, 30e-9)}, delay + 25e-9)
        lab.append(crossing_time(tr.t, tr.states["mz"], 0.0, delay, +1) - delay)
    assert lab[1] > 1.5 * lab[0]


def test_sub_threshold_cone_widens_as_the_effective_barrier_falls(stt) -> None:
    """Under i = I/I_c0 < 1 the rest cone follows sin^2 theta ~ 1/(1 - i) (Koch et al. 2004)."""
    card, ir = stt
    model = ReferenceModel(ir, {"state0": -1.0})
    s0 = math.hypot(model.initial[0], model.initial[1])
    i_c0 = figures(ir)["i_c0"]
    for i in (0.3, 0.6):
        v = bias_for_current(model, i * i_c0, 1.0)
        tr = model.transient({"t": Dc(v)}, 60e-9)
        s = math.hypot(tr.states["mx"][-1], tr.states["my"][-1])
        assert s**2 == pytest.approx(s0**2 / (1 - i), rel=0.03)  # 1 % regularisation, 2 % from I(V, theta)


@pytest.mark.simulator
def test_write_at_2_ns_and_200_ns_in_every_simulator(stt, ngspice, vacask) -> None:
    """The same 2 x I_c0 pulse, both directions, 2 ns and 200 ns after the start: every engine gives
    the same switching time within 1 % (goal of the rest state), and agrees with the reference."""
    from compactgen.harness.benches import Bench, Metric, switching_time
    from compactgen.devices.stt_mtj import WHY_TSW, step_cap

    card, ir = stt
    figs = figures(ir)
    benches = []
    for direction, start in ((+1, -1.0), (-1, +1.0)):
        v = bias_for_current(ReferenceModel(ir, {"state0": start}), direction * 2.0 * figs["i_c0"], 1.0)
        for delay in (2e-9, 200e-9):
            benches.append(Bench(f"{'to_p' if direction > 0 else 'to_ap'}_at_{delay * 1e9:g}ns", "", "tran",
                                 {"t": Pulse(0.0, v, delay, 5e-11, 5e-11, 8e-9), "b": Dc(0.0)},
                                 [Metric("switching time", "s", switching_time("mz", delay, direction), 1e-2, 0.0,
                                         WHY_TSW)],
                                 instance={"state0": start}, t_stop=delay + 9e-9, t_step=1e-11,
                                 max_step=max(step_cap(figs["f_fmr"]), 6e-12)))
    result = run_suite(ir, benches)
    assert result.passed, result.table()
    print("\n" + result.table())
    rows = {r.bench: r for r in result.rows}
    for d in ("to_p", "to_ap"):
        early, late = rows[f"{d}_at_2ns"], rows[f"{d}_at_200ns"]
        for sim in ("ngspice", "vacask"):
            assert late.values[sim] == pytest.approx(early.values[sim], rel=1e-2), (d, sim)
        assert late.reference == pytest.approx(early.reference, rel=1e-6)


@pytest.mark.parametrize("kind", ["stt-mtj", "sot-mtj", "dw-mtj"])
def test_starter_cards_verify_cleanly_in_the_reference(kind) -> None:
    """A starter card is an example of good practice: every bench applies and passes, and no bench
    drives it outside its own calibrated range."""
    card = parse_card(starter_card(kind), f"<starter {kind}>")
    ir = card.ir()
    benches = card.device.benches(ir, card.values)
    said: list[str] = []
    result = run_suite(ir, benches, simulators=(), progress=said.append)
    assert result.passed, result.table()
    assert not result.not_applicable, result.not_applicable
    assert not result.findings, result.findings
    assert not [m for m in said if "calibrated limit" in m]
    assert any(m.startswith("reference:") for m in said)  # the progress channel was listened to
