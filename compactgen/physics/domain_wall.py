"""One domain wall in a heavy-metal / ferromagnet strip with interfacial DMI: the 1D
collective-coordinate (q, phi) model, its pinning landscape and its closed forms (PHYSICS 6).

Conventions (PHYSICS 0 and 6; tested against each other in tests/test_domain_wall.py):
- film normal z, track and current along +x, heavy metal below; the spin polarisation sigma comes
  from ``spin_orbit.spin_hall_polarisation`` (-y for a positive signed effective spin Hall angle);
- the wall profile is theta(x) = 2 arctan exp(Q (x - q)/Delta): Q = +1 is an up -> down wall
  (m_z = +1 for x < q), Q = -1 down -> up;
- phi is the azimuth of the in-plane moment at the wall centre (phi = 0: m along +x);
- DMI energy density w = D (m_z d_x m_x - m_x d_x m_z) (the continuum form of D_ij = D (z_hat x u_ij)
  with energy D_ij . (S_i x S_j)); across a wall it integrates to Q pi D cos phi, so D > 0 makes the
  up -> down wall adopt phi = pi (up, -x, down) and the down -> up wall phi = 0 (down, +x, up): the
  anticlockwise, "left-handed" Neel walls reported for Pt/Co-type stacks with Pt below (Emori et al.,
  Nat. Mater. 12, 611 (2013): left-handed, abstract seen; the arrow picture is from memory).
Sources: A. Thiaville, S. Rohart, E. Jue, V. Cros and A. Fert, EPL 100, 57002 (2012) (volume/page
from memory); E. Martinez, S. Emori, N. Perez, L. Torres and G. S. D. Beach, J. Appl. Phys. 115,
213909 (2014); N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974) (volume/page from
memory).  Signs of the torque and DMI terms differ between papers (different D, sigma and phi
conventions); the ones here follow the conventions above.
"""
from __future__ import annotations

import sympy as sp

from compactgen.physics.constants import gamma0, gamma_e, mu0
from compactgen.physics.spin_orbit import current_density_for_field, spin_hall_polarisation


def wall_width(a_ex, k_eff):
    """Wall-width parameter Delta = sqrt(A / K_eff)  [m] (PHYSICS 6.1)."""
    return sp.sqrt(a_ex / k_eff)


def dmi_field(d, ms, width):
    """DMI field on the wall H_D = D / (mu0 Ms Delta)  [A/m], along the wall normal x (Thiaville 2012)."""
    return d / (mu0 * ms * width)


def wall_demag_factor(t_free, width):
    """Wall demagnetising factor N_x = t_F ln 2 / (pi Delta) of a thin film (Bloch wall favoured);
    A. A. Tarasenko et al., J. Magn. Magn. Mater. 189, 19 (1998) (from memory)."""
    return t_free * sp.log(2) / (sp.pi * width)


def wall_anisotropy_field(n_x, ms):
    """Wall shape-anisotropy field H_K = N_x Ms  [A/m] (PHYSICS 6.1)."""
    return n_x * ms


def rest_angle(h_k, h_d, h_x, charge=1):
    """Wall angle phi_0 at rest: the minimum of sigma(phi)/(mu0 Ms Delta) =
    H_K cos^2 phi + pi (Q H_D - H_x) cos phi, i.e. cos phi_0 = -pi (Q H_D - H_x)/(2 H_K) clipped
    to [-1, 1] (from the wall energy of PHYSICS 6.1 with H_y = 0; phi_0 in [0, pi])."""
    c = -sp.pi * (charge * h_d - h_x) / (2 * h_k)
    return sp.acos(sp.Min(sp.Max(c, -1), 1))


