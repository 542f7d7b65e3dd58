"""Heavy-metal line and spin-orbit-torque switching: physics blocks and the sot-mtj model against
published formulas and worked values (PHYSICS 1.4, 5, 10, 11); each source is named beside its check."""
from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy import constants as C

from compactgen.harness.benches import Pwl, crossing_time
from compactgen.devices import get_kind
from compactgen.devices.write_line import line_drive
from compactgen.physics import heavy_metal, spin_orbit, torques
from compactgen.physics.constants import const_values
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures

MU0 = C.mu_0
HBAR = C.hbar
E = C.e
GAMMA0 = MU0 * abs(C.physical_constants["electron gyromag. ratio"][0])


def num(expr) -> float:
    return float(sp.sympify(expr).xreplace(const_values()).evalf(17))


# ---- heavy-metal line (PHYSICS 10: Ohm's law; Joule heating; Ampere's law for a wide sheet) ----
def test_write_line_worked_values():
    # PHYSICS 10, CHECK 10 (exact arithmetic): rho = 200 uohm cm, 100 nm x 50 nm x 5 nm
    rho, length, w, t = 200e-8, 100e-9, 50e-9, 5e-9
    r = num(heavy_metal.line_resistance(rho, length, w, t))
    assert r == pytest.approx(800.0, rel=1e-12)
    i = 1e11 * w * t  # J = 1e11 A/m^2
    assert i == pytest.approx(2.5e-5, rel=1e-12)
    assert num(heavy_metal.current_density(i, w, t)) == pytest.approx(1e11, rel=1e-12)
    assert num(heavy_metal.joule_power(i, r)) == pytest.approx(5.0e-7, rel=1e-12)
    assert num(heavy_metal.pulse_energy(i, r, 1e-9)) == pytest.approx(5.0e-16, rel=1e-12)
    h_oe = num(heavy_metal.oersted_field(1e11, t))
    assert h_oe == pytest.approx(250.0, rel=1e-12)
    assert MU0 * h_oe * 1e3 == pytest.approx(0.3142, abs=1e-4)  # mT


def test_current_density_fact_of_the_trade():
    # common practice, no source (PHYSICS 11): 1e8 A/cm^2 = 1e12 A/m^2 is 20 uA in a 10 nm x 2 nm strip
    assert 1e12 * 10e-9 * 2e-9 == pytest.approx(2.0e-5, rel=1e-12)
    assert num(heavy_metal.current_density(2.0e-5, 10e-9, 2e-9)) == pytest.approx(1e12, rel=1e-12)


def test_current_at_position_blends_smoothly():
    x = sp.Symbol("x", real=True)
    e = heavy_metal.current_at_position(x, 0.0, 1.0, 3.0, 1.0)
    f = sp.lambdify(x, e)
    assert f(-30.0) == pytest.approx(1.0, abs=1e-12) and f(30.0) == pytest.approx(3.0, abs=1e-12)
    assert f(0.0) == pytest.approx(2.0, abs=1e-12)


# ---- spin Hall torque field (PHYSICS 1.4a; Liu et al., PRL 109, 096602 (2012)) ----------------
def test_spin_hall_field_worked_value():
    h = num(torques.spin_torque_field(1e11, 0.1, 1e6, 1e-9))
    assert h == pytest.approx(2.618942e3, rel=1e-6)
    assert MU0 * h * 1e3 == pytest.approx(3.291060, rel=1e-6)
    # the inverse used for thresholds
    assert num(spin_orbit.current_density_for_field(h, 0.1, 1e6, 1e-9)) == pytest.approx(1e11, rel=1e-12)


# ---- quasi-static SOT threshold (PHYSICS 5, CHECK 5a) -----------------------------------------
HK_EFF_REF = 2 * 1.0e6 / (MU0 * 1.0e6) - 1.0e6  # REF: K_u = 1.3 mJ/m^2 / 1.3 nm, Ms = 1 MA/m, thin film


def lee_threshold(ms, t_f, theta, h_k_eff, h_x):
    """K.-S. Lee, S.-W. Lee, B.-C. Min and K.-J. Lee, Appl. Phys. Lett. 102, 112410 (2013)
    (formula from memory, PHYSICS 5): J_c = (2e/hbar)(mu0 Ms t_F/theta)(H_k,eff/2 - H_x/sqrt 2)."""
    return 2 * E / HBAR * MU0 * ms * t_f / theta * (h_k_eff / 2 - h_x / math.sqrt(2))


def test_threshold_matches_lee_and_the_exact_torque_balance():
    assert HK_EFF_REF == pytest.approx(5.915494e5, rel=1e-6)
    h_x = 20e-3 / MU0
    exact = num(spin_orbit.current_density_for_field(spin_orbit.threshold_field(h_x, HK_EFF_REF), 0.3, 1e6, 1e-9))
    assert exact == pytest.approx(3.622007e12, rel=1e-6)  # PHYSICS CHECK 5a, exact f_min
    assert lee_threshold(1e6, 1e-9, 0.3, HK_EFF_REF, h_x) == pytest.approx(3.621319e12, rel=1e-6)
    assert exact == pytest.approx(lee_threshold(1e6, 1e-9, 0.3, HK_EFF_REF, h_x), rel=2e-4)
    zero = num(spin_orbit.current_density_for_field(spin_orbit.threshold_field(0, HK_EFF_REF), 0.3, 1e6, 1e-9))
    assert zero == pytest.approx(3.764557e12, rel=1e-6)  # H_x -> 0 limit: H_k,eff/2


