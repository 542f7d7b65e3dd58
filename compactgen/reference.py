"""Reference solver: the ModelIR's own expressions, lambdified, integrated with scipy.

This is the oracle the rendered models are checked against.  It reads only the ModelIR, so
an equation reaches it through exactly the same sympy object the printers print.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np
import sympy as sp
from scipy.integrate import solve_ivp

from .errors import OutOfCalibratedRange, RangeError
from .ir import ModelIR

DEFAULT_TEMPERATURE = 300.15  # [K], 27 degC: the default circuit temperature of ngspice and VACASK


def numeric_parameters(ir: ModelIR, overrides: dict[str, float] | None = None) -> dict[sp.Symbol, float]:
    """Numbers for every parameter, constant and parameter-only derived symbol (not those that
    depend on temperature)."""
    overrides = dict(overrides or {})
    unknown = set(overrides) - set(ir.params.names())
    if unknown:
        raise KeyError(f"unknown parameter(s) {sorted(unknown)} for {ir.kind}")
    num: dict[sp.Symbol, float] = dict(ir.constants)
    for spec in ir.params:
        value = overrides.get(spec.name, spec.default)
        spec.check(value, where=f"parameter {spec.name}")
        num[spec.symbol] = float(value)
    tdep = ir.temperature_dependent()
    pending = list(ir.constraints)

    def check_constraints():
        for item in list(pending):
            expr, message = item
            if expr.free_symbols <= set(num):
                pending.remove(item)
                value = _evaluate(expr, num, "constraint")
                if not value > 0:
                    raise RangeError(f"{message} (got {value:.6g})")

    for sym, expr in ir.derived:
        check_constraints()
        if sym in tdep:
            continue
        num[sym] = _evaluate(expr, num, str(sym))
    check_constraints()
    return num


def _evaluate(expr: sp.Expr, num: dict, what: str) -> float:
    value = sp.sympify(sp.sympify(expr).xreplace(num))
    if isinstance(value, sp.Piecewise):
        value = value.doit()
    try:
        return float(value.evalf(17))
    except TypeError as exc:
        raise ValueError(f"cannot evaluate {what}: {value}") from exc


def figures(ir: ModelIR, overrides: dict[str, float] | None = None,
            temperature: float | None = None) -> dict[str, float]:
    """Key figures as floats, at ``temperature`` [K] (default: the parameters' own ``tnom``)."""
    num = numeric_parameters(ir, overrides)
    tdep = ir.temperature_dependent()
    if tdep:
        if temperature is None:
            temperature = num[ir.params["tnom"].symbol] if "tnom" in ir.params else DEFAULT_TEMPERATURE
        num[ir.temperature] = float(temperature)
        for sym, expr in ir.derived:
            if sym in tdep:
                num[sym] = _evaluate(expr, num, str(sym))
    return {f.name: _evaluate(f.expr, num, f.name) for f in ir.figures}


@dataclass
class Trace:
    """A simulated waveform set: time, port voltages, port currents (into the device), states."""

    t: np.ndarray
    voltages: dict[str, np.ndarray]
    currents: dict[str, np.ndarray]
    states: dict[str, np.ndarray]
    info: dict = field(default_factory=dict)


class ReferenceModel:
    """The IR with numbers substituted, ready to integrate."""

    def __init__(self, ir: ModelIR, overrides: dict[str, float] | None = None,
                 temperature: float = DEFAULT_TEMPERATURE):
        self.ir = ir
        self.temperature = float(temperature)
        num = numeric_parameters(ir, overrides)
        num[ir.temperature] = self.temperature
        for sym, expr in ir.derived:
            if sym not in num:
                num[sym] = _evaluate(expr, num, str(sym))
        self.num = num
        self.tsc = num[ir.time_scale]
        local_map: dict[sp.Symbol, sp.Expr] = {}
        for sym, expr in ir.locals:
            local_map[sym] = expr.xreplace(local_map).xreplace(num)
        self._locals_num = local_map

        def prep(e):
            return e.xreplace(local_map).xreplace(num)

        self.vsyms = list(ir.voltages)
        self.ssyms = ir.state_symbols()
        args = self.vsyms + self.ssyms
        self._rhs = sp.lambdify(args, [prep(s.rhs) for s in ir.states], modules="numpy", cse=True)
        self._branch = sp.lambdify(args, [prep(b.current) for b in ir.branches], modules="numpy", cse=True)
        self._outputs = {o.name: sp.lambdify(args, prep(o.expr), modules="numpy") for o in ir.outputs}
        self._limits = {name: sp.lambdify(args, prep(sym), modules="numpy") for name, sym in ir.limits.items()}
        self.initial = np.array([_evaluate(prep(s.initial), {}, s.name) for s in ir.states])
        self.terminals = [t.name for t in ir.terminals]

    # ---- evaluation --------------------------------------------------------------------
    def probe_values(self, node_v: dict[str, np.ndarray | float]) -> list:
        def v(n):
            return 0.0 if n == "0" else node_v[n]

        return [v(p) - v(n) for p, n in self.ir.voltages.values()]

    def rhs(self, node_v, y):
        return np.array(self._rhs(*self.probe_values(node_v), *y), dtype=float)

    def terminal_currents(self, node_v, y) -> dict[str, np.ndarray]:
        """Current flowing into the device at each terminal [A]."""
        vals = self._branch(*self.probe_values(node_v), *y)
        out = {t: 0.0 for t in self.terminals}
        for b, i in zip(self.ir.branches, vals):
            out[b.pos] = out[b.pos] + i
            if b.neg != "0":
                out[b.neg] = out[b.neg] - i
        return out

    def output(self, name, node_v, y):
        return self._outputs[name](*self.probe_values(node_v), *y)

    def check_range(self, node_v, y, where: str = "") -> list[str]:
        """Warn (OutOfCalibratedRange) where the drive exceeds a calibrated-range limit."""
        notes = []
        for name, fn in self._limits.items():
            value = np.max(np.abs(fn(*self.probe_values(node_v), *y)))
            limit = self.num[self.ir.params[name].symbol]
            if value > limit:
                spec = self.ir.params[name]
                msg = (f"{where}{self.ir.name}: |{self.ir.limits[name]}| reached {value:.4g} {spec.unit}, beyond "
                       f"the calibrated limit {name} = {limit:.4g} {spec.unit} ({spec.desc})")
                warnings.warn(msg, OutOfCalibratedRange, stacklevel=3)
                notes.append(msg)
        return notes

    # ---- runs ----------------------------------------------------------------------------
    def dc(self, node_v: dict[str, np.ndarray]) -> Trace:
        """DC operating points with the states held at their initial values (as in both
        simulators' operating point)."""
        y = [np.full_like(np.asarray(next(iter(node_v.values())), dtype=float), y0) for y0 in self.initial]
        cur = self.terminal_currents(node_v, y)
        return Trace(t=np.zeros(0), voltages={k: np.asarray(v, float) for k, v in node_v.items()},
                     currents={k: np.broadcast_to(v, y[0].shape).astype(float) for k, v in cur.items()},
                     states={s.name: yy for s, yy in zip(self.ir.states, y)})

    def transient(self, drives: dict, t_end: float, t_eval: np.ndarray | None = None,
                  rtol: float = 1e-10, atol: float = 1e-12, max_step: float | None = None) -> Trace:
        """Integrate with every terminal driven by a voltage waveform (objects with
        ``value(t)`` and ``breakpoints(t_end)``); unlisted terminals are at 0 V."""
        bps = sorted({0.0, t_end, *[b for w in drives.values() for b in w.breakpoints(t_end)]})
        bps = [b for b in bps if 0.0 <= b <= t_end]

        def node_v(t):
            return {n: (drives[n].value(t) if n in drives else 0.0) for n in self.terminals}

        def f(t, y):
            return self.rhs(node_v(t), y)

        ts, ys = [], []
        last_t = None
        y = self.initial.copy()
        # a cap of a few precession periods keeps the adaptive first steps from leaving the sphere
        step = max_step if max_step is not None else 5.0 * self.tsc
        for a, b in zip(bps[:-1], bps[1:]):
            if b - a <= 0:
                continue
            sol = solve_ivp(f, (a, b), y, method="DOP853", rtol=rtol, atol=atol, dense_output=True, max_step=step)
            if not sol.success:
                raise RuntimeError(f"reference solver failed on [{a:.3e}, {b:.3e}] s: {sol.message}")
            if t_eval is None:
                seg_t = sol.t
            else:
                seg_t = t_eval[(t_eval >= a) & (t_eval <= b)]
            if last_t is not None and len(seg_t) and seg_t[0] <= last_t:
                seg_t = seg_t[seg_t > last_t]
            if len(seg_t):
                last_t = seg_t[-1]
            ts.append(np.asarray(seg_t))
            ys.append(sol.sol(seg_t) if len(seg_t) else np.zeros((len(y), 0)))
            y = sol.y[:, -1]
        t = np.concatenate(ts)
        yy = np.concatenate(ys, axis=1)
        nv = {n: (np.array([drives[n].value(x) for x in t]) if n in drives else np.zeros_like(t))
              for n in self.terminals}
        cur = self.terminal_currents(nv, list(yy))
        self.check_range(nv, list(yy))
        return Trace(t=t, voltages=nv, currents={k: np.broadcast_to(v, t.shape).astype(float) for k, v in cur.items()},
                     states={s.name: yy[i] for i, s in enumerate(self.ir.states)},
                     info={"method": "DOP853", "rtol": rtol, "atol": atol})


def isclose_rel(a: float, b: float, rel: float) -> bool:
    return math.isclose(a, b, rel_tol=rel)