def drive_terms(phi, h_z, h_sh, h_pin, h_k, h_d, h_x, h_y, h_fl, charge=1):
    """Right-hand sides (A, B) of the projected Gilbert equations  [1/s] (PHYSICS 6.2):

        dphi/dt + Q alpha (dq/dt)/Delta = A = gamma0 [H_z + (pi/2) s H_SH cos phi + H_pin]
        Q (dq/dt)/Delta - alpha dphi/dt = B = gamma0 [-(H_K/2) sin 2phi - Q (pi/2) H_D sin phi
                                                     + (pi/2)(H_x sin phi - (H_y + s H_FL) cos phi)]

    H_SH = hbar theta_sh J/(2 e mu0 Ms t_F) is the signed damping-like spin Hall field and H_FL the
    field-like one (a field H_FL sigma); s = sigma_y = -1 is the y component of the injected spin
    polarisation (``spin_orbit.spin_hall_polarisation``, heavy metal below): the damping-like
    effective field H_SH m x sigma has the z component s H_SH cos phi at the wall centre, weighted
    by pi/2 over the profile.  H_pin is the pinning field of the wall position."""
    s = spin_hall_polarisation()[1]
    a = gamma0 * (h_z + sp.pi / 2 * s * h_sh * sp.cos(phi) + h_pin)
    b = gamma0 * (-h_k / 2 * sp.sin(2 * phi) - charge * sp.pi / 2 * h_d * sp.sin(phi)
                  + sp.pi / 2 * (h_x * sp.sin(phi) - (h_y + s * h_fl) * sp.cos(phi)))
    return a, b


def wall_rates(a, b, alpha, width, charge=1):
    """(dq/dt [m/s], dphi/dt [1/s]) from the drive terms of ``drive_terms``: solving the two
    coupled equations gives dq/dt = Q Delta (B + alpha A)/(1 + alpha^2) and
    dphi/dt = (A - alpha B)/(1 + alpha^2)."""
    return charge * width * (b + alpha * a) / (1 + alpha**2), (a - alpha * b) / (1 + alpha**2)



def angle_relaxation_time(a, b, alpha, phi):
    """Time constant of the wall angle about a steady angle  [s] (evaluate at that angle):
    with the drive uniform along the track (no pinning gradient), dphi/dt = (A - alpha B)/(1 + alpha^2)
    of ``wall_rates`` depends on phi alone, so a small deviation from a steady angle decays as
    exp(-t/tau) with

        tau = (1 + alpha^2) / |d(A - alpha B)/dphi|.

    Without current A = gamma0 H_z does not depend on phi and tau = (1 + alpha^2)/(alpha gamma0 |b'|),
    b = B/gamma0 the restoring torque of H_K, H_D and H_x; about a Neel rest angle
    |b'| = (pi/2)|Q H_D - H_x| - H_K, about an intermediate one H_K sin^2 phi_0 (PHYSICS 6.2, derived by
    linearising the 1D model of A. Thiaville et al., EPL 100, 57002 (2012); volume/page from memory)."""
    return (1 + alpha**2) / sp.Abs(sp.diff(a - alpha * b, phi))

# ---- pinning landscape (energies per unit wall area; the field is their derivative) ------------
def periodic_pinning_energy(q, ms, h_dep, pitch):
    """sigma_pin(q) = (2 mu0 Ms H_dep pitch/pi) (1 - cos(2 pi q/pitch))/2  [J/m^2]: a smooth
    periodic landscape with minima at q = k * pitch whose largest restoring field is H_dep
    (a model choice, common practice, no source)."""
    return 2 * mu0 * ms * h_dep * pitch / sp.pi * (1 - sp.cos(2 * sp.pi * q / pitch)) / 2


def edge_barrier_energy(q, ms, h_edge, x_lo, x_hi, length):
    """Barriers that keep the wall inside [x_lo, x_hi]  [J/m^2]:
    sigma = 2 mu0 Ms H_e l [r((q - x_hi)/l) + r((x_lo - q)/l)],  r(u) = (u + ln(2 cosh u))/2,
    a smooth ramp whose restoring field rises from 0 to H_e over a few l at each end and stays
    bounded (no overflow in either simulator; a model choice, no source)."""
    def ramp(u):
        return (u + sp.log(2 * sp.cosh(u))) / 2

    return 2 * mu0 * ms * h_edge * length * (ramp((q - x_hi) / length) + ramp((x_lo - q) / length))


def pinning_field(energy, q, ms, charge=1):
    """H_pin(q) = -(Q/(2 mu0 Ms)) d sigma_pin/dq  [A/m] (PHYSICS 6.2), derived symbolically.

    The simplification takes longer than the rest of a cached build, so its result is remembered
    in compactgen's cache (compactgen/cache.py, folder ``sympy``) by the srepr of the arguments and
    read back with eval(srepr) == expression, SymPy's own round trip."""
    from compactgen import cache

    done = {}

    def compute():
        done["field"] = _pinning_field(energy, q, ms, charge)
        return sp.srepr(done["field"])

    def valid(text):
        done["read"] = _from_srepr(text)
        return done["read"].free_symbols <= sp.sympify(energy).free_symbols | {q, ms}

    key = (f"{cache.source_digest('physics/domain_wall.py')} sympy {sp.__version__} pinning_field "
           + "|".join(sp.srepr(sp.sympify(x)) for x in (energy, q, ms, charge)))
    text = cache.remembered("sympy", key, compute, lambda t: isinstance(t, str) and valid(t), stem="pinning")
    return done["field"] if "field" in done else done["read"]


