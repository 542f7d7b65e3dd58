"""Physics used by the fit, against the check values of PHYSICS.md (sections 4, 6) and independent
numerics (scipy quadrature, root finding).  Each check names its published source.

Constants come from scipy.constants (CODATA 2022), independently of compactgen.constants.
"""
from __future__ import annotations

import math
import types

import numpy as np
import pytest
import sympy as sp
from scipy import constants as C
from scipy import integrate, optimize

from compactgen.calibrate import wall
from compactgen.calibrate.models import theta_min
from compactgen.physics import coercivity, switching, switching_probability, thermal, wall_motion
from compactgen.physics.constants import const_values

MU0 = C.mu_0
GAMMA0 = MU0 * abs(C.physical_constants["electron gyromag. ratio"][0])
HBAR, QE = C.hbar, C.e


def num(expr) -> float:
    """A closed-form sympy value as a float (scipy for special functions such as erfcinv)."""
    return float(sp.lambdify([], sp.sympify(expr).xreplace(const_values()), modules=["scipy", "numpy"])())


# REF free layer of PHYSICS 0 with t_F = 1 nm: K_u = 1e6 J/m^3 -> K_eff = 3.716815e5 J/m^3
TRACK = {"ms": 1e6, "t_free": 1e-9, "ki": 1e-3, "kb": 0.0, "a_ex": 15e-12, "d_dmi": 1e-3, "alpha": 0.3,
         "theta_sh": 0.1}


def test_static_wall_check_6_1():
    """PHYSICS CHECK 6.1 (wall width, Tarasenko N_x, H_K, H_D; Thiaville et al., EPL 100, 57002 (2012))."""
    keff = 3.716815e5
    width = num(wall_motion.wall_width(15e-12, keff))
    assert width == pytest.approx(math.sqrt(15e-12 / keff), rel=1e-12)
    assert width == pytest.approx(6.352727e-9, rel=1e-6)
    nx = num(wall_motion.wall_demag_factor(1e-9, width))
    assert nx == pytest.approx(0.034731, rel=2e-5)  # 5 significant digits in PHYSICS
    assert num(wall_motion.wall_shape_field(1e6, nx)) == pytest.approx(3.473085e4, rel=1e-6)
    h_d = num(wall_motion.dmi_field(1e-3, 1e6, width))
    assert h_d == pytest.approx(1e-3 / (MU0 * 1e6 * width), rel=1e-12)
    assert h_d == pytest.approx(1.252651e5, rel=1e-6)
    # the track model derives the same numbers from (ms, t_free, ki, kb, a_ex, d_dmi)
    m = wall.material(TRACK)
    assert m["keff"] == pytest.approx(keff, rel=1e-6)
    assert m["width"] == pytest.approx(6.352727e-9, rel=1e-6)
    assert m["h_k"] == pytest.approx(3.473085e4, rel=1e-6)
    assert m["h_d"] == pytest.approx(1.252651e5, rel=1e-6)


def test_field_driven_schryer_walker_check_6_3a():
    """PHYSICS CHECK 6.3a: D = 0, alpha = 0.3 (N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974))."""
    vals = dict(TRACK, d_dmi=0.0)
    m = wall.material(vals)
    h_w = num(wall_motion.walker_field(0.3, m["h_k"]))
    assert h_w == pytest.approx(5.209628e3, rel=1e-6)
    assert h_w * MU0 * 1e3 == pytest.approx(6.5466, abs=1e-4)
    v_w = num(wall_motion.field_velocity_steady(h_w, 1, 0.3, m["width"]))
    assert v_w == pytest.approx(GAMMA0 * m["width"] * h_w / 0.3, rel=1e-12)
    assert v_w == pytest.approx(24.410698, rel=1e-6)
    assert num(wall_motion.field_velocity_steady(0.9 * h_w, 1, 0.3, m["width"])) == pytest.approx(21.969628, rel=1e-6)
    v2 = num(wall_motion.field_velocity_precessional(2 * h_w, 1, 0.3, m["width"], h_w))
    assert v2 == pytest.approx(10.031883, rel=1e-5)
    # the numerical steady state / precession average reproduces both branches
    v, phi, steady = wall.steady_state(vals, 0.0, np.array([0.9 * h_w, 2 * h_w]))
    assert steady.tolist() == [True, False]
    assert v[0] == pytest.approx(21.969628, rel=1e-6)
    assert v[1] == pytest.approx(10.031883, rel=1e-5)
    # both walls move oppositely under a field
    v_down, _, _ = wall.steady_state(vals, 0.0, 0.9 * h_w, q=-1)
    assert float(v_down) == pytest.approx(-21.969628, rel=1e-6)


