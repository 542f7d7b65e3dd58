"""Heavy-metal write line: resistance, current density, Joule power, Oersted field (PHYSICS 10)."""
from __future__ import annotations

import sympy as sp


def line_resistance(rho, length, width, thickness):
    """R = rho L / (w t)  [ohm] of a uniform strip carrying current along its length
    (Ohm's law for a prism; common practice, no source)."""
    return rho * length / (width * thickness)


def current_density(current, width, thickness):
    """J = I / (w t)  [A/m^2]: the charge current density in a strip of cross-section w t."""
    return current / (width * thickness)


def joule_power(current, resistance):
    """P = I^2 R  [W]."""
    return current**2 * resistance


def pulse_energy(current, resistance, duration):
    """E = I^2 R t_p  [J] of a rectangular current pulse."""
    return current**2 * resistance * duration


def oersted_field(j, thickness):
    """Oersted field at the surface of a wide sheet, H = J t / 2  [A/m] (Ampere's law for an
    infinite sheet; common practice, no source)."""
    return j * thickness / 2


def current_at_position(x, x_tap, i_before, i_after, width):
    """Current along a line at position x when a side branch (a junction) joins it at x_tap:
    i_before for x < x_tap, i_after beyond, blended smoothly over ``width`` by
    (1 + tanh((x - x_tap)/width))/2 so that simulators see no step (a model choice, no source)."""
    s = (1 + sp.tanh((x - x_tap) / width)) / 2
    return i_before * (1 - s) + i_after * s