def _pinning_field(energy, q, ms, charge):
    field = -charge / (2 * mu0 * ms) * sp.diff(energy, q)
    return sp.expand(field).replace(lambda e: e.is_Mul and any(isinstance(f, sp.sinh) for f in e.args),
                                    lambda e: sp.trigsimp(e))


_SYMPY_NAMES: dict = {}


def _from_srepr(text: str):
    """The expression an srepr string describes (only SymPy's names are in reach)."""
    if not _SYMPY_NAMES:
        exec("from sympy import *", _SYMPY_NAMES)  # noqa: S102 (a fixed import, no data)
    return eval(text, {"__builtins__": {}}, _SYMPY_NAMES)  # noqa: S307 (an entry written by pinning_field)


# ---- closed forms (datasheet figures and bench expectations) -------------------------------
def dmi_saturation_velocity(d, ms):
    """v_D = (pi/2) gamma_e D / Ms  [m/s], the largest SOT-driven wall speed (Thiaville 2012;
    gamma_e in rad/(s T), PHYSICS 6.3 and 12.3)."""
    return sp.pi / 2 * gamma_e * d / ms


def walker_field(alpha, h_k, h_d, h_x=0, charge=1):
    """Walker breakdown field of the 1D (q, phi) model with DMI  [A/m]: the largest |H_z| with a
    steady wall (no current, no pinning, H_y = 0), exact for the model of ``drive_terms``.

    Derivation (PHYSICS 6.3; A. Thiaville, S. Rohart, E. Jue, V. Cros and A. Fert, EPL 100, 57002
    (2012) for the model and its large-DMI limit): a steady wall needs dphi/dt = 0, i.e. A = alpha B,
    so gamma0 H_z = alpha B(phi) must be reached by the restoring torque
    B(phi)/gamma0 = -(H_K/2) sin 2phi - (pi/2)(Q H_D - H_x) sin phi.  With phi = -psi (or pi - psi
    when Q H_D - H_x < 0) this is (a/2) sin 2psi + c sin psi, a = H_K, c = (pi/2)|Q H_D - H_x|; its
    maximum sits where a cos 2psi + c cos psi = 0, a quadratic in u = cos psi:
    2 a u^2 + c u - a = 0, u* = 2a/(c + sqrt(c^2 + 8 a^2)) (the root in (0, 1/sqrt 2]), so

        H_W = alpha sqrt(1 - u*^2) (a u* + c).

    Limits: c = 0 gives alpha H_K/2 (Schryer & Walker, ``walker_field_no_dmi``); a << c gives
    (pi/2) alpha |H_D - Q H_x| (Thiaville 2012, ``walker_field_dmi_limit`` at H_x = 0).  Without H_y the
    restoring torque is odd in phi, so the breakdown is the same for both signs of H_z."""
    a = h_k
    c = sp.pi / 2 * sp.Abs(charge * h_d - h_x)
    u = 2 * a / (c + sp.sqrt(c**2 + 8 * a**2))
    return alpha * sp.sqrt(1 - u**2) * (a * u + c)


def walker_field_dmi_limit(alpha, h_d):
    """Large-DMI approximation of the Walker field, (pi/2) alpha |H_D|  [A/m] (H_K << H_D; Thiaville
    et al., EPL 100, 57002 (2012)); a comparison figure, below the exact ``walker_field``."""
    return sp.pi / 2 * alpha * sp.Abs(h_d)


def walker_field_no_dmi(alpha, h_k):
    """Walker breakdown field without DMI (and without in-plane field), H_W = alpha H_K / 2  [A/m]
    (N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974), volume/page from memory)."""
    return alpha * h_k / 2


