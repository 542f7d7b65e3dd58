"""Perpendicular anisotropy and demagnetisation of a free layer (fields in A/m)."""
from __future__ import annotations

import sympy as sp

from .constants import mu0


def uniaxial_energy_density(k_bulk, k_interface, t_free):
    """K_u = K_b + K_i / t_F  [J/m^3] (interface anisotropy spread over the layer;
    common practice, no source)."""
    return k_bulk + k_interface / t_free


def anisotropy_field(k_u, ms):
    """H_k = 2 K_u / (mu0 Ms)  [A/m] (Stoner & Wohlfarth, Phil. Trans. R. Soc. A 240, 599 (1948))."""
    return 2 * k_u / (mu0 * ms)


def effective_anisotropy_field(h_k, ms, n_x, n_z):
    """H_k,eff = H_k - (N_z - N_x) Ms for an axially symmetric body (N_x = N_y)  [A/m]."""
    return h_k - (n_z - n_x) * ms


def effective_field(m, h_k, ms, n, h_ext):
    """H_eff = H_ext + H_k (m.z) z - Ms (N_x m_x, N_y m_y, N_z m_z)  [A/m] (PHYSICS 1.3)."""
    return sp.Matrix(
        [
            h_ext[0] - ms * n[0] * m[0],
            h_ext[1] - ms * n[1] * m[1],
            h_ext[2] + h_k * m[2] - ms * n[2] * m[2],
        ]
    )


def effective_energy_density(h_k_eff, ms):
    """K_eff = mu0 Ms H_k,eff / 2  [J/m^3]."""
    return mu0 * ms * h_k_eff / 2
