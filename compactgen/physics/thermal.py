"""Thermal stability of a uniaxial macrospin."""
from __future__ import annotations

import sympy as sp

from .constants import gamma0, k_b


def barrier_energy(k_eff, volume):
    """E_b = K_eff V  [J] (uniaxial macrospin, zero field)."""
    return k_eff * volume


def thermal_stability(e_b, temperature):
    """Delta = E_b / (k_B T)  [-]."""
    return e_b / (k_b * temperature)


def thermal_mode_angle(delta):
    """Most probable thermal cone angle theta0 = sqrt(1/(2 Delta)) of p(theta) ~ theta
    exp(-Delta theta^2) (derived, PHYSICS 4.4; the rms angle is 1/sqrt(Delta))."""
    return sp.sqrt(1 / (2 * delta))


def neel_brown_time(tau0, delta):
    """Neel-Brown relaxation time tau = tau0 exp(Delta)  [s]
    (L. Neel, Ann. Geophys. 5, 99 (1949), from memory; W. F. Brown, Phys. Rev. 130, 1677 (1963))."""
    return tau0 * sp.exp(delta)


def brown_relaxation_time(alpha, h_k_eff, delta):
    """Brown's high-barrier relaxation time for an axially symmetric uniaxial barrier  [s]:
    tau_N = (sqrt(pi)/2) (1+a^2)/(a gamma0 H_k,eff) Delta^(-1/2) exp(Delta).

    Source: W. F. Brown, Phys. Rev. 130, 1677 (1963) (formula from memory, checked by
    Fokker-Planck quadrature in PHYSICS 4.3).  The mean dwell time in one well is 2 tau_N.
    """
    return sp.sqrt(sp.pi) / 2 * (1 + alpha**2) / (alpha * gamma0 * h_k_eff) / sp.sqrt(delta) * sp.exp(delta)


def activated_switching_time(tau0, delta, i_ratio, exponent):
    """tau(I) = tau0 exp[Delta (1 - I/I_c0)^n] for I < I_c0  [s]
    (R. H. Koch, J. A. Katine and J. Z. Sun, Phys. Rev. Lett. 92, 088302 (2004) with n = 1;
    n = 2 for perpendicular macrospins: T. Taniguchi and H. Imamura, arXiv:1010.5845)."""
    return tau0 * sp.exp(delta * (1 - i_ratio) ** exponent)
