"""Physical constants, CODATA 2022 through scipy.constants; the only place they are read
(the numbers are remembered per scipy version in compactgen's cache, see ``_values``).

The generated Verilog-A deliberately does not use ``P_Q``/``P_U0`` from ``constants.vams``:
the header bundled with openvaf-r selects older CODATA sets and defines mu0 as exactly
4*pi*1e-7, so the same model would differ between back ends.  Every back end instead gets
the numbers below, printed at full precision.
"""
from __future__ import annotations

import math

_NAMES = ("HBAR", "Q_E", "MU0", "K_B", "GAMMA_E", "M_E", "H_PLANCK", "ZERO_CELSIUS")


def _from_scipy() -> dict[str, float]:
    from scipy import constants as _c

    return dict(
        HBAR=_c.hbar,  # [J s]
        Q_E=_c.e,  # [C]
        MU0=_c.mu_0,  # [N/A^2], CODATA 2022 (not exactly 4*pi*1e-7)
        K_B=_c.k,  # [J/K]
        GAMMA_E=abs(_c.physical_constants["electron gyromag. ratio"][0]),  # [rad/(s T)]
        M_E=_c.m_e,  # [kg]
        H_PLANCK=_c.h,  # [J s]
        ZERO_CELSIUS=_c.zero_Celsius,  # [K]
    )


def _values() -> dict[str, float]:
    """The numbers of _from_scipy, remembered by scipy's version in the cache (compactgen/cache.py):
    importing scipy.constants takes longer than a whole `compactgen build` of a cached model."""
    from compactgen import cache

    def valid(v):
        return (isinstance(v, dict) and set(v) == set(_NAMES)
                and all(isinstance(x, float) and math.isfinite(x) for x in v.values()))

    return cache.remembered("numbers", f"{cache.source_digest('model/constants.py')} scipy {cache.package_version('scipy')}",
                            lambda: {k: float(v) for k, v in _from_scipy().items()}, valid, stem="codata")


_V = _values()
HBAR = _V["HBAR"]  # [J s]
Q_E = _V["Q_E"]  # [C]
MU0 = _V["MU0"]  # [N/A^2], CODATA 2022 (not exactly 4*pi*1e-7)
K_B = _V["K_B"]  # [J/K]
GAMMA_E = _V["GAMMA_E"]  # [rad/(s T)], magnitude
M_E = _V["M_E"]  # [kg]
H_PLANCK = _V["H_PLANCK"]  # [J s]
ZERO_CELSIUS = _V["ZERO_CELSIUS"]  # [K]

#: name used in generated code -> (value, unit, meaning)
TABLE: dict[str, tuple[float, str, str]] = {
    "c_hbar": (HBAR, "J*s", "reduced Planck constant"),
    "c_qe": (Q_E, "C", "elementary charge"),
    "c_mu0": (MU0, "N/A^2", "vacuum permeability (CODATA 2022)"),
    "c_kb": (K_B, "J/K", "Boltzmann constant"),
    "c_gamma": (GAMMA_E, "rad/(s*T)", "electron gyromagnetic ratio, magnitude"),
}
