"""Perpendicular anisotropy and demagnetisation of a free layer (fields in A/m)."""
from __future__ import annotations

import sympy as sp

from compactgen.physics.constants import mu0


def uniaxial_energy_density(k_bulk, k_interface, t_free):
    """K_u = K_v + K_i / t_F  [J/m^3] (interface anisotropy spread over the layer;
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


def transverse_field_for_tilt(h_k_eff, theta):
    """The in-plane field whose static equilibrium tilts a uniaxial layer by ``theta`` from its
    axis (no axial field): sin(theta) = H_t / H_k,eff, so H_t = H_k,eff sin(theta)  [A/m]
    (E. C. Stoner and E. P. Wohlfarth, Phil. Trans. R. Soc. A 240, 599 (1948))."""
    return h_k_eff * sp.sin(theta)


def tilted_rest_state(h_k_eff, h_t, h_axial, iterations: int = 1):
    """(sin theta, cos theta) of the static equilibrium of a uniaxial layer in an in-plane field
    ``h_t`` and an axial field ``h_axial`` (along the pole the layer rests at; negative: against
    it), theta measured from that pole  [-].

    From dE/dtheta = 0 with E/(mu0 Ms V) = -(H_k,eff/2) cos^2 theta - H_t sin theta
    - H_ax cos theta (Stoner and Wohlfarth, as above):
    sin theta = H_t cos theta / (H_k,eff cos theta + H_ax), solved by fixed-point iteration from
    sin theta = H_t/(H_k,eff + H_ax) (the small-angle solution).  With H_ax = 0 the first value is
    exact; otherwise each step cuts the error by about H_t H_ax/(H_k,eff + H_ax)^2 times the
    tilt, so one step leaves an error of order theta^5 (1e-6 rad at the thermal tilts of real
    devices).  A closed form needs a quartic root; the printed expression doubles per step."""
    s = h_t / (h_k_eff + h_axial)
    for _ in range(iterations):
        c = sp.sqrt(1 - s**2)
        s = h_t * c / (h_k_eff * c + h_axial)
    return s, sp.sqrt(1 - s**2)
