"""Closed-form thermal figures, evaluated numerically from the sympy physics blocks.

Precessional write-error rate (PHYSICS 4.2b), thermally activated switching and retention
(PHYSICS 4.3): the equations live in ``physics/switching.py`` and ``physics/thermal.py``; this
module only lambdifies them and solves for the critical initial angle.
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
import sympy as sp

from compactgen.model import bignum
from compactgen.physics import switching, thermal

_i, _th, _t, _tau, _dl, _n, _r = sp.symbols("i theta t tau delta n r", positive=True)


#: the closed forms, lambdified on first use (each separately: a build needs two of them)
_FORMS = dict(
    integral=lambda: sp.lambdify((_i, _th), switching.switching_integral(_i, _th), "math"),
    sun=lambda: sp.lambdify((_dl, _i, _t, _tau), switching.sun_switching_probability(_dl, _i, _t, _tau), "numpy"),
    angle=lambda: sp.lambdify((_dl, _th), switching.angle_switching_probability(_dl, _th), "numpy"),
    activated=lambda: sp.lambdify((_t, _tau), switching.activated_switching_probability(_t, _tau), "numpy"),
    tau_act=lambda: sp.lambdify((_tau, _dl, _r, _n), thermal.activated_switching_time(_tau, _dl, _r, _n), "numpy"),
    brown=lambda: sp.lambdify((_r, _tau, _dl), thermal.brown_relaxation_time(_r, _tau, _dl), "numpy"),
)


@lru_cache(maxsize=None)
def _fn(name: str):
    return _FORMS[name]()


def critical_angle(i: float, t: float, tau0: float) -> float:
    """Smallest initial angle theta0 whose exact macrospin time to the equator at drive i > 1 is
    at most t: solves tau0 * I(i, theta0) = t (switching.switching_integral)."""
    if i <= 1:
        raise ValueError(f"precessional switching needs i = I/I_c0 > 1, got {i:g}")
    f = _fn("integral")
    target = t / tau0
    if f(i, math.pi / 2 - 1e-12) >= target:
        return math.pi / 2
    lo = 1e-7  # below, 1 - cos(theta) underflows; exp(-Delta theta^2) = 1 there anyway
    if f(i, lo) <= target:
        return 0.0
    from scipy.optimize import brentq  # here, not at import: `compactgen build` needs no scipy

    return brentq(lambda th: f(i, th) - target, lo, math.pi / 2 - 1e-12, xtol=1e-15, rtol=1e-13)


def precessional_probability(delta: float, i: float, t, tau0: float, form: str = "exact") -> np.ndarray:
    """Switching probability of a step current pulse of length t (PHYSICS 4.2b): Boltzmann
    initial angles, then deterministic macrospin motion; ``form`` "exact" uses the exact
    switching integral, "sun" Sun's small-angle time."""
    t = np.atleast_1d(np.asarray(t, float))
    if form == "sun":
        return np.asarray(_fn("sun")(delta, i, t, tau0), float)
    if form != "exact":
        raise ValueError(f"form must be 'exact' or 'sun', not {form!r}")
    th = np.array([critical_angle(i, x, tau0) for x in t])
    return np.asarray(_fn("angle")(delta, th), float)


def activated_probability(delta: float, ratio: float, t, tau0: float = 1e-9, exponent: float = 2.0) -> np.ndarray:
    """P_sw(t) = 1 - exp(-t/tau), tau = tau0 exp[Delta (1 - I/I_c0)^n] (PHYSICS 4.3)."""
    tau = _fn("tau_act")(tau0, delta, ratio, exponent)
    return np.asarray(_fn("activated")(np.asarray(t, float), tau), float)


def retention_time(delta: float, tau0: float = 1e-9) -> float:
    """Neel-Brown retention tau0 exp(Delta) [s] (conventional tau0 = 1 ns); beyond the double
    range a bignum.Overflow (inf that keeps its log10)."""
    return bignum.exp(delta, tau0)


def brown_dwell_time(alpha: float, hk_eff: float, delta: float) -> float:
    """Mean dwell time in one well, 2 tau_N, with Brown's attempt time (PHYSICS 4.3)."""
    return float(2 * _fn("brown")(alpha, hk_eff, delta))
