"""Geometry of pillars and demagnetising factors."""
from __future__ import annotations

import math

import sympy as sp


def disk_area(diameter):
    """Area of a circular pillar, pi d^2 / 4  [m^2]."""
    return sp.pi * diameter**2 / 4


def cylinder_demag_nz(diameter: float, thickness: float) -> float:
    """Magnetometric axial demagnetising factor of a uniformly magnetised cylinder,

        N_z = (2R/L) * Integral_0^inf [J1(x)/x]^2 (1 - exp(-x L/R)) dx,

    derived by Fourier transform of the shape function (PHYSICS 1.3); tabulated values in
    D.-X. Chen, J. A. Brug and R. B. Goldfarb, IEEE Trans. Magn. 27, 3601 (1991).
    Evaluated numerically at build time: a geometry-derived number, not a circuit equation
    (remembered per diameter and thickness in compactgen's cache, compactgen/cache.py: scipy's
    import and the quadrature take longer than a whole cached build).
    """
    from compactgen import cache

    if diameter <= 0 or thickness <= 0:
        raise ValueError("diameter and thickness must be positive")
    key = (f"{cache.source_digest('physics/geometry.py')} scipy {cache.package_version('scipy')} "
           f"cylinder_demag_nz {float(diameter).hex()} {float(thickness).hex()}")
    value = cache.remembered("numbers", key, lambda: float(_cylinder_demag_nz(diameter, thickness)),
                             lambda v: isinstance(v, float) and math.isfinite(v), stem="demag")
    # the quadrature's result is a numpy.float64, and its repr is part of the parameter digest
    # printed in every generated file (render.param_digest): the remembered number keeps the type
    import numpy as np

    return np.float64(value)


def _cylinder_demag_nz(diameter: float, thickness: float) -> float:
    from scipy import integrate, special

    r = diameter / 2.0
    a = thickness / r

    def f(x):
        if x < 1e-8:
            return 0.25 * (1.0 - math.exp(-x * a))
        return (special.j1(x) / x) ** 2 * (-math.expm1(-x * a))

    total = 0.0
    # oscillatory tail: integrate between Bessel zeros, stop when contributions vanish
    zeros = special.jn_zeros(1, 4000)
    edges = [0.0, *zeros]
    for lo, hi in zip(edges[:-1], edges[1:]):
        part, _ = integrate.quad(f, lo, hi, epsabs=1e-15, epsrel=1e-12, limit=200)
        total += part
    # remaining tail ~ integral of (2/(pi x^3)) cos^2(...) ~ 1/(2 pi x^2)
    x_end = edges[-1]
    total += 1.0 / (2.0 * math.pi * x_end**2)
    return 2.0 / a * total
