"""Domain-wall velocity forward model: the rigid-wall steady state of PHYSICS 6.3, numerically.

Every equation comes from ``compactgen.physics`` (wall_motion, anisotropy, torques) and is
lambdified here; this module only finds the steady state:

- The wall-angle equation phi_dot = f(phi) has no q dependence without pinning, so from the
  rest angle (minimum of the wall energy) phi moves monotonically to the first zero of f in
  the direction of f(phi_rest): that zero is the steady state (the torque-balance root; with
  H_K = 0 it reproduces the closed form, with D = 0 and H_z alone Schryer-Walker).
- If f has no zero on a full turn the wall precesses (above Walker breakdown); the velocity
  is then the time average <q_dot> = Int q_dot/f dphi / Int 1/f dphi over one period.

The parameter names are those of ``WALL_SPECS`` (a domain-wall track: free layer, exchange,
DMI, damping, spin Hall angle); a device kind with other names passes a ``names`` mapping.
"""
from __future__ import annotations

import functools
import math

import numpy as np
import sympy as sp

from ..params import ParamSpec
from ..physics import anisotropy, torques, wall_motion
from ..physics.constants import const_values

NM = 1e-9

#: parameters the wall-velocity model reads (SI units); ranges bound the fit
WALL_SPECS: tuple[ParamSpec, ...] = (
    ParamSpec("ms", "A/m", 1.0e6, 1e4, 3e6, "saturation magnetisation of the track", card_unit="MA/m",
              group="track"),
    ParamSpec("t_free", "m", 1.0 * NM, 0.3 * NM, 10 * NM, "ferromagnet thickness", card_unit="nm", group="track"),
    ParamSpec("ki", "J/m^2", 1.3e-3, 0.0, 1e-2, "interface anisotropy energy density", card_unit="mJ/m^2",
              group="track"),
    ParamSpec("kb", "J/m^3", 0.0, -1e7, 1e7, "bulk uniaxial anisotropy energy density", group="track"),
    ParamSpec("a_ex", "J/m", 15e-12, 1e-12, 5e-11, "exchange stiffness", card_unit="pJ/m",
              source="Co-based 10-20 pJ/m (from memory)", group="track"),
    ParamSpec("d_dmi", "J/m^2", 1e-3, -5e-3, 5e-3, "interfacial DMI constant (D > 0: up-down wall has phi = pi)",
              card_unit="mJ/m^2", group="track"),
    ParamSpec("alpha", "1", 0.3, 1e-3, 1.0, "Gilbert damping of the track", group="track"),
    ParamSpec("theta_sh", "1", 0.1, -1.0, 1.0, "signed effective spin Hall angle of the heavy metal",
              group="heavy metal"),
)

NAMES = tuple(s.name for s in WALL_SPECS)
_GRID = 720  # points per turn of the wall angle


def wall_specs() -> dict[str, ParamSpec]:
    return {s.name: s for s in WALL_SPECS}


@functools.lru_cache(maxsize=1)
def _functions():
    """Lambdified physics: material -> (width, H_K, H_D, v_D); drive -> H_SH; phi_dot; q_dot; energy."""
    c = const_values()
    ms, t, ki, kb, a_ex, d = sp.symbols("ms t_free ki kb a_ex d_dmi", real=True)
    ku = anisotropy.uniaxial_energy_density(kb, ki, t)
    hk_eff = anisotropy.effective_anisotropy_field(anisotropy.anisotropy_field(ku, ms), ms, 0, 1)  # thin film
    keff = anisotropy.effective_energy_density(hk_eff, ms)
    width = wall_motion.wall_width(a_ex, keff)
    h_k = wall_motion.wall_shape_field(ms, wall_motion.wall_demag_factor(t, width))
    h_d = wall_motion.dmi_field(d, ms, width)
    mat_args = (ms, t, ki, kb, a_ex, d)
    material = sp.lambdify(mat_args, [s.xreplace(c) for s in (keff, width, h_k, h_d)], "numpy")

    j, theta = sp.symbols("j theta_sh", real=True)
    h_sh = sp.lambdify((j, theta, ms, t), torques.spin_torque_field(j, theta, ms, t).xreplace(c), "numpy")

    phi, q, alpha, w, hz, hsh, hk, hd, hx, hy = sp.symbols("phi q alpha width h_z h_sh h_k h_d h_x h_y", real=True)
    args = (phi, q, alpha, w, hz, hsh, hk, hd, hx, hy)
    rate = wall_motion.wall_angle_rate(phi, q, alpha, hz, hsh, hk, hd, hx, hy).xreplace(c)
    vel = wall_motion.wall_velocity(phi, q, alpha, w, hz, hsh, hk, hd, hx, hy).xreplace(c)
    f_rate = sp.lambdify(args, rate, "numpy")
    f_vel = sp.lambdify(args, vel, "numpy")
    kf, msy = sp.symbols("k_eff ms_", positive=True)
    energy = wall_motion.wall_energy_density(phi, q, a_ex, kf, w, hk, d, msy, hx, hy).xreplace(c)
    f_energy = sp.lambdify((phi, q, a_ex, kf, w, hk, d, msy, hx, hy), energy, "numpy")
    return material, h_sh, f_rate, f_vel, f_energy