def test_threshold_is_the_extremum_of_the_torque_balance():
    # independent check: brute-force minimum of f(theta) = H_x cos(theta) - (H_k/2) sin(2 theta)
    h_x = 20e-3 / MU0
    th = np.linspace(0, np.pi / 2, 2_000_001)
    f = h_x * np.cos(th) - HK_EFF_REF / 2 * np.sin(2 * th)
    assert num(spin_orbit.threshold_field(h_x, HK_EFF_REF)) == pytest.approx(-f.min(), rel=1e-9)
    theta = sp.Symbol("theta")
    assert num(spin_orbit.torque_balance(theta, h_x, HK_EFF_REF).subs(theta, 0.3)) == pytest.approx(
        h_x * math.cos(0.3) - HK_EFF_REF / 2 * math.sin(0.6), rel=1e-12)


# ---- the sot-mtj model ----------------------------------------------------------------------------
def sot_ir(**over):
    kind = get_kind("sot-mtj")
    vals = kind.table().defaults()
    vals.update(over)
    opts = {"demag": "thin-film"}
    vals = kind.derive_defaults(vals, opts)
    return kind.build_ir("sot_test", vals, opts), vals


def test_llg_with_spin_orbit_torque_matches_the_implicit_gilbert_equation():
    """The composed right-hand side (sigma = -y for current along +x, heavy metal below, signed theta_sh,
    field-like ratio xi_sot with the field along sigma) equals a
    direct solve of (I - alpha [m]x) dm/dt = T of the Gilbert form, PHYSICS 1.1-1.2 (T. L. Gilbert,
    IEEE Trans. Magn. 40, 3443 (2004))."""
    ir, v = sot_ir(alpha=0.07, theta_sh=-0.25, xi_sot=0.4, hx=15e3, hy=-4e3, hz=2e3, ki=1.0e-3, t_free=1.0e-9)
    model = ReferenceModel(ir)
    rng = np.random.default_rng(7)
    hk = 2 * (v["kv"] + v["ki"] / v["t_free"]) / (MU0 * v["ms"])
    for _ in range(20):
        m = rng.normal(size=3)
        m /= np.linalg.norm(m)
        vw = rng.uniform(-0.5, 0.5)
        nodes = {"w1": vw, "w2": -vw, "t": 0.0}  # symmetric drive: junction bottom at 0 V, no read current
        dm = model.rhs(nodes, m)
        r_line = v["rho_hm"] * v["line_length"] / (v["line_width"] * v["t_hm"])  # Ohm's law
        j = 2 * vw / r_line / (v["line_width"] * v["t_hm"])
        h_dl = HBAR * v["theta_sh"] * j / (2 * E * MU0 * v["ms"] * v["t_free"])
        h_fl = v["xi_sot"] * h_dl
        sigma = np.cross([1.0, 0.0, 0.0], [0.0, 0.0, 1.0])  # j_hat x n_hat (tests/test_conventions.py)
        h = np.array([v["hx"], v["hy"], v["hz"] + hk * m[2] - v["ms"] * m[2]])  # thin film: N = (0, 0, 1)
        torque = -GAMMA0 * np.cross(m, h) - GAMMA0 * h_dl * np.cross(m, np.cross(m, sigma)) \
            - GAMMA0 * h_fl * np.cross(m, sigma)
        mx = np.array([[0, -m[2], m[1]], [m[2], 0, -m[0]], [-m[1], m[0], 0]])
        direct = np.linalg.solve(np.eye(3) - v["alpha"] * mx, torque)
        assert np.allclose(dm, direct, rtol=1e-9, atol=1e-9 * np.abs(direct).max())


@pytest.mark.slow
def test_slow_ramp_switches_just_above_the_exact_threshold():
    """PHYSICS 5, CHECK 5b (an independent script): current ramped 0 -> J over 20 ns, held 20 ns,
    ramped down 20 ns: the free layer keeps its state at 0.99 J_c and switches at 1.01 J_c, and
    the final state follows -sign(J theta_sh H_x) (sigma = -y, tests/test_conventions.py)."""
    ir, v = sot_ir(alpha=0.1, ki=1.0e-3, t_free=1.0e-9, ms=1.0e6, theta_sh=0.3, hx=20e-3 / MU0, xi_sot=0.0)
    jc = figures(ir)["j_c_sot"]
    assert jc == pytest.approx(3.622007e12, rel=1e-6)
    results = {}
    for k in (0.99, 1.01):
        model = ReferenceModel(ir, {"state0": 1.0})  # J > 0, theta > 0, hx > 0: switching ends at m_z = -1
        drive = line_drive(model, k * jc * v["line_width"] * v["t_hm"])
        drives = {n: Pwl(((0.0, 0.0), (20e-9, x), (40e-9, x), (60e-9, 0.0))) for n, x in drive.items() if x}
        tr = model.transient(drives, 62e-9, t_eval=np.linspace(0, 62e-9, 6201), rtol=1e-8, atol=1e-10)
        results[k] = tr.states["mz"][-1]
        if k > 1:
            t_sw = crossing_time(tr.t, tr.states["mz"], 0.0, 0.0, -1)
            assert 19e-9 < t_sw < 25e-9  # during the hold, right after the ramp reached 1.01 J_c
    assert results[0.99] > 0.99
    assert results[1.01] < -0.99
