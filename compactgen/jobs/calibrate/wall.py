"""Domain-wall velocity forward model of a dw-mtj card: the steady state of the card's own wall
equations, found numerically.

The expressions are the card's ModelIR (devices/dw_mtj.py composing physics/domain_wall.py), the
same sympy that the Verilog-A module, the ngspice subcircuit and the reference solver print: the
wall-angle rate (right-hand side of state ``phi``), the wall speed (right-hand side of state
``xw`` times d(wall_pos)/d(xw)), the rest angle ``phi0`` and the derived wall width, wall
anisotropy field and DMI field.  No equation is written here.  Two substitutions turn the circuit
model into the measurement:

- the current density at the wall (local ``j_wall``) is the data's ``current_density``, and the
  perpendicular field (parameter ``hz``) the data's ``field`` (0 without a field column); the
  in-plane fields ``hx``, ``hy`` and every other parameter are the card's;
- the pinning field (local ``h_pin``: periodic landscape and edge barriers) is zero: the data are
  velocities of the flow regime, a free wall far from the track ends.  ``h_dep`` and ``pin_pitch``
  are not seen by this model (runner notes data below the card's depinning thresholds).

Steady state: the wall-angle equation phi_dot = f(phi) does not depend on q without pinning, so
from the rest angle phi moves monotonically to the first zero of f in the direction of
f(phi_rest): that zero is the steady state (with H_K = 0 it is the closed form of PHYSICS 6.3,
with D = 0 and H_z alone Schryer-Walker).  If f has no zero on a full turn the wall precesses
(above Walker breakdown); the velocity is then the time average
<q_dot> = Int q_dot/f dphi / Int 1/f dphi over one period.

The card's wall is up -> down (Q = +1).  A down -> up wall (Q = -1) follows from it by the
symmetry of the PHYSICS 6.2 equations under phi -> phi + pi, q -> -q: it moves as
v(J, H_z, H_x, H_y) = -v_{Q=+1}(-J, H_z, -H_x, -H_y) (derived; checked against
physics.domain_wall with charge -1 in tests/test_calibrate_physics.py).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import sympy as sp

from compactgen.errors import InputError
from compactgen.jobs.calibrate.data import Dataset
from compactgen.jobs.calibrate.fit import Block
from compactgen.jobs.calibrate.models import expand_ir

_GRID = 720  # points per turn of the wall angle
#: IR names this model relies on (devices/dw_mtj.py)
_CURRENT, _PINNING, _FIELD = "j_wall", "h_pin", "hz"
_MATERIAL = ("keff", "wall_width", "h_kwall", "h_dmi")


@dataclass
class WallFunctions:
    """Lambdified wall equations of one dw-mtj card (parameter order = ``names``)."""

    names: list[str]
    rate: object  # (params..., phi, j, h_z) -> d phi/dt [rad/s]
    speed: object  # (params..., phi, j, h_z) -> dq/dt [m/s]
    rest: object  # (params...) -> rest angle phi0 [rad]
    material: dict  # name -> (params...) -> value (keff, wall_width, h_kwall, h_dmi)
    figures: dict  # name -> ((params...) -> value, unit, meaning): the IR's key figures
    uses: tuple[str, ...]  # parameters the velocity depends on

    def args(self, values: dict[str, float]) -> list[float]:
        return [float(values[n]) for n in self.names]


def wall_functions(ir) -> WallFunctions:
    """The wall equations of a dw-mtj ModelIR (``card.ir()``), lambdified once; parameter values
    enter at evaluation, so one set serves every value of a fit."""
    if ir.kind != "dw-mtj":
        raise InputError(f"the wall-velocity model needs a dw-mtj model, not {ir.kind}")
    P = ir.params.symbols()
    j, hz = sp.symbols("j_data h_z_data", real=True)
    names, psyms, full, loc = expand_ir(ir, {_CURRENT: j, _PINNING: sp.Integer(0)})
    seen = {str(s) for s in loc}
    if not {_CURRENT, _PINNING} <= seen or _FIELD not in P:
        raise InputError(f"the dw-mtj model has no {_CURRENT}, {_PINNING} or {_FIELD}: calibrate.wall needs updating")
    states = {st.name: st for st in ir.states}
    phi, xw = states["phi"].symbol, states["xw"].symbol
    wall_pos = next(o.expr for o in ir.outputs if o.name == "wall_pos")
    sub = {P[_FIELD]: hz}

    def expand(expr):
        return sp.sympify(expr).xreplace(full).xreplace(loc).xreplace(sub).xreplace(ir.constants)

    rate = expand(states["phi"].rhs)
    speed = expand(sp.diff(wall_pos, xw) * states["xw"].rhs)
    allowed = set(psyms) | {phi, j, hz}
    extra = (rate.free_symbols | speed.free_symbols) - allowed
    if extra:
        raise InputError(f"the dw-mtj wall equations depend on {', '.join(sorted(map(str, extra)))} beyond the "
                         "parameters, the wall angle, the current density and the field: calibrate.wall needs updating")
    args = [*psyms, phi, j, hz]
    by_name = {str(s): s for s in full}

    def lam(expr, extra_args=()):
        return sp.lambdify([*psyms, *extra_args], expand(expr), modules="numpy")

    rest = expand(by_name["phi0"])
    uses = tuple(n for n in names if P[n] in (rate.free_symbols | speed.free_symbols | rest.free_symbols))
    material = {n: lam(by_name[n]) for n in _MATERIAL}
    figures = {f.name: (lam(f.expr), f.unit, f.desc) for f in ir.figures}
    return WallFunctions(names, sp.lambdify(args, rate, modules="numpy"), sp.lambdify(args, speed, modules="numpy"),
                         sp.lambdify(psyms, rest, modules="numpy"), material, figures, uses)


def material(fn: WallFunctions, values: dict[str, float]) -> dict[str, float]:
    """Derived track quantities (SI): keff, wall_width, h_kwall, h_dmi."""
    a = fn.args(values)
    return {n: float(f(*a)) for n, f in fn.material.items()}


def steady_state(fn: WallFunctions, values: dict[str, float], j, h_z=0.0, q: int = 1):
    """Wall velocity for current densities ``j`` [A/m^2] in the heavy metal (along +x) and
    perpendicular fields ``h_z`` [A/m] (arrays broadcast together), for an up -> down (q = +1)
    or down -> up (q = -1) wall.

    Returns (velocity [m/s], steady angle [rad] (nan where the wall precesses), steady mask).
    """
    if q not in (1, -1):
        raise ValueError("q must be +1 (up -> down wall) or -1 (down -> up wall)")
    vals = dict(values)
    j = np.asarray(j, float)
    if q == -1:  # the Q = +1 equations with J, H_x, H_y reversed; the velocity reverses (module docstring)
        j = -j
        vals["hx"], vals["hy"] = -vals["hx"], -vals["hy"]
    keff = fn.material["keff"](*fn.args(vals))
    if not keff > 0:
        raise ValueError(f"effective anisotropy K_eff = {keff:.4g} J/m^3 is not positive: no perpendicular track")
    a = fn.args(vals)
    j, h_z = np.broadcast_arrays(j, np.asarray(h_z, float))
    shape = j.shape
    j, h_z = j.ravel(), h_z.ravel()
    phi0 = float(fn.rest(*a))
    rate0 = np.broadcast_to(fn.rate(*a, phi0, j, h_z), j.shape)
    direction = np.where(rate0 >= 0, 1.0, -1.0)
    steps = np.arange(_GRID + 1) * (2 * math.pi / _GRID)
    phis = phi0 + direction[:, None] * steps[None, :]
    rates = np.broadcast_to(fn.rate(*a, phis, j[:, None], h_z[:, None]), phis.shape) * direction[:, None]
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
        d = direction[idx]
        phi_ss[idx] = _root(lambda x, m: fn.rate(*a, x, j[idx][m], h_z[idx][m]) * d[m], lo, hi,
                            rates[idx, np.maximum(k - 1, 0)], rates[idx, k])
        vel[idx] = np.broadcast_to(fn.speed(*a, phi_ss[idx], j[idx], h_z[idx]), idx.shape)
    idx = np.nonzero(~steady)[0]
    if idx.size:  # precessing wall: average over one period of phi (periodic trapezoid rule)
        ph = (phi0 + steps[:-1])[None, :]
        r = np.broadcast_to(fn.rate(*a, ph, j[idx, None], h_z[idx, None]), (idx.size, _GRID))
        qd = np.broadcast_to(fn.speed(*a, ph, j[idx, None], h_z[idx, None]), (idx.size, _GRID))
        vel[idx] = np.sum(qd / r, axis=1) / np.sum(1.0 / r, axis=1)
    if q == -1:
        vel = -vel
        phi_ss = phi_ss + math.pi
    return vel.reshape(shape), phi_ss.reshape(shape), steady.reshape(shape)


def _root(f, lo, hi, f_lo, f_hi, tol: float = 2e-14):
    """Zeros of ``f(x, mask)`` (vectorised; ``mask`` selects the entries x belongs to) bracketed by
    f(lo) > 0 >= f(hi): the Illinois variant of regula falsi (M. Dowell and P. Jarratt, BIT 11, 168
    (1971)), superlinear where bisection gains one bit per call; each entry stops once its
    bracket is narrower than ``tol`` or f is exactly zero, at most 60 calls (bisection needs 38
    from a 2pi/720 bracket).  Where f(lo) <= 0 already (the rest angle itself) lo is the zero."""
    lo, hi = lo.astype(float), hi.astype(float)
    f_lo, f_hi = np.array(f_lo, float), np.array(f_hi, float)
    x = np.where(f_lo <= 0, lo, hi)
    active = (f_lo > 0) & (f_hi < 0)
    side = np.zeros(lo.shape, int)  # which end moved last: +1 lo, -1 hi
    for _ in range(60):
        if not active.any():
            break
        m = np.nonzero(active)[0]
        xm = (lo[m] * f_hi[m] - hi[m] * f_lo[m]) / (f_hi[m] - f_lo[m])
        xm = np.clip(xm, np.minimum(lo[m], hi[m]), np.maximum(lo[m], hi[m]))
        fx = np.broadcast_to(f(xm, m), xm.shape)
        x[m] = xm
        pos = fx > 0
        # moved the same end twice: halve the other end's value (Illinois), so both ends close in
        f_hi[m] = np.where(pos & (side[m] == 1), 0.5 * f_hi[m], f_hi[m])
        f_lo[m] = np.where(~pos & (side[m] == -1), 0.5 * f_lo[m], f_lo[m])
        lo[m] = np.where(pos, xm, lo[m])
        f_lo[m] = np.where(pos, fx, f_lo[m])
        hi[m] = np.where(pos, hi[m], xm)
        f_hi[m] = np.where(pos, f_hi[m], fx)
        side[m] = np.where(pos, 1, -1)
        active[m] = (np.abs(hi[m] - lo[m]) > tol) & (fx != 0)
    return x


# ---------------------------------------------------------------------------------------------
def wall_block(fn, ds: Dataset) -> Block:
    """Wall velocity versus current density (and field) of a dw-mtj card: the steady state of the
    card's own wall equations (``calibrate.wall``, pinning off); ``fn`` from ``wall.wall_functions``."""
    j = ds.columns["current_density"]
    hz = ds.columns.get("field", np.zeros_like(j))
    q = 1
    if "field" in ds.columns:
        q = 1 if ds.meta_si("wall") == "up-down" else -1
    v = ds.columns["velocity"]
    floor = 0.05 * float(np.max(np.abs(v))) if v.size else 1.0
    sigma = 0.05 * np.maximum(np.abs(v), floor)  # relative scatter with a floor; scale estimated
    # the relative scatter is taken of the predicted speed (reweighted between passes), not of the noisy
    # observation, whose weights favour points that scattered low and understate the standard errors
    # (benchmarks/bench_fit.py --seeds 40: scatter of the estimates / standard error 1.12-1.25 with
    # weights from the observations)

    def predict(values):
        return steady_state(fn, values, j, hz, q=q)[0]

    along_field = bool(np.ptp(hz) > 0 and np.ptp(j) == 0)
    x = hz if along_field else j
    xd = np.linspace(min(0.0, float(x.min())), float(x.max()), 161)

    def curves(values):
        if along_field:
            return {"fit": (xd, steady_state(fn, values, j[0], xd, q=q)[0])}
        if np.ptp(hz) == 0:
            return {"fit": (xd, steady_state(fn, values, xd, hz[0], q=q)[0])}
        return {}

    def sigma_model(values):
        return 0.05 * np.maximum(np.abs(predict(values)), floor)

    return Block(f"{ds.name}: wall velocity", "gaussian", predict, v, sigma=sigma, sigma_model=sigma_model,
                 uses=fn.uses,
                 info={"dataset": ds, "what": "wall velocity", "model": fn, "x": x, "field": hz, "current_density": j,
                       "q": q, "curves": curves, "xlabel": "field [A/m]" if along_field else "current density [A/m^2]",
                       "ylabel": "wall velocity [m/s]", "group": np.full(v.size, "data")})
