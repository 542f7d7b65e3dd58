"""Macrospin Landau-Lifshitz-Gilbert dynamics with damping-like and field-like torques."""
from __future__ import annotations

import sympy as sp

from .constants import gamma0


def cross(a, b):
    return sp.Matrix(a).cross(sp.Matrix(b))


def llg_explicit(m, h_eff, alpha, h_dl, h_fl, p):
    """dm/dt of the Gilbert equation with torques, in explicit (Landau-Lifshitz) form  [1/s]:

        (1+a^2) dm/dt = -gamma0 [ m x H + a m x (m x H)
                                  + (H_DL + a H_FL) m x (m x p) + (H_FL - a H_DL) m x p ]

    derived from dm/dt = -gamma0 m x H + a m x dm/dt - gamma0 H_DL m x (m x p)
    - gamma0 H_FL m x p (T. L. Gilbert, IEEE Trans. Magn. 40, 3443 (2004); torque terms:
    Slonczewski, J. Magn. Magn. Mater. 159, L1 (1996)).  Note the signs of the mixed
    coefficients (PHYSICS 1.2 and 12.1): they are checked against a direct solve of the
    implicit Gilbert form in the tests.
    """
    m = sp.Matrix(m)
    p = sp.Matrix(p)
    mxh = cross(m, h_eff)
    mxp = cross(m, p)
    torque = mxh + alpha * cross(m, mxh) + (h_dl + alpha * h_fl) * cross(m, mxp) + (h_fl - alpha * h_dl) * mxp
    return -gamma0 / (1 + alpha**2) * torque


def sphere_restoring(m, rate):
    """rate * (1 - |m|^2) m: vanishes on the unit sphere and pulls numerical drift back to it.

    A numerical device, not physics: the torque terms above are perpendicular to m, so the
    exact solution keeps |m| = 1 and this term is zero on it (common practice, no source).
    """
    m = sp.Matrix(m)
    return rate * (1 - (m.T * m)[0]) * m


def kittel_frequency(h, h_k, ms, n):
    """Small-angle resonance of a perpendicular macrospin with H and easy axis along z  [Hz]:
    f = (gamma/2pi) mu0 sqrt[(H + H_k + (N_x - N_z) Ms)(H + H_k + (N_y - N_z) Ms)].

    Source: C. Kittel, Phys. Rev. 73, 155 (1948).
    """
    return gamma0 / (2 * sp.pi) * sp.sqrt((h + h_k + (n[0] - n[2]) * ms) * (h + h_k + (n[1] - n[2]) * ms))
