"""Macrospin Landau-Lifshitz-Gilbert dynamics with damping-like and field-like torques."""
from __future__ import annotations

import sympy as sp

from compactgen.physics.constants import gamma0


def cross(a, b):
    return sp.Matrix(a).cross(sp.Matrix(b))


def llg_explicit(m, h_eff, alpha, h_dl, h_fl, p, azimuthal=1):
    """dm/dt of the Gilbert equation with torques, in explicit (Landau-Lifshitz) form  [1/s]:

        (1+a^2) dm/dt = -gamma0 [ m x H + a m x (m x H)
                                  + (H_DL + a H_FL) m x (m x p) + (H_FL - a H_DL) m x p ]

    derived from dm/dt = -gamma0 m x H + a m x dm/dt - gamma0 H_DL m x (m x p)
    - gamma0 H_FL m x p (T. L. Gilbert, IEEE Trans. Magn. 40, 3443 (2004); torque terms:
    Slonczewski, J. Magn. Magn. Mater. 159, L1 (1996)).  Note the signs of the mixed
    coefficients (PHYSICS 1.2 and 12.1): they are checked against a direct solve of the
    implicit Gilbert form in the tests.
    
``azimuthal`` multiplies the terms m x H and m x p.  When the layer is axially symmetric
    about z (easy axis, p and every field along z, N_x = N_y) H lies in the plane of m and z, so
    these terms move m only in azimuth, about z; the polar angle theta(t), and so m_z(t), obey
    the remaining terms alone (the polar and azimuthal equations decouple).  azimuthal = 0 is then
    the same equation written in a frame that co-rotates with the precession: m_z(t) is exact,
    (m_x, m_y) are the transverse components in that frame, and a free layer at rest is a fixed
    point instead of a precession at the FMR frequency (derived, common practice, no source).
    """
    m = sp.Matrix(m)
    p = sp.Matrix(p)
    mxh = cross(m, h_eff)
    mxp = cross(m, p)
    torque = (azimuthal * (mxh + (h_fl - alpha * h_dl) * mxp)
              + alpha * cross(m, mxh) + (h_dl + alpha * h_fl) * cross(m, mxp))
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


def thermal_cone_drift(m, rate, eps2):
    """Polar drift that holds an axially symmetric macrospin at a thermal cone  [1/s]:

        v = rate m_z / (rho^2 + eps2) (m_z m_x, m_z m_y, -rho^2),  rho^2 = m_x^2 + m_y^2,

    tangent to the sphere (v . m = 0), zero at the equator, directed away from both poles with
    d theta/dt = rate cos(theta) sin(theta)/(sin^2 theta + eps2).  It has the form of the
    noise-induced drift k' cot(theta) of Brown's Fokker-Planck equation for the polar angle
    (W. F. Brown, Phys. Rev. 130, 1677 (1963)), regularised at the pole by eps2; against the
    damping pull alpha gamma0/(1+alpha^2) H_k,eff cos(theta) sin(theta) its fixed point is
    sin^2 theta = rate (1+alpha^2)/(alpha gamma0 H_k,eff) - eps2, so ``rate`` sets the rest angle
    (devices/common.py sets it to the thermal rest angle).  A sub-critical spin torque i = I/I_c0
    weakens the pull by (1 - i) and widens the rest cone as sin^2 theta ~ 1/(1 - i), as thermal
    fluctuations do (effective barrier Delta (1 - i): R. H. Koch, J. A. Katine and J. Z. Sun,
    Phys. Rev. Lett. 92, 088302 (2004))."""
    mx, my, mz = m
    rho2 = mx**2 + my**2
    k = rate * mz / (rho2 + eps2)
    return sp.Matrix([k * mz * mx, k * mz * my, -k * rho2])


def damping_pull_rate(alpha, h_k_eff):
    """alpha gamma0 H_k,eff / (1 + alpha^2)  [1/s]: the rate at which Gilbert damping pulls a
    uniaxial macrospin toward its axis near a pole (d theta/dt = -rate cos(theta) sin(theta) in the
    explicit LLG above, zero field along z)."""
    return alpha * gamma0 / (1 + alpha**2) * h_k_eff


def cone_rest_sin2(h_k_eff, h_axial, sin2_rest, eps2):
    """sin^2 theta at the fixed point of thermal_cone_drift with rate
    damping_pull_rate * (sin2_rest + eps2) against the damping pull in H_k,eff cos(theta) plus an
    axial field ``h_axial`` (along the pole the layer rests at; negative: against it):
    sin^2 theta + eps2 = (sin2_rest + eps2) H_k,eff / (H_k,eff + H_ax / cos theta), solved by one
    fixed-point step from cos theta = 1 (exact for H_ax = 0; the step leaves an error of order
    theta^4 H_ax/H_k,eff).  Derived from the two terms above."""
    ratio = (sin2_rest + eps2) * h_k_eff
    s2_0 = ratio / (h_k_eff + h_axial) - eps2
    return ratio / (h_k_eff + h_axial / sp.sqrt(1 - s2_0)) - eps2
