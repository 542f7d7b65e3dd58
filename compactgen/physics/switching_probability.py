"""Switching probability of a perpendicular macrospin driven by a current pulse (PHYSICS 4.2, 4.3).

Two regimes, each valid on its own side of the critical current I_c0:
- thermally activated (I < I_c0, pulses >> tau0): Poisson escape at the rate 1/tau(I);
- precessional (I > I_c0): deterministic macrospin switching from a Boltzmann-distributed
  initial angle; the pulse switches when the start angle exceeds theta_min(t), where
  t = tau_p * switching_integral(i, theta_min) (physics.switching).
Near I = I_c0 neither form holds (rates and angles are both marginal there).
"""
from __future__ import annotations

import sympy as sp


def activated_switching_probability(pulse_width, tau):
    """P = 1 - exp(-t / tau) for a constant escape time tau  [-]
    (Poisson escape; R. H. Koch, J. A. Katine and J. Z. Sun, Phys. Rev. Lett. 92, 088302 (2004))."""
    return 1 - sp.exp(-pulse_width / tau)


def precessional_switching_probability(delta, theta_min):
    """P = exp(-Delta theta_min^2)  [-]: the probability that the thermal start angle, with density
    p(theta) = 2 Delta theta exp(-Delta theta^2) (small angles, PHYSICS 4.4), exceeds theta_min
    (derived in PHYSICS 4.2)."""
    return sp.exp(-delta * theta_min**2)
