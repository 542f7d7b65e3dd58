"""Tunnelling magnetoresistance of an MTJ."""
from __future__ import annotations

import sympy as sp


def resistance_from_ra(ra, area):
    """R = RA / area  [ohm]; ``ra`` in ohm*m^2, ``area`` in m^2 (common practice, no source)."""
    return ra / area


def tmr_bias(tmr0, v, v_half):
    """Bias roll-off of the TMR ratio, TMR(V) = TMR0 / (1 + (V/V_h)^2).

    Empirical law, common practice, no source; V_h is the bias at which TMR has halved.
    """
    return tmr0 / (1 + (v / v_half) ** 2)


def conductance_angle(g_p, g_ap, cos_theta):
    """G(theta) = (G_P + G_AP)/2 + (G_P - G_AP)/2 * cos(theta): the conductance, not the
    resistance, is linear in cos(theta).

    Source: J. C. Slonczewski, Phys. Rev. B 39, 6995 (1989).
    """
    return (g_p + g_ap) / 2 + (g_p - g_ap) / 2 * cos_theta


def julliere_tmr(p1, p2):
    """TMR = (R_AP - R_P)/R_P = 2 P1 P2 / (1 - P1 P2).

    Source: M. Julliere, Phys. Lett. 54A, 225 (1975) (normalised here by R_P; Julliere's own
    ratio divided by G_P, giving 2P1P2/(1 + P1P2)).
    """
    return 2 * p1 * p2 / (1 - p1 * p2)


def julliere_polarisation(tmr):
    """Spin polarisation of two identical electrodes from the TMR ratio (Julliere inverted):
    TMR = 2P^2/(1 - P^2)  =>  P = sqrt(TMR / (2 + TMR))  (M. Julliere, Phys. Lett. 54A, 225
    (1975), normalised by R_P as julliere_tmr)."""
    return sp.sqrt(tmr / (2 + tmr))


def mtj_conductance(ra, area, tmr0, v_half, v, cos_theta):
    """Conductance of a pillar: R_P = RA/area bias-independent, R_AP(V) = R_P (1 + TMR(V)),
    interpolated in cos(theta) (common compact-model practice, no source)."""
    g_p = 1 / resistance_from_ra(ra, area)
    # conductance_angle(g_p, g_p/(1 + TMR(V)), c) with 1/(1 + TMR(V)) = u/(u + tmr0),
    # u = 1 + (V/V_h)^2: the same equation, written so the bias law appears once
    u = 1 + (v / v_half) ** 2
    return g_p / 2 * ((1 + cos_theta) + (1 - cos_theta) * u / (u + tmr0))


def sharp_wall_fraction(q, length, width):
    """Fraction of an MTJ of ``length`` over a track whose magnetisation is +z for x < q and
    -z beyond, for a Walker-profile wall m_z = -tanh((x - q)/width):
    <m_z> = -(width/L) [ln cosh((L - q)/width) - ln cosh(q/width)]   (PHYSICS 6.5, derived:
    the integral of tanh((x - q)/width) over [0, L] is width [ln cosh((L - q)/width) - ln cosh(q/width)]).
    """
    return -width / length * (log_cosh((length - q) / width) - log_cosh(q / width))


def log_cosh(u):
    """ln cosh u written as |u| + ln(1 + exp(-2|u|)) - ln 2: the same function, but it never
    overflows (cosh overflows a double above u ~ 710; ngspice's exp saturates at 1e99)."""
    a = sp.Abs(u)
    return a + sp.log(1 + sp.exp(-2 * a)) - sp.log(2)
