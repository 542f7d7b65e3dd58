"""Closed forms of STT switching of a perpendicular macrospin (datasheet figures, bench set-up)."""
from __future__ import annotations

import sympy as sp

from compactgen.physics.constants import gamma0, hbar, mu0, q_e


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


def sun_switching_probability(delta, i, t, tau_0):
    """Precessional switching probability of a step pulse of length t with Boltzmann initial
    angles, Sun's small-angle switching time (PHYSICS 4.2, derived there):
    P_sw(t) = exp[-(pi^2 Delta / 4) exp(-2 (i - 1) t / tau_0)]; the write-error rate is 1 - P_sw."""
    return sp.exp(-(sp.pi**2 * delta / 4) * sp.exp(-2 * (i - 1) * t / tau_0))


def angle_switching_probability(delta, theta_min):
    """P(theta0 > theta_min) = exp(-Delta theta_min^2) for the thermal initial angle
    p(theta0) ~ 2 Delta theta0 exp(-Delta theta0^2) (PHYSICS 4.2/4.4, derived); theta_min is the
    smallest initial angle that reaches the equator within the pulse (switching_integral)."""
    return sp.exp(-delta * theta_min**2)


def activated_switching_probability(t, tau):
    """P_sw(t) = 1 - exp(-t/tau) of a Poisson escape with mean dwell time tau (PHYSICS 4.3;
    Koch, Katine and Sun, Phys. Rev. Lett. 92, 088302 (2004))."""
    return 1 - sp.exp(-t / tau)
