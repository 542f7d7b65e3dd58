"""Closed forms of spin-orbit-torque switching of a perpendicular macrospin with an in-plane
field along the current (PHYSICS 5).

Convention (PHYSICS 0): current along +x, spin polarisation sigma = +y for a positive signed
effective spin Hall angle, damping-like torque -gamma0 H_DL m x (m x sigma).
"""
from __future__ import annotations

import sympy as sp

from .torques import spin_torque_field


def torque_balance(theta, h_x, h_k_eff):
    """f(theta) = H_x cos(theta) - (H_k,eff/2) sin(2 theta)  [A/m]: with sigma = +y every
    equilibrium m = (sin theta, 0, cos theta) satisfies H_DL = f(theta) (derived in PHYSICS 5
    from the static Gilbert equation; field-like torque neglected)."""
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