def field_velocity_from_angle_rate(h_z, phi_rate, alpha, width):
    """Wall speed of the 1D model under H_z alone (no current, no pinning, Q = +1)  [m/s]:
    eliminating B between the two equations of ``drive_terms``/``wall_rates`` gives exactly
    dq/dt = (Delta/alpha)(gamma0 H_z - dphi/dt) at every instant (PHYSICS 6.2, derived).  With
    dphi/dt = 0 it is the steady gamma0 Delta H_z/alpha below the Walker field; with the mean
    2 pi/T over a precession period T it is the mean speed above it."""
    return width / alpha * (gamma0 * h_z - phi_rate)


def precession_period_integral(h_z, alpha, restoring, phi):
    """Time for the wall angle to advance by 2 pi above the Walker field  [s]:
    T = ((1 + alpha^2)/gamma0) * Integral_0^{2 pi} dphi / |H_z - alpha b(phi)|, with ``restoring``
    b(phi) = B/gamma0 [A/m] (the field-driven restoring torque of ``drive_terms``), from
    dphi/dt = gamma0 (H_z - alpha b(phi))/(1 + alpha^2) (PHYSICS 6.2, derived).  An unevaluated
    sympy Integral (one harmonic, D = 0, gives twice ``precession_period``); evaluate it numerically."""
    return (1 + alpha**2) / gamma0 * sp.Integral(1 / sp.Abs(h_z - alpha * restoring), (phi, 0, 2 * sp.pi))


def field_velocity(h_z, h_w, alpha, width):
    """Field-driven wall velocity without DMI or current  [m/s], ``h_w`` = ``walker_field_no_dmi``
    (Schryer & Walker 1974):
    gamma0 Delta H_z/alpha up to H_W; above it the time average
    (gamma0 Delta/alpha)[H_z - sqrt(H_z^2 - H_W^2)/(1 + alpha^2)] (PHYSICS 6.3, derived)."""
    below = gamma0 * width * h_z / alpha
    above = gamma0 * width / alpha * (h_z - sp.sign(h_z) * sp.sqrt(h_z**2 - h_w**2) / (1 + alpha**2))
    return sp.Piecewise((below, sp.Abs(h_z) <= h_w), (above, True))


def precession_period(h_z, h_w, alpha):
    """Period of the wall-angle precession above the Walker field without DMI (``h_w`` =
    ``walker_field_no_dmi``), the time phi takes to advance by pi: (1 + alpha^2) pi / (gamma0 sqrt(H_z^2 - H_W^2))  [s] (PHYSICS 6.3, derived)."""
    return (1 + alpha**2) * sp.pi / (gamma0 * sp.sqrt(h_z**2 - h_w**2))


def sot_velocity_without_hk(h_sh, alpha, h_d, width):
    """Steady SOT-driven speed neglecting H_K, signed (PHYSICS 6.3, derived, Q = +1 or -1):
    v = -s (pi/2) gamma0 Delta (H_SH/alpha) * alpha H_D / sqrt((alpha H_D)^2 + H_SH^2), s = sigma_y = -1
    (``drive_terms``), i.e. |v| = v_D x/sqrt(1 + x^2) with x = H_SH/(alpha H_D); v = 0 for a Bloch wall
    (H_D = 0).  With the heavy metal below, v has the sign of theta_sh * D * J: a Pt-below track
    (theta_sh > 0) with left-handed walls (D > 0) moves them along the current."""
    s = spin_hall_polarisation()[1]
    return -s * sp.pi / 2 * gamma0 * width * h_sh * h_d / sp.sqrt((alpha * h_d) ** 2 + h_sh**2)


def depinning_current_density(h_dep, theta_sh, ms, t_free):
    """Rigid Neel wall: motion starts when (pi/2) H_SH exceeds H_dep, so
    J_dep = (2/pi) H_dep 2 e mu0 Ms t_F/(hbar theta_SH)  [A/m^2] (PHYSICS 6.4, derived)."""
    return current_density_for_field(2 / sp.pi * h_dep, theta_sh, ms, t_free)


def half_saturation_current_density(alpha, h_d, theta_sh, ms, t_free):
    """Current density at which the SOT speed (H_K neglected) reaches v_D/sqrt(2): x = 1, i.e.
    H_SH = alpha |H_D|; J_1/2 = 2 e alpha t_F D/(hbar theta_SH Delta) (PHYSICS 6.3)."""
    return current_density_for_field(alpha * sp.Abs(h_d), theta_sh, ms, t_free)
