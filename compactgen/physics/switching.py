"""Closed forms of STT switching of a perpendicular macrospin (datasheet figures, bench set-up)."""
from __future__ import annotations

import sympy as sp

from .constants import gamma0, hbar, mu0, q_e


def stt_critical_current(alpha, eta, ms, volume, h_k_eff):
    """Zero-temperature threshold I_c0 = (2e/hbar)(alpha/eta) mu0 Ms V H_k,eff  [A].

    Source: J. Z. Sun, Phys. Rev. B 62, 570 (2000) (volume/page from memory); derivation in
    PHYSICS 4.1 (constant eta, p along the easy axis, field-like torque neglected).
    """
    return 2 * q_e / hbar * alpha / eta * mu0 * ms * volume * h_k_eff


def precession_time_scale(alpha, h_k_eff):
    """tau_0 = (1+alpha^2) / (alpha gamma0 H_k,eff)  [s]."""
    return (1 + alpha**2) / (alpha * gamma0 * h_k_eff)


def switching_integral(i, theta0):
    """Exact macrospin time from theta0 to the equator in units of tau_0 (PHYSICS 4.2, derived):
    I = -ln(1-u0)/(2(i-1)) + ln(1+u0)/(2(i+1)) - [ln(i-u0) - ln i]/(1-i^2),  u0 = cos theta0."""
    u0 = sp.cos(theta0)
    return (
        -sp.log(1 - u0) / (2 * (i - 1))
        + sp.log(1 + u0) / (2 * (i + 1))
        - (sp.log(i - u0) - sp.log(i)) / (1 - i**2)
    )


def sun_switching_time(tau_0, i, theta0):
    """Small-angle approximation t = tau_0 ln(pi/(2 theta0)) / (i - 1)  [s]
    (J. Z. Sun, Phys. Rev. B 62, 570 (2000))."""
    return tau_0 * sp.log(sp.pi / (2 * theta0)) / (i - 1)