def material(values: dict[str, float], names: dict[str, str] | None = None) -> dict[str, float]:
    """Derived track quantities: K_eff, wall width Delta, H_K, H_D (SI)."""
    v = _pick(values, names)
    keff, width, h_k, h_d = _functions()[0](v["ms"], v["t_free"], v["ki"], v["kb"], v["a_ex"], v["d_dmi"])
    return {"keff": float(keff), "width": float(width), "h_k": float(h_k), "h_d": float(h_d)}


def _pick(values: dict[str, float], names: dict[str, str] | None) -> dict[str, float]:
    names = names or {}
    return {n: float(values[names.get(n, n)]) for n in NAMES}


def steady_state(values: dict[str, float], j, h_z=0.0, q: int = 1, h_x: float = 0.0, h_y: float = 0.0,
                 names: dict[str, str] | None = None):
    """Wall velocity for current densities ``j`` [A/m^2] in the heavy metal (along +x) and
    perpendicular fields ``h_z`` [A/m] (arrays broadcast together).

    Returns (velocity [m/s], steady angle [rad] (nan where the wall precesses), steady mask).
    """
    v = _pick(values, names)
    mat, h_sh_f, f_rate, f_vel, f_energy = _functions()
    keff, width, h_k, h_d = mat(v["ms"], v["t_free"], v["ki"], v["kb"], v["a_ex"], v["d_dmi"])
    if not (keff > 0):
        raise ValueError(f"effective anisotropy K_eff = {keff:.4g} J/m^3 is not positive: no perpendicular track")
    j, h_z = np.broadcast_arrays(np.asarray(j, float), np.asarray(h_z, float))
    shape = j.shape
    j, h_z = j.ravel(), h_z.ravel()
    h_sh = h_sh_f(j, v["theta_sh"], v["ms"], v["t_free"])
    alpha = v["alpha"]
    # rest angle: minimum of the wall energy at zero drive
    grid = np.linspace(-math.pi, math.pi, _GRID, endpoint=False)
    e = f_energy(grid, q, v["a_ex"], keff, width, h_k, v["d_dmi"], v["ms"], h_x, h_y)
    phi0 = grid[int(np.argmin(e))]
    # march from the rest angle in the direction of phi_dot, one turn at most
    rate0 = f_rate(phi0, q, alpha, width, h_z, h_sh, h_k, h_d, h_x, h_y)
    direction = np.where(rate0 >= 0, 1.0, -1.0)
    steps = np.arange(_GRID + 1) * (2 * math.pi / _GRID)
    phis = phi0 + direction[:, None] * steps[None, :]
    rates = f_rate(phis, q, alpha, width, h_z[:, None], h_sh[:, None], h_k, h_d, h_x, h_y) * direction[:, None]
    rates = np.broadcast_to(rates, phis.shape)
    stopped = rates <= 0
    steady = stopped.any(axis=1)
    first = np.argmax(stopped, axis=1)
    vel = np.empty(j.size)
    phi_ss = np.full(j.size, np.nan)
    idx = np.nonzero(steady)[0]
    if idx.size:
        k = first[idx]
        lo = np.where(k > 0, phis[idx, np.maximum(k - 1, 0)], phis[idx, 0])
        hi = phis[idx, k]
        args = (q, alpha, width, h_z[idx], h_sh[idx], h_k, h_d, h_x, h_y)
        d = direction[idx]
        for _ in range(38):  # bisection on [lo, hi] (width 2pi/720): 2e-14 rad at the end
            mid = 0.5 * (lo + hi)
            pos = f_rate(mid, *args) * d > 0
            lo = np.where(pos, mid, lo)
            hi = np.where(pos, hi, mid)
        phi_ss[idx] = 0.5 * (lo + hi)
        vel[idx] = f_vel(phi_ss[idx], *args)
    idx = np.nonzero(~steady)[0]
    if idx.size:  # precessing wall: average over one period of phi (periodic trapezoid rule)
        ph = grid[None, :]
        args = (q, alpha, width, h_z[idx, None], h_sh[idx, None], h_k, h_d, h_x, h_y)
        r = f_rate(ph, *args)
        qd = f_vel(ph, *args)
        vel[idx] = np.sum(qd / r, axis=1) / np.sum(1.0 / r, axis=1)
    return vel.reshape(shape), phi_ss.reshape(shape), steady.reshape(shape)
