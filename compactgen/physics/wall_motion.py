"""Rigid 1D domain wall in a heavy-metal / ferromagnet strip: collective coordinates (q, phi).

Conventions of PHYSICS 0 and 6: film normal z, current and track along +x, wall centre q,
in-plane wall angle phi (phi = 0: m along +x at the wall centre), Q = +1 for an up->down
wall and -1 for down->up, interfacial DMI energy w = D (m_z d_x m_x - m_x d_x m_z), so D > 0
makes the up->down wall adopt phi = pi.  Fields in A/m, gamma0 = mu0 |gamma_e|.

Sources: A. Thiaville, S. Rohart, E. Jue, V. Cros and A. Fert, EPL 100, 57002 (2012)
(volume/page from memory); E. Martinez, S. Emori, N. Perez, L. Torres and G. S. D. Beach,
J. Appl. Phys. 115, 213909 (2014); field-driven closed forms: N. L. Schryer and
L. R. Walker, J. Appl. Phys. 45, 5406 (1974) (volume/page from memory).  Validity: rigid
wall (no tilt, no width change), width << strip width, thin film, no pinning, no Bloch
lines.  Signs of the SOT and DMI terms differ between papers; these follow PHYSICS 6.2.
"""
from __future__ import annotations

import sympy as sp

from .constants import gamma0, mu0


def wall_width(a_ex, k_eff):
    """Wall-width parameter Delta = sqrt(A / K_eff)  [m] (Walker profile
    theta = 2 arctan exp(Q (x - q)/Delta); A in J/m, K_eff in J/m^3)."""
    return sp.sqrt(a_ex / k_eff)


def wall_demag_factor(t_film, width):
    """In-plane demagnetising factor of the wall across its width, N_x = t ln2 / (pi Delta)
    (thin film, t <~ Delta): B. A. Tarasenko et al., J. Magn. Magn. Mater. 189, 19 (1998)
    (formula and reference from memory, PHYSICS 6.1)."""
    return t_film * sp.log(2) / (sp.pi * width)


def wall_shape_field(ms, n_x):
    """Shape-anisotropy field of the wall that favours the Bloch wall, H_K = N_x Ms  [A/m]."""
    return n_x * ms


def dmi_field(d_dmi, ms, width):
    """Effective DMI field on the wall, H_D = D / (mu0 Ms Delta)  [A/m] (Thiaville et al. 2012)."""
    return d_dmi / (mu0 * ms * width)


def dmi_velocity(d_dmi, ms):
    """Saturation speed of an SOT-driven Neel wall, v_D = (pi/2) gamma0 D / (mu0 Ms)
    = (pi/2) gamma_e D / Ms  [m/s] (independent of alpha and Delta; PHYSICS 6.3 and 12.3)."""
    return sp.pi / 2 * gamma0 * d_dmi / (mu0 * ms)


def wall_energy_density(phi, q, a_ex, k_eff, width, h_k, d_dmi, ms, h_x=0, h_y=0):
    """Wall energy per unit area versus wall angle  [J/m^2] (PHYSICS 6.1):
    sigma = 4 sqrt(A K_eff) + 2 K_perp Delta cos^2 phi + Q pi D cos phi
            - pi Delta mu0 Ms (H_x cos phi + H_y sin phi),   K_perp = mu0 Ms H_K / 2.
    Its minimum over phi is the rest angle of the wall."""
    k_perp = mu0 * ms * h_k / 2
    return (4 * sp.sqrt(a_ex * k_eff) + 2 * k_perp * width * sp.cos(phi) ** 2 + q * sp.pi * d_dmi * sp.cos(phi)
            - sp.pi * width * mu0 * ms * (h_x * sp.cos(phi) + h_y * sp.sin(phi)))


