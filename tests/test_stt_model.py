"""The generated STT-MTJ model against published closed forms, in the reference solver and
in both simulators."""
from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import constants as C

from compactgen.targets import render
from compactgen.harness.benches import Bench, Dc, Metric, Pulse, switching_time
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures
from compactgen.harness.verify import run_suite

from helpers import card_with, example_card

MU0 = C.mu_0
GAMMA0 = MU0 * abs(C.physical_constants["electron gyromag. ratio"][0])

# Macrospin test device: REF free layer of the physics notes (Ms = 1 MA/m, Ki = 1.3 mJ/m^2,
# t_F = 1.3 nm, thin-film demagnetisation), diameter chosen for Delta = 60 at 300 K, no TMR so the
# current is constant under a constant voltage, theta0 = sqrt(1/(2 Delta)).
DELTA = 60.0
KEFF = 1.0e6 - MU0 * 1e12 / 2
VOL = DELTA * C.k * 300 / KEFF
DIAM = math.sqrt(4 * VOL / (1.3e-9 * math.pi))
THETA0 = math.sqrt(1 / (2 * DELTA))


@pytest.fixture(scope="module")
def macrospin_card():
    return card_with("stt-mtj", "macro", diameter=f'"{DIAM * 1e9!r} nm"', tmr0="0.0", demag_nz="1.0",
                     tnom='"300 K"', j_max='"1000 MA/cm^2"', v_max='"5 V"')


def exact_time(i: float) -> float:
    """Exact macrospin time to the equator (notes 4.2, derived from J. Z. Sun, Phys. Rev. B 62,
    570 (2000)), written out here independently of compactgen.physics."""
    hk_eff = 2 * 1.0e6 / (MU0 * 1e6) - 1e6
    tau0 = (1 + 0.01**2) / (0.01 * GAMMA0 * hk_eff)
    u0 = math.cos(THETA0)
    integral = (-math.log(1 - u0) / (2 * (i - 1)) + math.log(1 + u0) / (2 * (i + 1))
                - (math.log(i - u0) - math.log(i)) / (1 - i * i))
    return tau0 * integral


def switching_bench(card, i: float, rise: float) -> Bench:
    ir = card.ir()
    figs = figures(ir)
    assert_allclose(figs["delta"], DELTA, rtol=1e-9)
    v = i * figs["i_c0"] * figs["r_p"]
    delay = 0.0  # the drive starts at once: before it the cone would shrink by damping
    pulse = Pulse(0.0, v, delay, rise, rise, 6e-9)
    return Bench(f"exact_i{i:g}", f"step to i = {i:g}", "tran", {"t": pulse, "b": Dc(0.0)},
                 [Metric("switching time", "s", switching_time("mz", delay + rise / 2, +1), 1e-2, 0.0, "see test")],
                 instance={"state0": -1.0, "thermal_rest": 0.0, "tilt0": THETA0}, t_stop=delay + rise + 4e-9, t_step=1e-11,
                 max_step=1e-12)


def test_reference_matches_exact_switching_time(macrospin_card):
    # the reference LLG of the generated model reproduces the exact integral 2.006514 ns at i = 2
    assert_allclose(exact_time(2.0), 2.006514e-9, rtol=1e-5)
    for i in (2.0, 3.0, 5.0):
        b = switching_bench(macrospin_card, i, 1e-15)
        model = ReferenceModel(macrospin_card.ir(), b.instance)
        tr = model.transient(b.drives, b.t_stop, t_eval=np.linspace(0, b.t_stop, 40001))
        t_sw = b.metrics[0].func(tr)
        assert_allclose(t_sw, exact_time(i), rtol=1e-3)


@pytest.mark.simulator
def test_simulators_match_exact_switching_time(macrospin_card, ngspice, vacask):
    # a 1 ps ramp (seen by all three); measured from mid-ramp, the exact step solution holds to 0.5 %
    ir = macrospin_card.ir()
    benches = [switching_bench(macrospin_card, i, 1e-12) for i in (2.0, 5.0)]
    result = run_suite(ir, benches)
    assert result.passed, result.table()
    for run, i in zip(result.runs, (2.0, 5.0)):
        for sim in ("reference", "ngspice", "vacask"):
            t_sw = run.bench.metrics[0].func(run.traces[sim])
            assert_allclose(t_sw, exact_time(i), rtol=5e-3, err_msg=sim)


