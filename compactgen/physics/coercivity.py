"""Thermally activated switching field of a uniaxial macrospin with the field along the easy axis.

Barrier in a reduced field h = H/H_k (field against the magnetisation, 0 <= h < 1):
E_b(h) = K V (1 - h)^2 (Stoner-Wohlfarth, psi = 0; PHYSICS 3), escape rate
(1/tau0) exp[-Delta (1 - h)^2] with Delta = K V/(k_B T) and tau0 the attempt time.
For a perpendicular free layer H_k is the effective anisotropy field H_k,eff.
"""
from __future__ import annotations

import sympy as sp


def sharrock_switching_field(h_k, delta, attempt_time, hold_time):
    """Median switching field for a field held for ``hold_time``  [A/m]:

        H_c(t) = H_k [1 - sqrt( ln(t / (tau0 ln 2)) / Delta )]

    Source: M. P. Sharrock, J. Appl. Phys. 76, 6413 (1994), with exponent 1/n = 1/2 for
    aligned uniaxial particles (form and reference from memory); re-derived here: the
    survival probability exp[-(t/tau0) exp(-Delta (1-h)^2)] equals 1/2 at this field.
    Valid for t >> tau0 and H_c > 0.
    """
    return h_k * (1 - sp.sqrt(sp.log(hold_time / (attempt_time * sp.log(2))) / delta))


def ramp_switching_field(h_k, delta, attempt_time, sweep_rate):
    """Median switching field when the field is ramped at ``sweep_rate`` = dH/dt  [A/m]:

        H_c = H_k [1 - erfcinv( 2 ln2 R tau0 sqrt(Delta) / (sqrt(pi) H_k) ) / sqrt(Delta)]

    Derived (same barrier and rate as sharrock_switching_field): the survival probability
    exp[-(1/(R tau0)) Integral_{-inf}^{H} exp(-Delta (1 - H'/H_k)^2) dH'] =
    exp[-(H_k/(R tau0)) (sqrt(pi)/(2 sqrt(Delta))) erfc(sqrt(Delta) (1 - h))] equals 1/2.
    The large-argument expansion of erfc gives back Sharrock's form with an effective hold
    time H_k / (2 Delta (1 - h) R).  Checked against direct quadrature in the tests.
    """
    arg = 2 * sp.log(2) * sweep_rate * attempt_time * sp.sqrt(delta) / (sp.sqrt(sp.pi) * h_k)
    return h_k * (1 - sp.erfcinv(arg) / sp.sqrt(delta))


def ramp_survival_probability(h_field, h_k, delta, attempt_time, sweep_rate):
    """Probability that the magnetisation has not yet switched when a field ramped at
    ``sweep_rate`` from far below reaches ``h_field``  [-] (derived, see ramp_switching_field):

        S(H) = exp[ -(H_k / (R tau0)) (sqrt(pi) / (2 sqrt(Delta))) erfc(sqrt(Delta) (1 - H/H_k)) ]

    ramp_switching_field is the field where S = 1/2.
    """
    return sp.exp(-(h_k / (sweep_rate * attempt_time)) * sp.sqrt(sp.pi) / (2 * sp.sqrt(delta))
                  * sp.erfc(sp.sqrt(delta) * (1 - h_field / h_k)))


def switching_field_spread(h_k, delta, h_c):
    """Standard deviation of the switching field around its median ``h_c``  [A/m]:

        sigma_H = (pi / sqrt(6)) * H_k / (2 Delta (1 - H_c/H_k))

    Derived (Gumbel approximation): near H_c the cumulative escape rate grows as
    exp[2 Delta (1 - h_c)(H - H_c)/H_k] (the large-argument form of erfc in
    ramp_survival_probability; the same holds for a held field), so the switching field has
    a Gumbel distribution of scale H_k/(2 Delta (1 - h_c)), whose standard deviation is
    pi/sqrt(6) times the scale.  Checked against sampled switching fields in the tests.
    """
    return sp.pi / sp.sqrt(6) * h_k / (2 * delta * (1 - h_c / h_k))