def _drives(phi, q, h_z, h_sh, h_k, h_d, h_x, h_y):
    """Right-hand sides of PHYSICS 6.2 (no pinning), divided by gamma0:
    a = H_z + (pi/2) H_SH cos phi              (phi_dot + Q alpha q_dot / Delta = gamma0 a)
    b = -(H_K/2) sin 2phi - Q (pi/2) H_D sin phi + (pi/2)(H_x sin phi - H_y cos phi)
                                               (Q q_dot / Delta - alpha phi_dot = gamma0 b)
    A field-like SOT along y enters through h_y."""
    a = h_z + sp.pi / 2 * h_sh * sp.cos(phi)
    b = (-h_k / 2 * sp.sin(2 * phi) - q * sp.pi / 2 * h_d * sp.sin(phi)
         + sp.pi / 2 * (h_x * sp.sin(phi) - h_y * sp.cos(phi)))
    return a, b


def wall_angle_rate(phi, q, alpha, h_z, h_sh, h_k, h_d, h_x=0, h_y=0):
    """d phi / dt of the rigid wall  [rad/s]: the two equations of PHYSICS 6.2 solved for
    phi_dot, phi_dot = gamma0 (a - alpha b) / (1 + alpha^2) (derived)."""
    a, b = _drives(phi, q, h_z, h_sh, h_k, h_d, h_x, h_y)
    return gamma0 * (a - alpha * b) / (1 + alpha**2)


def wall_velocity(phi, q, alpha, width, h_z, h_sh, h_k, h_d, h_x=0, h_y=0):
    """dq/dt of the rigid wall at wall angle phi  [m/s]:
    q_dot = Q Delta gamma0 (b + alpha a) / (1 + alpha^2) (derived from PHYSICS 6.2).
    In a steady state (phi_dot = 0, a = alpha b) this is Q Delta gamma0 a / alpha."""
    a, b = _drives(phi, q, h_z, h_sh, h_k, h_d, h_x, h_y)
    return q * width * gamma0 * (b + alpha * a) / (1 + alpha**2)


def walker_field(alpha, h_k):
    """Walker breakdown field without DMI, H_W = alpha H_K / 2  [A/m] (Schryer & Walker 1974)."""
    return alpha * h_k / 2


def field_velocity_steady(h_z, q, alpha, width):
    """Field-driven steady wall velocity below the Walker field, v = Q gamma0 Delta H_z / alpha
    [m/s] (Schryer & Walker 1974; PHYSICS 6.3)."""
    return q * gamma0 * width * h_z / alpha


def field_velocity_precessional(h_z, q, alpha, width, h_w):
    """Time-averaged field-driven velocity above the Walker field, D = 0  [m/s]:
    <v> = Q (gamma0 Delta / alpha) [H_z - sign(H_z) sqrt(H_z^2 - H_W^2) / (1 + alpha^2)]
    (Schryer & Walker 1974; PHYSICS 6.3, derived there and checked against the ODE)."""
    return q * gamma0 * width / alpha * (h_z - sp.sign(h_z) * sp.sqrt(h_z**2 - h_w**2) / (1 + alpha**2))


def sot_velocity_without_hk(h_sh, alpha, width, h_d):
    """Steady SOT-driven velocity with H_z = 0, neglecting H_K << H_D  [m/s] (PHYSICS 6.3):
    v = -sign(H_D) (pi/2) gamma0 Delta (H_SH / alpha) / sqrt(1 + x^2),  x = H_SH / (alpha H_D),
    i.e. |v| = v_D x / sqrt(1 + x^2) with v_D = (pi/2) gamma0 Delta |H_D|.  Both walls (Q = +-1)
    move the same way; with D > 0 and theta_SH J > 0 they move along -x (PHYSICS 6.3d)."""
    x = h_sh / (alpha * h_d)
    return -sp.sign(h_d) * sp.pi / 2 * gamma0 * width * (h_sh / alpha) / sp.sqrt(1 + x**2)


def sot_half_saturation_current(alpha, t_film, d_dmi, theta_sh, width):
    """Current density at which x = H_SH / (alpha H_D) = 1, J_1/2 = 2 e alpha t_F D / (hbar theta_SH Delta)
    [A/m^2] (PHYSICS 6.3, derived)."""
    from .constants import hbar, q_e

    return 2 * q_e * alpha * t_film * d_dmi / (hbar * theta_sh * width)
