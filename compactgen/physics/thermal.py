"""Thermal stability of a uniaxial macrospin."""
from __future__ import annotations

import sympy as sp

from compactgen.physics.constants import gamma0, k_b, mu0


def barrier_energy(k_eff, volume):
    """E_b = K_eff V  [J] (uniaxial macrospin, zero field)."""
    return k_eff * volume


def thermal_stability(e_b, temperature):
    """Delta = E_b / (k_B T)  [-]."""
    return e_b / (k_b * temperature)


def thermal_mode_angle(delta):
    """Most probable thermal cone angle theta0 = sqrt(1/(2 Delta)) of p(theta) ~ theta
    exp(-Delta theta^2) (derived, PHYSICS 4.4; the rms angle is 1/sqrt(Delta))."""
    return sp.sqrt(1 / (2 * delta))


#: exp(-gamma_E/2), gamma_E = Euler's constant (0.5772156649...)
_EXP_HALF_EULER = sp.Float(sp.exp(-sp.EulerGamma / 2).evalf(20), 17)


def thermal_rest_angle(delta):
    """The thermal rest angle theta_th = exp(-gamma_E/2)/sqrt(Delta) of a uniaxial macrospin: the
    geometric mean exp(<ln theta>) of its Boltzmann cone angle.

    Derivation: near a pole the Boltzmann density is p(theta) ~ theta exp(-Delta theta^2)
    (boltzmann_cone_weight), so theta^2 is exponentially distributed with mean 1/Delta
    (equipartition: k_B T/2 for each of the two transverse components of E = K_eff V theta^2);
    for an exponential variable X, <ln X> = ln<X> - gamma_E (a standard property of the exponential
    distribution, common practice, no source).  Precessional switching times go as
    ln(pi/(2 theta_0)) (J. Z. Sun, Phys. Rev. B 62, 570 (2000)), so a deterministic start at
    theta_th gives the ensemble-mean switching time of thermal starts in that regime."""
    return _EXP_HALF_EULER / sp.sqrt(delta)


def neel_brown_time(tau0, delta):
    """Neel-Brown relaxation time tau = tau0 exp(Delta)  [s]
    (L. Neel, Ann. Geophys. 5, 99 (1949), from memory; W. F. Brown, Phys. Rev. 130, 1677 (1963))."""
    return tau0 * sp.exp(delta)


def brown_relaxation_time(alpha, h_k_eff, delta):
    """Brown's high-barrier relaxation time for an axially symmetric uniaxial barrier  [s]:
    tau_N = (sqrt(pi)/2) (1+a^2)/(a gamma0 H_k,eff) Delta^(-1/2) exp(Delta).

    Source: W. F. Brown, Phys. Rev. 130, 1677 (1963) (formula from memory, checked by
    Fokker-Planck quadrature in PHYSICS 4.3).  The mean dwell time in one well is 2 tau_N.
    """
    return sp.sqrt(sp.pi) / 2 * (1 + alpha**2) / (alpha * gamma0 * h_k_eff) / sp.sqrt(delta) * sp.exp(delta)


def activated_switching_time(tau0, delta, i_ratio, exponent):
    """tau(I) = tau0 exp[Delta (1 - I/I_c0)^n] for I < I_c0  [s]
    (R. H. Koch, J. A. Katine and J. Z. Sun, Phys. Rev. Lett. 92, 088302 (2004) with n = 1;
    n = 2 for perpendicular macrospins: T. Taniguchi and H. Imamura, arXiv:1010.5845)."""
    return tau0 * sp.exp(delta * (1 - i_ratio) ** exponent)


def thermal_field_strength(alpha, ms, volume, temperature):
    """Strength D of Brown's thermal field in the Gilbert equation  [(A/m)^2 s]:
    <H_th,i(t) H_th,j(t')> = D delta_ij delta(t - t'),  D = 2 alpha k_B T / (gamma0 mu0 Ms V),
    gamma0 = mu0 |gamma_e|; a time step dt gives each component the variance D/dt.

    Source: W. F. Brown, Phys. Rev. 130, 1677 (1963); the Gilbert gamma (not gamma/(1+alpha^2))
    belongs here even when the explicit LL form is integrated: J. L. Garcia-Palacios and
    F. J. Lazaro, Phys. Rev. B 58, 14937 (1998) (volume/page from memory), PHYSICS 8."""
    return 2 * alpha * k_b * temperature / (gamma0 * mu0 * ms * volume)


def boltzmann_cone_weight(theta, delta):
    """Unnormalised equilibrium density of the cone angle of a uniaxial macrospin in zero field,
    p(theta) ~ sin(theta) exp(-Delta sin^2 theta) (Boltzmann weight of E = K_eff V sin^2 theta
    times the solid-angle factor; near a pole the 2D Rayleigh form of PHYSICS 4.4)."""
    return sp.sin(theta) * sp.exp(-delta * sp.sin(theta) ** 2)


def thermal_field_rms(strength, step):
    """Standard deviation of one component of Brown's thermal field held over (or sampled every)
    time step ``step``: sqrt(D/step)  [A/m], D = thermal_field_strength.  White noise of strength
    D integrates over a step to a Gaussian of variance D step; a piecewise-constant (or linearly
    interpolated) sample sequence of spacing ``step`` has the same low-frequency spectral density D
    when its samples have variance D/step (W. F. Brown, Phys. Rev. 130, 1677 (1963); the step
    form: common practice, no source)."""
    return sp.sqrt(strength / step)

