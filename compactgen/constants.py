"""Physical constants, CODATA 2022 through scipy.constants; the only place they are read.

The generated Verilog-A deliberately does not use ``P_Q``/``P_U0`` from ``constants.vams``:
the header bundled with openvaf-r selects older CODATA sets and defines mu0 as exactly
4*pi*1e-7, so the same model would differ between back ends.  Every back end instead gets
the numbers below, printed at full precision.
"""
from __future__ import annotations

from scipy import constants as _c

HBAR = _c.hbar  # [J s]
Q_E = _c.e  # [C]
MU0 = _c.mu_0  # [N/A^2], CODATA 2022 (not exactly 4*pi*1e-7)
K_B = _c.k  # [J/K]
GAMMA_E = abs(_c.physical_constants["electron gyromag. ratio"][0])  # [rad/(s T)]
M_E = _c.m_e  # [kg]
H_PLANCK = _c.h  # [J s]
ZERO_CELSIUS = _c.zero_Celsius  # [K]

#: name used in generated code -> (value, unit, meaning)
TABLE: dict[str, tuple[float, str, str]] = {
    "c_hbar": (HBAR, "J*s", "reduced Planck constant"),
    "c_qe": (Q_E, "C", "elementary charge"),
    "c_mu0": (MU0, "N/A^2", "vacuum permeability (CODATA 2022)"),
    "c_kb": (K_B, "J/K", "Boltzmann constant"),
    "c_gamma": (GAMMA_E, "rad/(s*T)", "electron gyromagnetic ratio, magnitude"),
}
