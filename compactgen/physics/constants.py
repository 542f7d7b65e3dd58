"""Physical constants as sympy symbols; numbers come from compactgen.model.constants (CODATA 2022)."""
from __future__ import annotations

import sympy as sp

from compactgen.model import constants as _c

CONST = {name: sp.Symbol(name, positive=True) for name in _c.TABLE}
hbar = CONST["c_hbar"]
q_e = CONST["c_qe"]
mu0 = CONST["c_mu0"]
k_b = CONST["c_kb"]
gamma_e = CONST["c_gamma"]
#: gyromagnetic ratio for H in A/m: gamma0 = mu0*|gamma_e|  (PHYSICS unit rule)
gamma0 = mu0 * gamma_e


def const_values() -> dict[sp.Symbol, float]:
    return {CONST[k]: v[0] for k, v in _c.TABLE.items()}