def test_dmi_velocity_and_walker_field_checks_6_3b_c():
    """PHYSICS CHECK 6.3b (v_D = (pi/2) gamma_e D / Ms) and 6.3c (Walker field with DMI)."""
    v_d = num(wall_motion.dmi_velocity(1e-3, 1e6))
    assert v_d == pytest.approx(math.pi / 2 * GAMMA0 / MU0 * 1e-3 / 1e6, rel=1e-12)
    assert v_d == pytest.approx(276.5952, rel=1e-6)
    # exact DMI Walker field: the largest H_z with a steady state
    steady_at = lambda h: bool(wall.steady_state(TRACK, 0.0, h)[2])  # noqa: E731
    h_w = optimize.brentq(lambda h: 0.5 - steady_at(h), 5.0e4, 7.0e4, xtol=1.0)
    assert h_w == pytest.approx(5.991639e4, rel=1e-4)
    m = wall.material(TRACK)
    assert math.pi / 2 * 0.3 * m["h_d"] == pytest.approx(5.902977e4, rel=1e-6)


# PHYSICS CHECK 6.3d: J, speed closed form (H_K = 0), speed with H_K (root = ODE), steady angle
CHECK_6_3D = [
    (1e11, 19.2295, 19.2076, 3.0572),
    (5e11, 91.0134, 88.9786, 2.7471),
    (1e12, 158.1455, 149.9471, 2.4621),
    (1.3e12, 185.7085, 174.3129, 2.3401),
    (3e12, 249.5218, 234.6854, 1.9887),
    (1e13, 273.7909, 267.2218, 1.7099),
]


def test_sot_steady_state_check_6_3d():
    """PHYSICS CHECK 6.3d, SOT-driven Neel wall (Q = +1, our signs give v < 0): E. Martinez et al.,
    J. Appl. Phys. 115, 213909 (2014) for the model; numbers re-derived in PHYSICS."""
    m = wall.material(TRACK)
    j = np.array([c[0] for c in CHECK_6_3D])
    h_sh = HBAR * 0.1 * j / (2 * QE * MU0 * 1e6 * 1e-9)
    assert h_sh[0] == pytest.approx(2.61894e3, rel=2e-6)
    closed = [num(wall_motion.sot_velocity_without_hk(h, 0.3, m["width"], m["h_d"])) for h in h_sh]
    v, phi, steady = wall.steady_state(TRACK, j)
    assert steady.all()
    for k, (_, v_closed, v_hk, phi_ss) in enumerate(CHECK_6_3D):
        assert closed[k] == pytest.approx(-v_closed, rel=1e-5)
        assert v[k] == pytest.approx(-v_hk, rel=1e-5)
        assert (phi[k] % (2 * math.pi)) == pytest.approx(phi_ss, abs=1e-4)
    # with H_K = 0 the root of the angle equation (wall_angle_rate) reproduces the closed form
    phi_s = sp.Symbol("phi", real=True)
    c = const_values()
    for k, h in enumerate(h_sh):
        rate = sp.lambdify(phi_s, wall_motion.wall_angle_rate(phi_s, 1, 0.3, 0, h, 0, m["h_d"]).xreplace(c))
        vel = sp.lambdify(phi_s, wall_motion.wall_velocity(phi_s, 1, 0.3, m["width"], 0, h, 0, m["h_d"]).xreplace(c))
        root = optimize.brentq(rate, math.pi / 2 + 1e-9, math.pi, xtol=1e-15)
        assert vel(root) == pytest.approx(closed[k], rel=1e-9)
    # down-up wall: same direction under SOT
    v_q, _, _ = wall.steady_state(TRACK, j, q=-1)
    assert np.allclose(v_q, v, rtol=1e-9)
    j_half = num(wall_motion.sot_half_saturation_current(0.3, 1e-9, 1e-3, 0.1, m["width"]))
    assert j_half == pytest.approx(1.434912e12, rel=1e-6)


