"""Physics blocks against published formulas and worked values.

Each expected value is computed here from the published formula (written out independently of
compactgen/physics) and compared with the block; the numbers in comments are the worked values
of the project's physics notes, re-derived here.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from numpy.testing import assert_allclose
from scipy import constants as C
from scipy.integrate import solve_ivp

from compactgen.model import constants as K
from compactgen.physics import anisotropy, geometry, macrospin, switching, thermal, torques, tunnelling
from compactgen.physics.constants import const_values

MU0 = C.mu_0
GAMMA = abs(C.physical_constants["electron gyromag. ratio"][0])
GAMMA0 = MU0 * GAMMA
NUM = const_values()

# REF free layer of the physics notes (illustrative round numbers, not a measured stack)
MS, KI, TF = 1.0e6, 1.3e-3, 1.3e-9
KU = KI / TF
HK = 2 * KU / (MU0 * MS)
HKEFF_FILM = HK - MS


def ev(expr) -> float:
    return float(sp.sympify(expr).xreplace(NUM).evalf(17))


# ---- constants: CODATA 2022 through scipy.constants ------------------------------------------
def test_constants_are_codata_2022():
    # source: CODATA 2022 (scipy.constants 1.17); exact SI values for e, hbar, k_B
    assert K.Q_E == 1.602176634e-19
    assert K.K_B == 1.380649e-23
    assert_allclose(K.HBAR, 1.054571817e-34, rtol=1e-9)
    assert_allclose(K.MU0, 1.25663706127e-6, rtol=1e-11)  # CODATA 2022, not 4*pi*1e-7
    assert_allclose(K.GAMMA_E / (2 * math.pi), 28.024951386e9, rtol=1e-9)  # gamma/2pi in Hz/T
    assert abs(K.MU0 / (4e-7 * math.pi) - 1) < 1e-9


def test_unit_facts_of_the_trade():
    # common practice, no source: 1 Oe = 1000/(4 pi) A/m; mu0 H = 1 mT <-> 795.774716 A/m
    from compactgen.model.units import to_si

    assert_allclose(to_si("1 Oe", "A/m"), 1000 / (4 * math.pi), rtol=1e-12)
    assert_allclose(to_si("1 mT", "A/m"), 1e-3 / MU0, rtol=1e-12)
    assert_allclose(to_si("1e8 A/cm^2", "A/m^2"), 1e12, rtol=1e-12)
    assert_allclose(to_si("10 ohm*um^2", "ohm*m^2"), 1e-11, rtol=1e-12)
    assert_allclose(to_si("25 degC", "K"), 298.15, rtol=1e-12)


# ---- tunnelling ------------------------------------------------------------------------------
@pytest.mark.parametrize("p, tmr", [(0.5, 0.666667), (0.6, 1.125)])
def test_julliere(p, tmr):
    # M. Julliere, Phys. Lett. 54A, 225 (1975): TMR = 2 P1 P2 / (1 - P1 P2) (normalised by R_P)
    assert_allclose(ev(tunnelling.julliere_tmr(p, p)), 2 * p * p / (1 - p * p), rtol=1e-12)
    assert_allclose(ev(tunnelling.julliere_tmr(p, p)), tmr, atol=1e-6)


def test_julliere_inverse_at_tmr_130_percent():
    # worked value: TMR = 1.3 <=> P = 0.627646 (physics notes 7.1)
    p = sp.Symbol("p", positive=True)
    sol = sp.nsolve(tunnelling.julliere_tmr(p, p) - 1.3, p, 0.6)
    assert_allclose(float(sol), 0.627646, atol=1e-6)


def test_conductance_linear_in_cos_theta():
    # J. C. Slonczewski, Phys. Rev. B 39, 6995 (1989): G(theta) = Gbar + dG/2 cos(theta)
    rp, rap = 1000.0, 2300.0
    r90 = 1 / ev(tunnelling.conductance_angle(1 / rp, 1 / rap, 0.0))
    r60 = 1 / ev(tunnelling.conductance_angle(1 / rp, 1 / rap, 0.5))
    assert_allclose(r90, 2 * rp * rap / (rp + rap), rtol=1e-12)
    assert_allclose(r90, 1393.939394, rtol=1e-9)
    assert_allclose(r60, 1164.556962, rtol=1e-9)
    assert 1 / ev(tunnelling.conductance_angle(1 / rp, 1 / rap, 1.0)) == pytest.approx(rp, rel=1e-14)
    assert 1 / ev(tunnelling.conductance_angle(1 / rp, 1 / rap, -1.0)) == pytest.approx(rap, rel=1e-14)


def test_tmr_bias_and_ra():
    # TMR(V) = TMR0/(1+(V/Vh)^2), common practice, no source; R = RA/area
    assert_allclose(ev(tunnelling.tmr_bias(1.3, 0.3, 0.5)), 0.955882, atol=1e-6)
    area = ev(geometry.disk_area(40e-9))
    assert_allclose(area, math.pi * (40e-9) ** 2 / 4, rtol=1e-14)
    assert_allclose(ev(tunnelling.resistance_from_ra(10e-12, area)), 7957.747155, rtol=1e-9)


def test_mtj_conductance_states():
    area = math.pi * (40e-9) ** 2 / 4
    g_p = ev(tunnelling.mtj_conductance(5e-12, area, 1.5, 0.5, 0.0, 1.0))
    g_ap = ev(tunnelling.mtj_conductance(5e-12, area, 1.5, 0.5, 0.0, -1.0))
    assert_allclose(1 / g_p, 5e-12 / area, rtol=1e-13)
    assert_allclose(g_p / g_ap - 1, 1.5, rtol=1e-13)
    g_ap_half = ev(tunnelling.mtj_conductance(5e-12, area, 1.5, 0.5, 0.5, -1.0))
    assert_allclose(g_p / g_ap_half - 1, 0.75, rtol=1e-13)  # TMR halves at V = Vh


def test_wall_readout_slices():
    # physics notes 6.5: R_P = 1 kOhm, TMR = 1.3, L = 100 nm, width = 6.352727 nm
    rp, rap, L, w = 1000.0, 2300.0, 100e-9, 6.352727e-9
    for q, expected in ((25e-9, 1735.8284), (50e-9, 1393.9394), (75e-9, 1164.5663)):
        mz = ev(tunnelling.sharp_wall_fraction(q, L, w))
        g = ev(tunnelling.conductance_angle(1 / rp, 1 / rap, mz))
        assert_allclose(1 / g, expected, rtol=1e-6)


# ---- anisotropy and demagnetisation -----------------------------------------------------------
def test_cylinder_demag_factors():
    # D.-X. Chen, J. A. Brug and R. B. Goldfarb, IEEE Trans. Magn. 27, 3601 (1991), table value
    # 0.3116 for a cylinder of unit aspect ratio (from memory); notes 1.3a/b re-derived values
    assert_allclose(geometry.cylinder_demag_nz(1.0, 1.0), 0.31158, atol=1e-4)
    assert_allclose(geometry.cylinder_demag_nz(40e-9, 1.3e-9), 0.91075, atol=1e-4)
    assert_allclose(geometry.cylinder_demag_nz(20e-9, 1.3e-9), 0.85012, atol=1e-4)
    # limits: thin disk -> 1, long rod -> 0
    assert geometry.cylinder_demag_nz(1.0, 1e-4) > 0.999
    assert geometry.cylinder_demag_nz(1.0, 200.0) < 0.01


def test_effective_anisotropy_ref():
    hk = ev(anisotropy.anisotropy_field(anisotropy.uniaxial_energy_density(0, KI, TF), MS))
    assert_allclose(hk, 1.591549e6, rtol=1e-6)
    nz = geometry.cylinder_demag_nz(40e-9, 1.3e-9)
    hke = ev(anisotropy.effective_anisotropy_field(hk, MS, (1 - nz) / 2, nz))
    assert_allclose(hke, 7.254191e5, rtol=1e-4)
    assert_allclose(ev(anisotropy.effective_anisotropy_field(hk, MS, 0, 1)), 5.915494e5, rtol=1e-6)
    assert_allclose(ev(anisotropy.effective_energy_density(HKEFF_FILM, MS)), 3.716815e5, rtol=1e-6)


# ---- torques -------------------------------------------------------------------------------
def test_spin_hall_field():
    # L. Liu et al., Phys. Rev. Lett. 109, 096602 (2012): H_SH = hbar theta J / (2 e mu0 Ms t_F)
    h = ev(torques.spin_torque_field(1e11, 0.1, 1e6, 1e-9))
    assert_allclose(h, C.hbar * 0.1 * 1e11 / (2 * C.e * MU0 * 1e6 * 1e-9), rtol=1e-12)
    assert_allclose(h, 2.618942e3, rtol=1e-6)
    assert_allclose(MU0 * h, 3.291060e-3, rtol=1e-6)


# ---- LLG --------------------------------------------------------------------------------------
def _llg_numeric():
    m = sp.symbols("m0:3", real=True)
    h = sp.symbols("h0:3", real=True)
    p = sp.symbols("p0:3", real=True)
    a, hdl, hfl = sp.symbols("a hdl hfl", real=True)
    rhs = macrospin.llg_explicit(m, h, a, hdl, hfl, p)
    return sp.lambdify([m, h, a, hdl, hfl, p], list(rhs.xreplace(NUM)), "numpy")


def test_explicit_llg_equals_implicit_gilbert_solve():
    # T. L. Gilbert, IEEE Trans. Magn. 40, 3443 (2004); J. C. Slonczewski, J. Magn. Magn. Mater.
    # 159, L1 (1996): solve (I - a [m]x) mdot = T directly and compare with the explicit form
    f = _llg_numeric()
    rng = np.random.default_rng(7)
    for _ in range(100):
        m = rng.normal(size=3)
        m /= np.linalg.norm(m)
        p = rng.normal(size=3)
        p /= np.linalg.norm(p)
        h = rng.normal(size=3) * 1e5
        a, hdl, hfl = rng.uniform(0.001, 0.5), rng.normal() * 1e4, rng.normal() * 1e4
        torque = -GAMMA0 * np.cross(m, h) - GAMMA0 * hdl * np.cross(m, np.cross(m, p)) - GAMMA0 * hfl * np.cross(m, p)
        mx = np.array([[0, -m[2], m[1]], [m[2], 0, -m[0]], [-m[1], m[0], 0]])
        direct = np.linalg.solve(np.eye(3) - a * mx, torque)
        assert_allclose(f(m, h, a, hdl, hfl, p), direct, rtol=1e-10, atol=1e-10 * np.abs(direct).max())


def test_damped_precession_closed_form():
    # exact solution of the Gilbert equation in a static field (notes 1.4b): tan(theta/2) decays as
    # exp(-a gamma0 H t/(1+a^2)); phi = gamma0 H t/(1+a^2)
    f = _llg_numeric()
    H, a, th0 = 0.1 / MU0, 0.1, math.radians(30)
    sol = solve_ivp(lambda t, m: f(m, (0, 0, H), a, 0, 0, (0, 0, 1)), (0, 1e-9),
                    [math.sin(th0), 0, math.cos(th0)], method="DOP853", rtol=1e-11, atol=1e-13)
    m = sol.y[:, -1]
    th = 2 * math.atan(math.tan(th0 / 2) * math.exp(-a * GAMMA0 * H * 1e-9 / (1 + a * a)))
    phi = GAMMA0 * H * 1e-9 / (1 + a * a)
    assert_allclose(m[2], math.cos(th), atol=1e-6)
    assert_allclose(m[2], 0.99561609, atol=1e-6)
    assert_allclose(math.atan2(m[1], m[0]) % (2 * math.pi), phi % (2 * math.pi), atol=1e-5)
    assert_allclose(phi % (2 * math.pi), 4.867883, atol=1e-5)


def test_kittel_frequency():
    # C. Kittel, Phys. Rev. 73, 155 (1948): f = (gamma/2pi) mu0 sqrt[(H+Hk+(Nx-Nz)Ms)(H+Hk+(Ny-Nz)Ms)]
    f0 = ev(macrospin.kittel_frequency(0, HK, MS, (0, 0, 1)))
    f1 = ev(macrospin.kittel_frequency(0.1 / MU0, HK, MS, (0, 0, 1)))
    assert_allclose(f0, GAMMA / (2 * math.pi) * MU0 * HKEFF_FILM, rtol=1e-12)
    assert_allclose(f0, 20.832710e9, rtol=1e-6)
    assert_allclose(f1, 23.635205e9, rtol=1e-6)
    assert_allclose(ev(macrospin.kittel_frequency(0, HK, MS, (0.05, 0.05, 0.9))), 26.115289e9, rtol=1e-6)
    assert_allclose(ev(macrospin.kittel_frequency(0, HK, MS, (0.04, 0.06, 0.9))), 26.112914e9, rtol=1e-6)


# ---- STT switching ------------------------------------------------------------------------------
def test_critical_current_worked_values():
    # J. Z. Sun, Phys. Rev. B 62, 570 (2000): I_c0 = (2e/hbar)(alpha/eta) mu0 Ms V H_k,eff = (4 e alpha/(hbar eta)) E_b
    eb = 60 * C.k * 300
    assert_allclose(4 * C.e * 0.01 / (C.hbar * 0.6) * eb, 2.517090e-5, rtol=1e-6)
    vol = math.pi * (10e-9) ** 2 * 1.3e-9
    ic0 = ev(switching.stt_critical_current(0.01, 0.6, MS, vol, HKEFF_FILM))
    keff = MU0 * MS * HKEFF_FILM / 2
    assert_allclose(ic0, 4 * C.e * 0.01 / (C.hbar * 0.6) * keff * vol, rtol=1e-12)
    assert_allclose(ic0, 1.537472e-5, rtol=1e-6)
    assert_allclose(ic0 / (math.pi * (10e-9) ** 2), 4.893924e10, rtol=1e-6)
    delta = ev(thermal.thermal_stability(thermal.barrier_energy(keff, vol), 300.0))
    assert_allclose(delta, 36.6488, rtol=1e-5)


def test_switching_time_integral_and_sun():
    # exact macrospin integral (notes 4.2, derived) and J. Z. Sun, Phys. Rev. B 62, 570 (2000)
    tau0 = ev(switching.precession_time_scale(0.01, HKEFF_FILM))
    assert_allclose(tau0, (1 + 1e-4) / (0.01 * GAMMA0 * HKEFF_FILM), rtol=1e-12)
    assert_allclose(tau0, 7.640430e-10, rtol=1e-6)
    th0 = math.sqrt(1 / 120)
    integral = ev(switching.switching_integral(2, th0))
    assert_allclose(integral, 2.626180, rtol=1e-5)
    assert_allclose(tau0 * integral, 2.006514e-9, rtol=1e-5)
    assert_allclose(ev(switching.sun_switching_time(tau0, 2, th0)), tau0 * math.log(math.pi / (2 * th0)), rtol=1e-12)
    assert_allclose(ev(switching.sun_switching_time(tau0, 2, th0)), 2.173953e-9, rtol=1e-5)


@pytest.mark.parametrize("n, tau", [(1, 1.068647e4), (2, 3.269017e-3)])
def test_activated_switching_time(n, tau):
    # R. H. Koch, J. A. Katine, J. Z. Sun, Phys. Rev. Lett. 92, 088302 (2004) (n = 1);
    # T. Taniguchi, H. Imamura, arXiv:1010.5845 (n = 2)
    value = ev(thermal.activated_switching_time(1e-9, 60, 0.5, n))
    assert_allclose(value, 1e-9 * math.exp(60 * 0.5**n), rtol=1e-12)
    assert_allclose(value, tau, rtol=1e-6)


def test_retention_and_brown_prefactor():
    # Neel-Brown with tau0 = 1 ns (common practice): Delta = 40 gives 7.4589 years
    t = ev(thermal.neel_brown_time(1e-9, 40))
    assert_allclose(t / (365.25 * 86400), 7.4589, rtol=1e-4)
    # W. F. Brown, Phys. Rev. 130, 1677 (1963): attempt time tau_N e^-Delta, notes 4.3d
    att = ev(thermal.brown_relaxation_time(0.01, HKEFF_FILM, 60)) / math.exp(60)
    assert_allclose(att, 8.7415e-11, rtol=1e-4)


def test_thermal_angles():
    # notes 4.4 (derived): mode of p(theta) ~ theta exp(-Delta theta^2) is sqrt(1/(2 Delta))
    assert_allclose(ev(thermal.thermal_mode_angle(60)), 0.091287, atol=1e-6)
