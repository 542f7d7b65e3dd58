"""Current-to-torque conversion: spin-transfer and spin-orbit torque amplitudes as fields."""
from __future__ import annotations

from compactgen.physics.constants import hbar, mu0, q_e


def spin_torque_field(j, efficiency, ms, t_free):
    """Damping-like torque amplitude as a field, H = hbar * eff * J / (2 e mu0 Ms t_F)  [A/m].

    With ``efficiency`` = eta (spin polarisation efficiency) and J the current density through
    the pillar this is Slonczewski's torque: J. C. Slonczewski, J. Magn. Magn. Mater. 159, L1
    (1996).  With ``efficiency`` = theta_SH (signed effective spin Hall angle) and J the charge
    current density in the heavy metal it is the spin Hall field: L. Liu, O. J. Lee,
    T. J. Gudmundsen, D. C. Ralph and R. A. Buhrman, Phys. Rev. Lett. 109, 096602 (2012).
    """
    return hbar * efficiency * j / (2 * q_e * mu0 * ms * t_free)
