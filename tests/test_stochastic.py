"""Stochastic LLG, thermal initial states, write-error rates, and the simulator ensembles.

Sources: W. F. Brown, Phys. Rev. 130, 1677 (1963) (thermal field); J. L. Garcia-Palacios and
F. J. Lazaro, Phys. Rev. B 58, 14937 (1998) (Heun/Stratonovich, Gilbert gamma in the noise);
P. Langevin, J. Phys. Theor. Appl. 4, 678 (1905) (from memory) for <m_z> = L(xi) of an isotropic
moment; check values of PHYSICS.md 4.2b, 4.4a, 8a, 8b (computed there by independent scripts).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy import integrate

from compactgen.statistics.analytic import precessional_probability
from compactgen.model.constants import K_B, MU0, GAMMA_E
from compactgen.statistics.ensemble import current_step, simulator_ensembles
from compactgen.physics import macrospin, thermal
from compactgen.physics.constants import const_values
from compactgen.model.evaluate import figures
from compactgen.statistics.stochastic import StochasticModel, heun_ensemble, initial_vectors, sample_initial_angles, wilson_interval

from helpers import example_card

GAMMA0 = MU0 * GAMMA_E


def test_thermal_field_strength_check_8a():
    # PHYSICS 8a: alpha 0.01, 300 K, Ms 1e6 A/m, V = 4.084070e-25 m^3, dt 1 ps -> sigma_H = 2.700837e4 A/m
    a, ms, v, t = sp.symbols("a ms v t", positive=True)
    d = thermal.thermal_field_strength(a, ms, v, t).xreplace(const_values())
    sigma = math.sqrt(float(d.subs({a: 0.01, ms: 1e6, v: 4.084070e-25, t: 300})) / 1e-12)
    assert sigma == pytest.approx(2.700837e4, rel=1e-6)


def _isotropic_rhs(alpha, h_applied):
    """dm/dt of an isotropic moment in H_applied along z plus the thermal field, built from the
    same physics block the models use (macrospin.llg_explicit)."""
    m = sp.symbols("mx my mz", real=True)
    h = sp.symbols("hx hy hz", real=True)
    expr = macrospin.llg_explicit(m, (h[0], h[1], h_applied + h[2]), alpha, 0, 0, (0, 0, 1))
    f = sp.lambdify([*m, *h], list(expr.xreplace(const_values())), "numpy")

    def rhs(mm, hh, t):
        return np.array(f(mm[0], mm[1], mm[2], hh[0], hh[1], hh[2]))

    return rhs


def _langevin_mean_mz(noise_factor: float) -> float:
    # PHYSICS 8b: xi = mu0 Ms V H / (k_B T) = 2, alpha = 0.5 -> <m_z> = L(2) = coth 2 - 1/2 = 0.537315
    alpha, ms, vol, temp, xi = 0.5, 1e6, 4.084070e-25, 300.0, 2.0
    h = xi * K_B * temp / (MU0 * ms * vol)
    dt = 2e-12
    strength = float(thermal.thermal_field_strength(alpha, ms, vol, temp).xreplace(const_values()))
    sigma = math.sqrt(noise_factor * strength / dt)
    m0 = np.tile(np.array([[0.0], [0.0], [1.0]]), (1, 6000))
    res = heun_ensemble(_isotropic_rhs(alpha, h), m0, dt, 2500, sigma, np.random.default_rng(11), t_average=2e-9)
    return res.mean_mz


def test_langevin_equilibrium_and_the_wrong_noise_fails():
    langevin = 1 / math.tanh(2.0) - 0.5
    assert langevin == pytest.approx(0.537315, abs=1e-6)
    right = _langevin_mean_mz(1.0)
    assert abs(right - langevin) < 0.01, right
    # the common mistake: gamma/(1+alpha^2) in the noise strength (temperature too high by 1.25)
    wrong = _langevin_mean_mz(1 + 0.5**2)
    assert abs(wrong - langevin) > 0.05, wrong
    assert wrong == pytest.approx(1 / math.tanh(1.6) - 1 / 1.6, abs=0.012)  # L(1.6) = 0.459989


def test_model_ensemble_reaches_the_boltzmann_cone():
    """The device IR with its own thermal-field strength, started exactly at the pole, spreads to
    the Boltzmann distribution p ~ sin(theta) exp(-Delta sin^2 theta): <sin^2 theta> agrees."""
    ir = example_card().ir()
    temp = 398.15
    sm = StochasticModel(ir, {"alpha": 0.1}, temperature=temp, drive="current")
    res = sm.run(3000, 1.5e-9, 1e-12, lambda t: 0.0, seed=4, state0=1.0, initial=1e-9, t_average=0.5e-9)
    delta = sm.delta
    w = lambda th: np.sin(th) * np.exp(-delta * np.sin(th) ** 2)  # noqa: E731
    num = integrate.quad(lambda th: np.sin(th) ** 2 * w(th), 0, math.pi / 2, points=[0.05, 0.2])[0]
    den = integrate.quad(w, 0, math.pi / 2, points=[0.05, 0.2])[0]
    expected = num / den
    got = 1 - res.mean_mz2
    assert got == pytest.approx(expected, rel=0.04), (got, expected, delta)


def test_initial_angle_sampler_check_4_4a():
    # PHYSICS 4.4a gives the small-angle (Rayleigh) forms: mean sqrt(pi/(4 Delta)) = 0.114411 and
    # rms 1/sqrt(Delta) = 0.129099 at Delta = 60; the sampler draws from the full density
    # sin(theta) exp(-Delta sin^2 theta), which is 0.8 % wider there -- so compare it with the
    # Rayleigh forms at a large Delta, and with a quadrature of the full density at Delta = 60
    assert math.sqrt(math.pi / (4 * 60)) == pytest.approx(0.114411, abs=1e-6)
    assert 1 / math.sqrt(60) == pytest.approx(0.129099, abs=1e-6)
    rng = np.random.default_rng(1)
    theta, _ = sample_initial_angles(5000.0, 200_000, rng)
    assert theta.mean() == pytest.approx(math.sqrt(math.pi / (4 * 5000)), rel=4e-3)
    theta, phi = sample_initial_angles(60.0, 200_000, rng)
    w = lambda th: np.sin(th) * np.exp(-60 * np.sin(th) ** 2)  # noqa: E731
    den = integrate.quad(w, 0, math.pi / 2, points=[0.1, 0.3])[0]
    mean = integrate.quad(lambda th: th * w(th), 0, math.pi / 2, points=[0.1, 0.3])[0] / den
    rms = math.sqrt(integrate.quad(lambda th: th**2 * w(th), 0, math.pi / 2, points=[0.1, 0.3])[0] / den)
    assert theta.mean() == pytest.approx(mean, rel=4e-3)
    assert math.sqrt((theta**2).mean()) == pytest.approx(rms, rel=4e-3)
    assert abs(phi.mean()) < 0.02 and phi.min() >= -math.pi and phi.max() <= math.pi
    m = initial_vectors(theta[:5], phi[:5], -1.0)
    assert np.allclose(np.einsum("ij,ij->j", m, m), 1.0) and np.all(m[2] < 0)


def test_write_error_rate_check_4_2b():
    # PHYSICS 4.2b: i = 2, Delta = 60, tau0 = 7.640430e-10 s, 5 ns: WER 3.0631e-4 (Sun), 1.9708e-4 (exact)
    assert 1 - precessional_probability(60, 2, 5e-9, 7.640430e-10, "sun")[0] == pytest.approx(3.0631e-4, rel=1e-4)
    assert 1 - precessional_probability(60, 2, 5e-9, 7.640430e-10)[0] == pytest.approx(1.9708e-4, rel=1e-4)


def _drive(ir, ratio, temp):
    figs = figures(ir, temperature=temp)
    return figs, ratio * figs["i_c0"]


def test_initial_angle_ensemble_matches_the_closed_form():
    """2000 spins with Boltzmann initial angles and deterministic motion under a 2 x I_c0 step:
    P_sw(t) inside the 99.9 % binomial interval of the exact closed form (PHYSICS 4.2b)."""
    ir = example_card().ir()
    temp = 300.15
    figs, current = _drive(ir, 2.0, temp)
    sm = StochasticModel(ir, temperature=temp, drive="current")
    n = 2000
    res = sm.run(n, 5e-9, 1e-12, current_step(current).value, seed=21, thermal_field=False)
    ts = np.array([2.0, 2.5, 3.0, 4.0]) * 1e-9
    p_ens = res.switched_by(ts)
    # the reference sees the 10 ps ramp; the closed form a step: shift by half the ramp
    p_th = precessional_probability(figs["delta"], 2.0, ts - 5e-12, figs["tau_prec"])
    lo, hi = wilson_interval(np.round(p_th * n), n, z=3.29)
    assert np.all((p_ens >= lo - 0.01) & (p_ens <= hi + 0.01)), (p_ens, p_th)


@pytest.mark.simulator
@pytest.mark.slow
def test_simulator_ensembles_match_reference_and_closed_form(ngspice, vacask):
    """The same drawn initial angles in ngspice (60 instances) and VACASK (200 instances): every
    instance crosses the equator within 2 % of the reference ensemble's time, and the switching
    probabilities sit inside the binomial intervals of the closed form."""
    ir = example_card().ir()
    temp = 300.15
    figs, current = _drive(ir, 2.0, temp)
    n = 200
    tilt, phi = sample_initial_angles(figs["delta"], n, np.random.default_rng(7))
    sm = StochasticModel(ir, temperature=temp, drive="current")
    ref = sm.run(n, 4.5e-9, 0.5e-12, current_step(current).value, seed=0, m0=initial_vectors(tilt, phi, -1.0),
                 thermal_field=False)
    vac = simulator_ensembles(ir, tilt, phi, current, -1.0, temp, 4.5e-9, simulators=("vacask",), chunk=100,
                              max_step=4e-12)["vacask"]
    ngs = simulator_ensembles(ir, tilt[:60], phi[:60], current, -1.0, temp, 4.5e-9, simulators=("ngspice",),
                              chunk=10, max_step=4e-12)["ngspice"]
    for name, got, want in (("vacask", vac, ref.t_cross), ("ngspice", ngs, ref.t_cross[:60])):
        assert np.array_equal(np.isnan(got), np.isnan(want)), name
        ok = ~np.isnan(want)
        assert np.max(np.abs(got[ok] / want[ok] - 1)) < 0.02, name
    ts = np.array([2.0, 2.5, 3.0, 4.0]) * 1e-9
    p_th = precessional_probability(figs["delta"], 2.0, ts - 5e-12, figs["tau_prec"])
    for name, tc in (("vacask", vac), ("ngspice", ngs)):
        k = (np.where(np.isnan(tc), np.inf, tc)[None, :] <= ts[:, None]).sum(axis=1)
        lo, hi = wilson_interval(k, len(tc), z=3.29)
        assert np.all((p_th >= lo - 0.01) & (p_th <= hi + 0.01)), (name, k / len(tc), p_th)
