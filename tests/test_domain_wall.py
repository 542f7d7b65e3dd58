"""Domain wall in a HM/FM strip with DMI: physics blocks and the dw-mtj model against the published
1D collective-coordinate results and the worked values of PHYSICS 6 (sources named beside each check).

Inputs of PHYSICS 6.1: A = 15 pJ/m, K_eff = 3.716815e5 J/m^3 (K_u = 1 MJ/m^3, Ms = 1 MA/m, thin film),
t_F = 1 nm, D = 1 mJ/m^2; 6.3: alpha = 0.3, theta_SH = 0.1.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from scipy import constants as C
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from compactgen.harness.benches import Pulse, mean_rate_per_turn
from compactgen.model.card import load_card
from compactgen.devices import get_kind
from compactgen.devices.dw_mtj import steady_sot_velocity
from compactgen.devices.write_line import line_drive
from compactgen.physics import domain_wall as dwp
from compactgen.physics import tunnelling
from compactgen.physics.constants import const_values
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures

MU0 = C.mu_0
GAMMA_E = abs(C.physical_constants["electron gyromag. ratio"][0])
GAMMA0 = MU0 * GAMMA_E
A_EX, MS, T_F, D = 15e-12, 1.0e6, 1e-9, 1e-3
K_EFF = 1.0e6 - MU0 * MS**2 / 2
PHYSICS_6 = dict(a_ex=A_EX, ms=MS, t_free=T_F, ki=1.0e-3, kv=0.0, dmi=D, alpha=0.3, theta_sh=0.1,
                 track_length=2e-6, track_width=50e-9, mtj_start=900e-9, mtj_length=100e-9, xi_sot=0.0, j_max=2e13)


def num(expr) -> float:
    return float(sp.sympify(expr).xreplace(const_values()).evalf(17))


def dw_ir(**over):
    kind = get_kind("dw-mtj")
    vals = kind.table().defaults()
    vals.update(PHYSICS_6)
    vals.update(over)
    return kind.build_ir("dw_test", vals, {}), vals


# ---- 6.1 static wall ----------------------------------------------------------------------------
def test_static_wall_worked_values():
    # PHYSICS 6.1, CHECK 6.1 (tol 1e-6); N_x: A. A. Tarasenko et al., JMMM 189, 19 (1998) (from memory)
    assert K_EFF == pytest.approx(3.716815e5, rel=1e-6)
    delta = num(dwp.wall_width(A_EX, K_EFF))
    assert delta == pytest.approx(6.352727e-9, rel=1e-6)
    n_x = num(dwp.wall_demag_factor(T_F, delta))
    assert n_x == pytest.approx(0.034731, rel=1e-5)
    h_k = num(dwp.wall_anisotropy_field(n_x, MS))
    assert h_k == pytest.approx(3.473085e4, rel=1e-6)
    assert MU0 * h_k * 1e3 == pytest.approx(43.6441, rel=1e-5)
    h_d = num(dwp.dmi_field(D, MS, delta))
    assert h_d == pytest.approx(1.252651e5, rel=1e-6)
    assert MU0 * h_d * 1e3 == pytest.approx(157.4127, rel=1e-6)
    # the model's figures are the same blocks
    figs = figures(dw_ir()[0])
    assert figs["wall_width"] == pytest.approx(6.352727e-9, rel=1e-6)
    assert figs["h_kwall"] == pytest.approx(3.473085e4, rel=1e-6)
    assert figs["h_dmi"] == pytest.approx(1.252651e5, rel=1e-6)


def test_neel_threshold_of_the_rest_angle():
    """A full Neel wall needs |D| >= 4 K_perp Delta / pi = 1.765085e-4 J/m^2 (PHYSICS 6.1, CHECK 6.1;
    Thiaville et al., EPL 100, 57002 (2012)); below it the rest angle leaves pi."""
    delta = num(dwp.wall_width(A_EX, K_EFF))
    h_k = num(dwp.wall_anisotropy_field(dwp.wall_demag_factor(T_F, delta), MS))
    k_perp = MU0 * MS * h_k / 2
    d_neel = 4 * k_perp * delta / math.pi
    assert d_neel == pytest.approx(1.765085e-4, rel=1e-6)

    def phi0(d, charge=1):
        return num(dwp.rest_angle(h_k, num(dwp.dmi_field(d, MS, delta)), 0.0, charge))

    assert phi0(d_neel * 1.000001) == pytest.approx(math.pi, abs=1e-12)
    assert phi0(d_neel * 0.99) < math.pi - 0.1
    assert phi0(0.0) == pytest.approx(math.pi / 2, abs=1e-12)  # Bloch wall without DMI
    # PHYSICS 0: D > 0 makes the up -> down wall (Q = +1) adopt phi = pi; the down -> up wall phi = 0
    assert phi0(D) == pytest.approx(math.pi, abs=1e-12)
    assert phi0(D, charge=-1) == pytest.approx(0.0, abs=1e-6)


def test_drive_terms_are_the_gradient_of_the_wall_energy():
    """PHYSICS 6.2: Q qdot/Delta - alpha phidot = (gamma0/(2 mu0 Ms Delta)) d sigma/d phi with the wall
    energy of PHYSICS 6.1 written out here independently:
    sigma(phi) = 4 sqrt(A K) + 2 K_perp Delta cos^2 phi + Q pi D cos phi - pi Delta mu0 Ms (H_x cos phi + H_y sin phi)."""
    delta = math.sqrt(A_EX / K_EFF)
    h_k, h_x, h_y = 3.3e4, 2.1e4, -1.3e4
    k_perp = MU0 * MS * h_k / 2
    phi = sp.Symbol("phi", real=True)
    for charge in (1, -1):
        _, b = dwp.drive_terms(phi, 0.0, 0.0, 0.0, h_k, num(dwp.dmi_field(D, MS, delta)), h_x, h_y, 0.0, charge)
        fb = sp.lambdify(phi, sp.sympify(b).xreplace(const_values()))
        for p in np.linspace(0.1, 6.2, 13):
            dsig = (-4 * k_perp * delta * math.cos(p) * math.sin(p) - charge * math.pi * D * math.sin(p)
                    - math.pi * delta * MU0 * MS * (-h_x * math.sin(p) + h_y * math.cos(p)))
            assert fb(p) == pytest.approx(GAMMA0 / (2 * MU0 * MS * delta) * dsig, rel=1e-9, abs=1e-3)


# ---- 6.3 closed forms ---------------------------------------------------------------------------
def test_dmi_saturation_velocity_and_walker_fields():
    # PHYSICS 6.3, CHECK 6.3b: v_D = (pi/2) gamma_e D / Ms = 276.5952 m/s (Thiaville et al. 2012)
    v_d = num(dwp.dmi_saturation_velocity(D, MS))
    assert v_d == pytest.approx(276.5952, rel=1e-6)
    assert v_d == pytest.approx(math.pi / 2 * GAMMA_E * D / MS, rel=1e-12)
    # CHECK 6.3a: Walker field without DMI, alpha = 0.3 (Schryer & Walker, J. Appl. Phys. 45, 5406 (1974))
    delta = math.sqrt(A_EX / K_EFF)
    h_k = 3.473085e4
    h_w = num(dwp.walker_field_no_dmi(0.3, h_k))
    assert h_w == pytest.approx(5.209628e3, rel=1e-6)
    assert num(dwp.walker_field(0.3, h_k, 0.0)) == pytest.approx(h_w, rel=1e-12)  # the exact form at D = 0
    assert MU0 * h_w * 1e3 == pytest.approx(6.5466, rel=1e-4)
    v = [num(dwp.field_velocity(k * h_w, h_w, 0.3, delta)) for k in (1.0, 0.9, 2.0)]
    assert v == pytest.approx([24.410698, 21.969628, 10.031883], rel=1e-5)
    # CHECK 6.3c: with DMI the exact Walker field is alpha max_phi[-(H_K/2) sin 2phi - (pi/2) H_D sin phi]
    h_d = num(dwp.dmi_field(D, MS, delta))
    phi = sp.Symbol("phi", real=True)
    _, b = dwp.drive_terms(phi, 0.0, 0.0, 0.0, h_k, h_d, 0.0, 0.0, 0.0)
    fb = sp.lambdify(phi, sp.sympify(b).xreplace(const_values()) / GAMMA0)
    best = minimize_scalar(lambda p: -fb(p), bounds=(math.pi, 2 * math.pi), method="bounded",
                           options={"xatol": 1e-12})
    assert 0.3 * -best.fun == pytest.approx(5.991639e4, rel=1e-6)
    assert math.pi / 2 * 0.3 * h_d == pytest.approx(5.902977e4, rel=1e-6)
    # the closed form (quadratic in cos phi) gives the same, and the labelled comparison figures
    assert num(dwp.walker_field(0.3, h_k, h_d)) == pytest.approx(5.991639e4, rel=1e-6)
    assert num(dwp.walker_field_dmi_limit(0.3, h_d)) == pytest.approx(5.902977e4, rel=1e-6)


def restoring_max(h_k, h_d, h_x, charge):
    """max over phi of B/gamma0 from drive_terms (no current, H_y = 0): a dense grid, then a bounded
    scalar search around the best grid point (independent of the closed form)."""
    phi = sp.Symbol("phi", real=True)
    _, b = dwp.drive_terms(phi, 0.0, 0.0, 0.0, h_k, h_d, h_x, 0.0, 0.0, charge)
    fb = sp.lambdify(phi, sp.sympify(b).xreplace(const_values()) / GAMMA0)
    grid = np.linspace(0.0, 2 * math.pi, 20001)
    p0 = grid[np.argmax(fb(grid))]
    best = minimize_scalar(lambda p: -fb(p), bounds=(p0 - 1e-3, p0 + 1e-3), method="bounded",
                           options={"xatol": 1e-13})
    return -best.fun, float(np.min(fb(grid)))


@pytest.mark.parametrize("h_k, h_d, h_x, charge", [
    (3.5e4, 0.0, 0.0, 1), (3.5e4, 1e3, 0.0, 1), (3.5e4, 2e4, 0.0, 1), (3.5e4, 1.3e5, 0.0, 1),
    (3.5e4, 1.3e5, 2.5e4, 1), (3.5e4, 1.3e5, -4e4, 1), (2e4, -9e4, 1e4, 1), (2e4, 6e4, 3e4, -1),
    (8e4, 3e4, 1.5e5, 1), (1e3, 4e5, 0.0, 1)])
def test_walker_field_closed_form_is_the_maximum_of_the_restoring_torque(h_k, h_d, h_x, charge):
    """The exact Walker field of the 1D model, alpha max_phi[-(H_K/2) sin 2phi - (pi/2)(Q H_D - H_x) sin phi]
    (PHYSICS 6.3; model of A. Thiaville, S. Rohart, E. Jue, V. Cros and A. Fert, EPL 100, 57002 (2012)),
    against a numerical maximum of the drive terms, for D/H_K from 0 to 400, both signs of D, in-plane
    fields and both wall charges; without H_y the minimum is minus the maximum (same breakdown for -H_z)."""
    alpha = 0.2
    top, bottom = restoring_max(h_k, h_d, h_x, charge)
    h_w = num(dwp.walker_field(alpha, h_k, h_d, h_x, charge))
    assert h_w == pytest.approx(alpha * top, rel=1e-9)
    assert bottom == pytest.approx(-top, rel=1e-6)
    # bounded by the two comparison figures' forms: at least alpha H_K/2 and at least (pi/2) alpha |Q H_D - H_x|
    assert h_w >= num(dwp.walker_field_no_dmi(alpha, h_k)) * (1 - 1e-12)
    assert h_w >= math.pi / 2 * alpha * abs(charge * h_d - h_x) * (1 - 1e-12)


def test_walker_field_tends_to_thiaville_large_dmi_limit():
    """A. Thiaville et al., EPL 100, 57002 (2012) (from memory: H_W ~ (pi/2) alpha H_D for a wall dominated by
    DMI): the exact form approaches (pi/2) alpha H_D as H_K/H_D -> 0, with the leading correction
    H_W/((pi/2) alpha H_D) - 1 = (2/pi^2)(H_K/H_D)^2 (expanding the closed form, derived here); and alpha H_K/2
    (N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974)) as H_D -> 0."""
    alpha, h_d = 0.3, 1e5
    for ratio in (1e-1, 1e-2, 1e-3):
        h_w = num(dwp.walker_field(alpha, ratio * h_d, h_d))
        limit = num(dwp.walker_field_dmi_limit(alpha, h_d))
        assert h_w / limit - 1 == pytest.approx(2 / math.pi**2 * ratio**2, rel=0.02)
    h_k = 3e4
    for ratio in (1e-3, 1e-5):
        h_w = num(dwp.walker_field(alpha, h_k, ratio * h_k))
        # envelope theorem at D = 0: d(max)/dc = sin(pi/4), so H_W/(alpha H_K/2) - 1 = (pi/sqrt 2) H_D/H_K
        assert h_w / num(dwp.walker_field_no_dmi(alpha, h_k)) - 1 == pytest.approx(math.pi / math.sqrt(2) * ratio,
                                                                                    rel=1e-2)


EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
WALKER_CARDS = {  # the example card's track (made longer so the wall runs freely) and two of our own
    "example (D/H_K = 3.6)": dict(track_length=60e-6),
    "small DMI (D/H_K = 0.67)": dict(track_length=60e-6, dmi=0.15e-3),
    "negative DMI with hx = +15 mT, alpha = 0.1 (|D|/H_K = 1.8)": dict(track_length=60e-6, dmi=-0.4e-3,
                                                                      hx=15e-3 / MU0, alpha=0.1),
}


@pytest.mark.parametrize("name", list(WALKER_CARDS))
def test_reference_solver_breaks_down_at_the_walker_field(name):
    """The card's Walker field h_walker (exact maximum of the 1D restoring torque with DMI, H_K and hx;
    Thiaville et al., EPL 100, 57002 (2012) for the model) is where the reference solver's wall stops
    being steady: at +-0.98 h_walker the wall angle settles and the wall moves at gamma0 Delta hz/alpha
    (the steady state of the 1D equations), at +-1.02 h_walker the angle precesses (turns by more than
    2 pi) and the mean speed drops below that line.  Pinning off; no current."""
    vals = dict(load_card(EXAMPLES / "dwtrack_demo.toml").values, **WALKER_CARDS[name])
    ir = get_kind("dw-mtj").build_ir("walker", vals, {})
    figs = figures(ir)
    h_w, L = figs["h_walker"], vals["track_length"]
    assert figs["h_walker_no_dmi"] < h_w  # the no-DMI figure would put the breakdown far too low
    t_end = 20e-9
    for k in (0.98, 1.02, -0.98, -1.02):
        model = ReferenceModel(ir, {"h_dep": 0.0, "hz": k * h_w, "wall0": 0.5 * L})
        tr = model.transient({}, t_end, t_eval=np.linspace(0, t_end, 2001), rtol=1e-10, atol=1e-12)
        phi, q = tr.states["phi"], tr.states["xw"] * L
        line = GAMMA0 * figs["wall_width"] * k * h_w / vals["alpha"]
        if abs(k) < 1:
            assert abs(phi[-1] - phi[-201]) < 1e-4  # settled over the last 2 ns
            assert (q[-1] - q[-11]) / (tr.t[-1] - tr.t[-11]) == pytest.approx(line, rel=1e-5)
        else:
            assert abs(phi[-1] - phi[0]) > 2 * math.pi  # precessing
            assert abs((q[-1] - q[0]) / t_end) < 0.99 * abs(line)


CHECK_6_3D = {  # PHYSICS 6.3, CHECK 6.3d: J -> (speed H_K = 0, speed with H_K, phi_ss); PHYSICS writes v < 0 with
    # sigma = +y; with sigma = -y (Pt below, tests/test_conventions.py) the wall moves along the current: v > 0
    1e11: (19.2295, 19.2076, 3.0572),
    5e11: (91.0134, 88.9786, 2.7471),
    1e12: (158.1455, 149.9471, 2.4621),
    1.3e12: (185.7085, 174.3129, 2.3401),
    3e12: (249.5218, 234.6854, 1.9887),
    1e13: (273.7909, 267.2218, 1.7099),
}


def test_sot_velocity_closed_form_without_hk():
    """|v| = v_D x/sqrt(1 + x^2), x = H_SH/(alpha H_D) (PHYSICS 6.3, derived; Thiaville et al. 2012)."""
    delta = math.sqrt(A_EX / K_EFF)
    h_d = num(dwp.dmi_field(D, MS, delta))
    v_d = math.pi / 2 * GAMMA_E * D / MS
    for j, (v0, _, _) in CHECK_6_3D.items():
        h_sh = 2.618942e3 * j / 1e11  # PHYSICS 1.4a scales linearly
        x = h_sh / (0.3 * h_d)
        assert v_d * x / math.sqrt(1 + x * x) == pytest.approx(v0, rel=2e-5)
        v = num(dwp.sot_velocity_without_hk(h_sh, 0.3, h_d, delta))
        assert v == pytest.approx(v0, rel=2e-5)
    # the half-saturation current density x = 1 (PHYSICS 6.3)
    assert num(dwp.half_saturation_current_density(0.3, h_d, 0.1, MS, T_F)) == pytest.approx(1.434912e12, rel=1e-6)


def test_model_steady_speed_matches_the_1d_table():
    """The dw-mtj model, integrated by the reference solver with pinning off, reaches the steady
    speeds and wall angles of PHYSICS CHECK 6.3d (root = ODE, tol 1e-4 on the speed)."""
    ir, v = dw_ir()
    for j, (_, v_hk, phi_ss) in CHECK_6_3D.items():
        model = ReferenceModel(ir, {"h_dep": 0.0, "wall0": 0.1e-6})
        drive = line_drive(model, j * v["track_width"] * v["t_hm"])
        drives = {n: Pulse(0.0, x, 0.0, 20e-12, 20e-12, 1.0) for n, x in drive.items() if x}
        tr = model.transient(drives, 2e-9, t_eval=np.linspace(0, 2e-9, 2001), rtol=1e-10, atol=1e-12)
        q = tr.states["xw"] * v["track_length"]
        speed = (q[-1] - q[-201]) / (tr.t[-1] - tr.t[-201])
        assert speed == pytest.approx(v_hk, rel=1e-4)
        assert tr.states["phi"][-1] == pytest.approx(2 * math.pi - phi_ss, abs=2e-4)  # tilted the other way
        # and the algebraic root the benches use
        assert steady_sot_velocity(model, j, v, 2 * math.pi - phi_ss) == pytest.approx(v_hk, rel=1e-5)


def test_model_field_driven_walker_breakdown():
    """Schryer & Walker (1974), PHYSICS CHECK 6.3a with the model (D = 0, no pinning): steady
    21.969628 m/s at 0.9 H_W; above breakdown the time average over a precession turn 10.031883 m/s."""
    ir, v = dw_ir(dmi=0.0)
    h_w = 5.209628e3
    model = ReferenceModel(ir, {"h_dep": 0.0, "hz": 0.9 * h_w, "wall0": 0.2e-6})
    tr = model.transient({}, 12e-9, t_eval=np.linspace(0, 12e-9, 6001), rtol=1e-10, atol=1e-12)
    q = tr.states["xw"] * v["track_length"]
    assert (q[-1] - q[-101]) / (tr.t[-1] - tr.t[-101]) == pytest.approx(21.969628, rel=1e-4)
    model = ReferenceModel(ir, {"h_dep": 0.0, "hz": 2.0 * h_w, "wall0": 0.2e-6})
    tr = model.transient({}, 4e-9, t_eval=np.linspace(0, 4e-9, 8001), rtol=1e-10, atol=1e-12)
    mean = mean_rate_per_turn("xw", "phi", 0.1e-9, 1, v["track_length"])(tr)
    assert mean == pytest.approx(10.031883, rel=1e-5)


# ---- 6.4 pinning ---------------------------------------------------------------------------------
def test_depinning_current_density():
    # PHYSICS 6.4, CHECK 6.4a: mu0 H_dep = 5 mT, theta_SH = 0.1, t_F = 1 nm, Ms = 1e6 -> 9.671957e10 A/m^2
    j = num(dwp.depinning_current_density(5e-3 / MU0, 0.1, MS, T_F))
    assert j == pytest.approx(9.671957e10, rel=1e-6)


def test_pinning_landscape_and_edge_barriers():
    q = sp.Symbol("q", real=True)
    h_dep, pitch, h_edge, w = 4e3, 20e-9, 3e5, 5e-9
    energy = dwp.periodic_pinning_energy(q, MS, h_dep, pitch) + dwp.edge_barrier_energy(q, MS, h_edge, 15e-9,
                                                                                       485e-9, w)
    field = sp.lambdify(q, sp.sympify(dwp.pinning_field(energy, q, MS)).xreplace(const_values()))
    mid = np.linspace(100e-9, 400e-9, 30001)
    assert np.max(np.abs(field(mid))) == pytest.approx(h_dep, rel=1e-6)  # the depinning field
    assert abs(field(10 * pitch)) < 1e-6 * h_dep and abs(field(10.5 * pitch)) < 1e-6 * h_dep  # minima, maxima
    for x in (470e-9, 485e-9, 495e-9, 520e-9):  # restoring field rises as (1 + tanh((q - x_hi)/l))/2
        expected = -h_edge / 2 * (1 + math.tanh((x - 485e-9) / w)) - h_dep * math.sin(2 * math.pi * x / pitch)
        assert field(x) == pytest.approx(expected, rel=1e-9)
    assert field(-20e-9) == pytest.approx(h_edge - h_dep * math.sin(2 * math.pi * -20e-9 / pitch), rel=1e-6)
    assert np.all(np.abs(field(np.linspace(-1e-6, 2e-6, 3001))) <= h_edge + h_dep + 1e-6)  # bounded
    # a wall pinned at a minimum: no motion at 0.95 J_dep, motion at 1.05 J_dep (rigid Neel wall, 6.4)
    ir, v = dw_ir(h_dep=5e-3 / MU0, pin_pitch=20e-9)
    j_dep = figures(ir)["j_dep"]
    assert j_dep == pytest.approx(9.671957e10, rel=1e-6)
    moved = {}
    for k in (0.95, 1.05):
        model = ReferenceModel(ir, {"wall0": 1.0e-6})
        drive = line_drive(model, k * j_dep * v["track_width"] * v["t_hm"])
        drives = {n: Pulse(0.0, x, 0.0, 20e-12, 20e-12, 1.0) for n, x in drive.items() if x}
        tr = model.transient(drives, 6e-9, t_eval=np.linspace(0, 6e-9, 601), rtol=1e-9, atol=1e-12)
        moved[k] = abs(tr.states["xw"][-1] * v["track_length"] - 1.0e-6)
    assert moved[0.95] < 5e-9  # inside its well (pitch 20 nm)
    assert moved[1.05] > 20e-9  # past at least one pinning maximum


# ---- 6.5 read-out ------------------------------------------------------------------------------
def test_wall_position_read_out():
    """PHYSICS 6.5, CHECK 6.5: R_P = 1 kOhm, TMR = 1.3, L = 100 nm, Delta = 6.352727 nm, parallel for
    x < q: R(25 nm) = 1735.8284 (sharp wall 1735.8491), R(50 nm) = 1393.9394, R(75 nm) = 1164.5663 Ohm."""
    g_p, g_ap = 1e-3, 1e-3 / 2.3
    for q, r in ((25e-9, 1735.8284), (50e-9, 1393.9394), (75e-9, 1164.5663)):
        mz = num(tunnelling.sharp_wall_fraction(q, 100e-9, 6.352727e-9))
        g = (g_p + g_ap) / 2 + (g_p - g_ap) / 2 * mz
        assert 1 / g == pytest.approx(r, rel=1e-6)
    sharp = 1 / (0.25 * g_p + 0.75 * g_ap)  # a step wall: slices in parallel
    assert sharp == pytest.approx(1735.8491, rel=1e-6)
    # no overflow far from the junction (ln cosh written without cosh)
    far = num(tunnelling.sharp_wall_fraction(-5e-6, 100e-9, 1e-9))
    assert far == pytest.approx(-1.0, abs=1e-12)


# ---- sign conventions (PHYSICS 12.13: one documented convention, tested) ---------------------------
def wall_ode(charge, h_z, h_sh, phi0):
    delta = math.sqrt(A_EX / K_EFF)
    h_k, h_d = 3.473085e4, num(dwp.dmi_field(D, MS, delta))
    phi = sp.Symbol("phi", real=True)
    a, b = dwp.drive_terms(phi, h_z, h_sh, 0.0, h_k, h_d, 0.0, 0.0, 0.0, charge)
    qd, pd = dwp.wall_rates(a, b, 0.3, delta, charge)
    f = sp.lambdify(phi, [sp.sympify(qd).xreplace(const_values()), sp.sympify(pd).xreplace(const_values())])
    sol = solve_ivp(lambda t, y: f(y[1]), (0, 3e-9), [0.0, phi0], rtol=1e-9, atol=1e-15)
    return sol.y[0, -1] / 3e-9


def test_both_walls_move_together_under_sot_and_apart_under_field():
    """PHYSICS 6.3: both walls of a domain (Q = +-1, Neel walls of the same chirality) move the same way
    under the spin Hall torque and opposite ways under H_z; an up -> down wall (Q = +1) moves to +x, along
    the current, for theta_SH > 0, D > 0 and J > 0 (sigma = -y; tests/test_conventions.py)."""
    h_sh = 2.618942e4  # J = 1e12 A/m^2
    up_down = wall_ode(+1, 0.0, h_sh, math.pi)
    down_up = wall_ode(-1, 0.0, h_sh, 0.0)
    assert up_down > 0 and down_up > 0
    assert up_down == pytest.approx(down_up, rel=1e-6)
    assert wall_ode(+1, 2e3, 0.0, math.pi) > 0 > wall_ode(-1, 2e3, 0.0, 0.0)


def test_walker_benches_use_the_card_walker_field():
    """The dw-mtj field benches sit at 0.5 and 2 x the card's own Walker field (DMI included), with the exact
    1D expectations (gamma0 Delta hz/alpha below; (Delta/alpha)(gamma0 hz - 2 pi/T) above, T by quadrature),
    and the Schryer & Walker closed forms (J. Appl. Phys. 45, 5406 (1974)) only at the no-DMI figure with
    dmi = 0 on the instance.  The reference meets the DMI expectations."""
    from compactgen.devices.dw_mtj import _field_benches
    from compactgen.harness.verify import reference_trace

    card = load_card(EXAMPLES / "dwtrack_demo.toml")
    ir = card.ir()
    figs = figures(ir)
    benches = {b.name: b for b in _field_benches(ir, card.values, figs)}
    assert set(benches) == {"field_0.5hw", "field_2hw", "field_nodmi_0.5hw", "field_nodmi_2hw"}
    for k in (0.5, 2.0):
        b = benches[f"field_{k:g}hw"]
        assert b.instance["hz"] == pytest.approx(k * figs["h_walker"], rel=1e-12) and "dmi" not in b.instance
        nd = benches[f"field_nodmi_{k:g}hw"]
        assert nd.instance["hz"] == pytest.approx(k * figs["h_walker_no_dmi"], rel=1e-12)
        assert nd.instance["dmi"] == 0.0
    below = benches["field_0.5hw"].metrics[0].expect[0]
    assert below == pytest.approx(GAMMA0 * figs["wall_width"] * 0.5 * figs["h_walker"] / card.values["alpha"],
                                  rel=1e-9)
    for name in ("field_0.5hw", "field_2hw"):
        m = benches[name].metrics[0]
        assert m.func(reference_trace(ir, benches[name])) == pytest.approx(m.expect[0], rel=2e-4)


def test_walker_field_prints_in_both_back_ends():
    """h_walker is a parameter-only expression both printers can write (no root finding left in it)."""
    from compactgen.targets.printing.ngspice import NgspicePrinter
    from compactgen.targets.printing.verilog_a import VerilogAPrinter

    alpha, h_k, h_d, h_x = sp.symbols("alpha h_kwall h_dmi hx", real=True)
    expr = dwp.walker_field(alpha, h_k, h_d, h_x)
    assert not expr.free_symbols - {alpha, h_k, h_d, h_x}
    for printer in (VerilogAPrinter(), NgspicePrinter()):
        text = printer.doprint(expr)
        assert "sqrt(" in text and "abs(h_dmi - hx)" in text
