"""Temperature laws of the free layer and the tunnel barrier.

Every law is written relative to the parameters' own temperature ``tnom`` (the card values are
measured there), so at T = tnom each ratio is exactly 1.  Each law is clamped where it would
otherwise change sign or leave the domain of a real power (above the Curie temperature, or a
spin polarisation driven below zero): a circuit simulator may be asked for any temperature, and
a law that crosses zero gives NaN and a failed transient instead of a clear number (ECOSYSTEM
1.4: a junction-potential law crossing zero at ~52 degC broke hot transients in an open PDK).
"""
from __future__ import annotations

import sympy as sp

#: smallest value the Bloch factor 1 - (T/Tc)^(3/2) is allowed to reach (T at or above Tc)
BLOCH_FLOOR = sp.Rational(1, 1000)
#: lowest device temperature the laws are evaluated at [K]; keeps real powers defined
T_FLOOR = 1


def device_temperature(t_sim, dtemp):
    """T = T_sim + dtemp  [K]: the simulator's temperature plus the instance's offset
    (self-heating or a local hot spot), floored at 1 K so that real powers of T stay defined
    (common practice of SPICE models, no source)."""
    return sp.Max(t_sim + dtemp, T_FLOOR)


def bloch_factor(temperature, t_curie):
    """1 - (T/T_c)^(3/2), floored at BLOCH_FLOOR.

    Bloch's T^(3/2) law of spin-wave demagnetisation (F. Bloch, Z. Phys. 61, 206 (1930), from
    memory), normalised with the Curie temperature: a fitting convenience, common practice, no
    source (PHYSICS 9)."""
    return sp.Max(1 - (temperature / t_curie) ** sp.Rational(3, 2), BLOCH_FLOOR)


def magnetisation_ratio(temperature, t_ref, t_curie):
    """Ms(T)/Ms(t_ref) with Ms(T) = Ms(0) [1 - (T/T_c)^(3/2)]  (PHYSICS 9, CHECK 9a)."""
    return bloch_factor(temperature, t_curie) / bloch_factor(t_ref, t_curie)


def callen_callen(k_ref, ms_ratio, exponent):
    """K(T) = K(t_ref) [Ms(T)/Ms(t_ref)]^n  [J/m^3 or J/m^2].

    Source: H. B. Callen and E. Callen, J. Phys. Chem. Solids 27, 1271 (1966) (volume/page from
    memory); n = l(l+1)/2 = 3 for single-ion uniaxial anisotropy; CoFeB/MgO interface anisotropy
    shows smaller exponents, ~2-2.5 (from memory).  H_k = 2K/(mu0 Ms) then scales as Ms^(n-1).
    """
    return k_ref * ms_ratio**exponent


def polarisation_ratio(temperature, t_ref, decay):
    """P(T)/P(t_ref) with P(T) = P0 (1 - alpha_sp T^(3/2)), floored at 0.

    Source: C. H. Shang, J. Nowak, R. Jansen and J. S. Moodera, Phys. Rev. B 58, R2917 (1998)
    (abstract seen; volume/page from memory).  The spin-independent conductance term of that
    paper is not modelled: R_P is taken temperature independent."""
    return sp.Max(1 - decay * temperature ** sp.Rational(3, 2), 0) / (1 - decay * t_ref ** sp.Rational(3, 2))