def test_thermally_activated_switching_field():
    """Sharrock's law (M. P. Sharrock, J. Appl. Phys. 76, 6413 (1994), form from memory) and the swept-field
    median, against the escape-rate integral done by quadrature (barrier K V (1 - h)^2, PHYSICS 3)."""
    hk, delta, tau0 = 5e5, 60.0, 1e-9
    # constant field held 1 s: survival exp(-(t/tau0) exp(-Delta (1-h)^2)) = 1/2
    h_c = num(coercivity.sharrock_switching_field(hk, delta, tau0, 1.0))
    h = h_c / hk
    assert math.exp(-(1.0 / tau0) * math.exp(-delta * (1 - h) ** 2)) == pytest.approx(0.5, rel=1e-12)
    assert h == pytest.approx(1 - math.sqrt(math.log(1e9 / math.log(2)) / 60), rel=1e-12)
    # linear ramp: find the median by quadrature of the rate and root finding
    for rate in (1e3, 1e6, 1e9):  # A/m/s
        def survival(hf):
            integral, _ = integrate.quad(lambda x: math.exp(-delta * (1 - x / hk) ** 2) / tau0,
                                         -2 * hk, hf, epsabs=0, epsrel=1e-12, limit=400,
                                         points=[hf - 0.2 * hk, hf - 0.05 * hk])
            return math.exp(-integral / rate)
        median = optimize.brentq(lambda hf: survival(hf) - 0.5, 0.05 * hk, 0.999 * hk, xtol=1e-9 * hk)
        closed = num(coercivity.ramp_switching_field(hk, delta, tau0, rate))
        assert closed == pytest.approx(median, rel=1e-7)
        assert num(coercivity.ramp_survival_probability(closed, hk, delta, tau0, rate)) == pytest.approx(0.5, rel=1e-9)
        # Sharrock with the effective hold time H_k / (2 Delta (1 - h) R) is the large-barrier limit
        t_eff = hk / (2 * delta * (1 - closed / hk) * rate)
        assert num(coercivity.sharrock_switching_field(hk, delta, tau0, t_eff)) == pytest.approx(closed, rel=3e-3)


def test_switching_probability_checks_4_2b_4_3b():
    """PHYSICS CHECK 4.3b (R. H. Koch, J. A. Katine, J. Z. Sun, PRL 92, 088302 (2004); n = 2: T. Taniguchi,
    H. Imamura, arXiv:1010.5845) and CHECK 4.2b (exact macrospin integral, derived in PHYSICS 4.2)."""
    t, tau0, delta = 10e-9, 1e-9, 60.0
    for n, tau_ref, p_ref in ((2, 1.102318e-8, 0.596339), (1, 1.627548e-4, 6.144024e-5)):
        tau = num(thermal.activated_switching_time(tau0, delta, 0.8, n))
        assert tau == pytest.approx(tau_ref, rel=1e-6)
        p = num(switching_probability.activated_switching_probability(t, tau))
        assert p == pytest.approx(p_ref, rel=1e-5)
        assert p == pytest.approx(-math.expm1(-t / (tau0 * math.exp(delta * 0.2**n))), rel=1e-12)
    # precessional regime: i = 2, Delta = 60, tau_prec = 7.640430e-10 s, t = 5 ns
    i, th = sp.symbols("i theta", positive=True)
    fn = types.SimpleNamespace(integral=sp.lambdify((i, th), switching.switching_integral(i, th), "numpy"))
    theta = float(theta_min(fn, np.array([2.0]), np.array([5e-9 / 7.640430e-10]))[0])
    assert theta == pytest.approx(1.8124e-3, rel=1e-4)
    wer = 1 - num(switching_probability.precessional_switching_probability(60.0, theta))
    assert wer == pytest.approx(1.9708e-4, rel=1e-4)
    # the integral from the thermal mode angle gives CHECK 4.2a: 2.626180 (units of tau_prec)
    assert float(fn.integral(2.0, math.sqrt(1 / 120))) == pytest.approx(2.626180, rel=1e-6)


def test_switching_field_spread_against_sampling():
    """The Gumbel width of coercivity.switching_field_spread (derived) against 20000 switching fields drawn
    from ramp_survival_probability by inversion: the standard deviation agrees within 8 % (the Gumbel form
    drops the curvature of the hazard; measured 4.5-6 % high here) and the sample median is the closed-form
    median to sampling precision."""
    hk, tau0 = 3.9e5, 1e-9
    h = sp.Symbol("H")
    rng = np.random.default_rng(3)
    for delta, rate in ((40.0, 1e-2 / MU0), (77.0, 10.0 / MU0)):
        surv = sp.lambdify(h, coercivity.ramp_survival_probability(h, hk, delta, tau0, rate), "scipy")
        u = rng.uniform(size=20000)
        lo, hi = np.full(u.size, -hk), np.full(u.size, hk * (1 - 1e-12))
        for _ in range(80):
            mid = 0.5 * (lo + hi)
            later = surv(mid) > u
            lo, hi = np.where(later, mid, lo), np.where(later, hi, mid)
        fields = 0.5 * (lo + hi)
        h_c = num(coercivity.ramp_switching_field(hk, delta, tau0, rate))
        assert float(np.median(fields)) == pytest.approx(h_c, rel=1e-3)
        spread = num(coercivity.switching_field_spread(hk, delta, h_c))
        assert float(np.std(fields)) == pytest.approx(spread, rel=0.08)
