"""Spin-orbit torque from the spin Hall effect of a heavy-metal line: the direction of the injected
spin polarisation (the one place where that sign lives) and the closed forms of switching a
perpendicular macrospin with an in-plane field along the current (PHYSICS 5).

Convention (every device kind reads it from ``spin_hall_polarisation``): film normal z, the heavy
metal below the ferromagnet, charge current along +x, signed effective spin Hall angle theta_sh
(> 0 for Pt).  The spin current flowing up into the ferromagnet carries the spin moment
sigma = sign(theta_sh) (j_hat x n_hat) = -y_hat, n_hat = +z the normal from the heavy metal into the
ferromagnet; the damping-like torque -gamma0 H_DL m x (m x sigma) (H_DL = hbar theta_sh J/(2 e mu0 Ms
t_F), signed) pushes m towards sigma.  Consequences checked in tests/test_conventions.py against
published, convention-free statements: chiral Neel walls of Pt/Co-type stacks (left-handed, D > 0
here) move along the current with Pt below and against it with Ta or W below; a Pt/Co/AlOx-type
perpendicular magnet with current and in-plane field both along +x switches to m_z = -1.
"""
from __future__ import annotations

import sympy as sp

from compactgen.physics.torques import spin_torque_field


def spin_hall_polarisation(current=(1, 0, 0), normal=(0, 0, 1)):
    """Unit vector of the spin moment sigma injected into the ferromagnet for a positive signed spin
    Hall angle: sigma = j_hat x n_hat, with ``current`` the charge-current direction and ``normal``
    the unit normal pointing from the heavy metal into the ferromagnet (+z: metal below).  For current
    along +x and the metal below, sigma = x_hat x z_hat = -y_hat; with the metal on top, +y_hat.

    Vector algebra: the spin Hall effect sends a spin current along n_hat whose moment is sigma, with
    J_s = theta_SH (hbar/2e) sigma x J_c (L. Liu, T. Moriyama, D. C. Ralph and R. A. Buhrman, Phys. Rev.
    Lett. 106, 036601 (2011), form and sign convention from memory); (j x n) x j = n for j perpendicular to n, so
    sigma = j_hat x n_hat.  The sign is pinned by convention-free experiments (from memory): Pt/Co/AlOx
    with current and in-plane field along +x switches down (I. M. Miron et al., Nature 476, 189 (2011);
    L. Liu, O. J. Lee, T. J. Gudmundsen, D. C. Ralph and R. A. Buhrman, Phys. Rev. Lett. 109, 096602
    (2012)), and left-handed Neel walls move along the current in Pt/CoFe/MgO and against it in
    Ta/CoFe/MgO (S. Emori, U. Bauer, S.-M. Ahn, E. Martinez and G. S. D. Beach, Nat. Mater. 12, 611
    (2013); abstract seen: opposite directions, left-handed chirality).  tests/test_conventions.py."""
    return sp.Matrix(current).cross(sp.Matrix(normal))


def switched_state(j, theta_sh, h_x):
    """The m_z a current above threshold leaves in a perpendicular magnet with an in-plane field along
    the current: sign(sigma_y J theta_sh H_x) = -sign(J theta_sh H_x) for the metal below (PHYSICS 5
    with sigma = -y; e.g. Pt, J and H_x along +x: m_z = -1)."""
    return sp.sign(spin_hall_polarisation()[1] * j * theta_sh * h_x)


def torque_balance(theta, h_x, h_k_eff):
    """f(theta) = H_x cos(theta) - (H_k,eff/2) sin(2 theta)  [A/m]: with sigma = sigma_y y_hat every
    equilibrium m = (sin theta, 0, cos theta) satisfies sigma_y H_DL = f(theta) (m x H_eff = f y_hat,
    m x (m x sigma) = -sigma; derived in PHYSICS 5 from the static Gilbert equation; field-like torque
    neglected)."""
    return h_x * sp.cos(theta) - h_k_eff / 2 * sp.sin(2 * theta)


def critical_angle(h_x, h_k_eff):
    """Polar angle of the extremum of f: sin(theta*) = [H_x + sqrt(H_x^2 + 8 H_k,eff^2)] / (4 H_k,eff)
    (root of f'(theta) = 0; PHYSICS 5, derived)."""
    return sp.asin((h_x + sp.sqrt(h_x**2 + 8 * h_k_eff**2)) / (4 * h_k_eff))


def threshold_field(h_x, h_k_eff):
    """Exact quasi-static threshold |f_min| of the damping-like field  [A/m]: above it the state
    with m_z of the opposite sign to H_DL H_x has no equilibrium (PHYSICS 5, derived).
    ``h_x`` >= 0; by symmetry use |H_x|."""
    return -torque_balance(critical_angle(h_x, h_k_eff), h_x, h_k_eff)


def current_density_for_field(h_dl, efficiency, ms, t_free):
    """The current density whose damping-like field is ``h_dl``  [A/m^2] (the inverse of
    torques.spin_torque_field, which is linear in J)."""
    return h_dl / spin_torque_field(1, efficiency, ms, t_free)