def ringing_frequency(t: np.ndarray, x: np.ndarray) -> float:
    up = np.flatnonzero((x[:-1] < 0) & (x[1:] >= 0))
    tc = t[up] - x[up] * (t[up + 1] - t[up]) / (x[up + 1] - x[up])
    return (len(tc) - 1) / (tc[-1] - tc[0])


@pytest.mark.simulator
def test_free_ringing_is_kittel_frequency(ngspice, vacask):
    # C. Kittel, Phys. Rev. 73, 155 (1948); finite cone: f cos(theta0)/(1+alpha^2) (notes 2b),
    # theta0 = 2 deg, alpha = 1e-3, 2 ns; tolerance 2e-4 as in the notes (theta shrinks in the run)
    card = card_with("stt-mtj", "ring", alpha="0.001", demag_nz="1.0", tmr0="0.0")
    ir = card.ir()
    theta0 = math.radians(2)
    f_kittel = figures(ir)["f_fmr"]
    hk_eff = 2 * 1.3e-3 / 1.3e-9 / (MU0 * 1e6) - 1e6
    assert_allclose(f_kittel, GAMMA0 * hk_eff / (2 * math.pi), rtol=1e-12)
    expected = f_kittel * math.cos(theta0) / (1 + 1e-6)
    bench = Bench("ringing", "free precession", "tran", {"t": Dc(0.0), "b": Dc(0.0)},
                  [Metric("ringing frequency", "Hz",
                          lambda tr: ringing_frequency(tr.t, tr.states["mx"]), 2e-4, 0.0, "notes 2b")],
                  instance={"state0": 1.0, "thermal_rest": 0.0, "tilt0": theta0}, t_stop=2e-9, t_step=1e-12, max_step=0.2e-12)
    result = run_suite(ir, [bench])
    for sim, tr in result.runs[0].traces.items():
        assert_allclose(ringing_frequency(tr.t, tr.states["mx"]), expected, rtol=2e-4, err_msg=sim)
    assert result.passed, result.table()


@pytest.fixture(scope="module")
def example_suite():
    card = example_card()
    ir = card.ir()
    return run_suite(ir, card.device.benches(ir, card.values))


@pytest.mark.simulator
def test_example_card_passes_every_bench(example_suite):
    assert example_suite.passed, example_suite.table()
    names = {r.bench for r in example_suite.rows}
    assert {"rv_parallel", "rv_antiparallel", "hold_0.5ic0"} <= names
    assert {f"write_to_{d}_{k}ic0" for d in ("p", "ap") for k in ("1.5", "2", "3")} <= names
    assert "write_to_p_2ic0_late" in names  # the same write long after the start (rest state)


@pytest.mark.simulator
def test_unit_vector_stays_on_sphere(example_suite):
    # |m| = 1 in all three back ends (sphere-restoring term; the exact flow conserves |m|)
    for run in example_suite.runs:
        if run.bench.analysis != "tran":
            continue
        for sim, tr in run.traces.items():
            norm = np.sqrt(tr.states["mx"] ** 2 + tr.states["my"] ** 2 + tr.states["mz"] ** 2)
            assert np.max(np.abs(norm - 1)) < 1e-3, (run.bench.name, sim)


@pytest.mark.simulator
def test_verification_catches_a_wrong_model(monkeypatch, ngspice, ngspice_osdi, vacask):
    # a model whose rendered ngspice text differs from the reference (5 % more spin-torque
    # efficiency) must fail the switching-time benches: the harness can say no
    card = example_card()
    ir = card.ir()
    benches = [b for b in card.device.benches(ir, card.values) if b.name == "write_to_p_2ic0"]
    def tampered(original):
        def render_tampered(model_ir):
            text = original(model_ir)
            eta = model_ir.params["eta"].default
            assert f"+ eta={eta!r}\n" in text
            return text.replace(f"+ eta={eta!r}\n", f"+ eta={eta * 1.05!r}\n")
        return render_tampered

    # both ngspice forms (the B-source library and the library around the compiled model)
    monkeypatch.setattr(render, "ngspice", tampered(render.ngspice))
    monkeypatch.setattr(render, "ngspice_osdi", tampered(render.ngspice_osdi))
    result = run_suite(ir, benches, simulators=("ngspice", "ngspice-osdi", "vacask"))
    rows = {(r.bench, r.metric): r for r in result.rows}
    row = rows[("write_to_p_2ic0", "switching time")]
    assert not row.passed
    for sim in ("ngspice", "ngspice-osdi"):  # stronger torque switches faster, by more than the tolerance
        assert row.values[sim] < row.reference * (1 - 1e-2), sim
    assert abs(row.values["vacask"] / row.reference - 1) < 1e-2
