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

from compactgen.errors import OutOfCalibratedRange
from compactgen.model.ir import ModelIR
from compactgen.model.evaluate import DEFAULT_TEMPERATURE, _evaluate, reference_numbers


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
        num = reference_numbers(ir, overrides, self.temperature)
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
        self._outputs = {o.name: sp.lambdify(args, prep(o.expr), modules="numpy") for o in ir.monitored_outputs()}
        self._limits = {name: sp.lambdify(args, prep(sym), modules="numpy") for name, sym in ir.limits.items()}
        self.initial = np.array([_evaluate(prep(s.initial), {}, s.name) for s in ir.states])
        self.terminals = [t.name for t in ir.terminals]
        self.nodes = [n.name for n in ir.nodes]
        self._node_guess = None
        if self.nodes:
            self._kcl = self._kcl_function([prep(b.current) for b in ir.branches])

    # ---- internal electrical nodes ---------------------------------------------------------
    def _kcl_function(self, currents):
        """One function giving, for the internal nodes, the current leaving each through the
        device branches (KCL residual) and its Jacobian with respect to the node voltages."""
        names = self.terminals + self.nodes
        vn = {n: sp.Symbol(f"_node_{n}", real=True) for n in names}
        vn["0"] = sp.Integer(0)
        probe = {sym: vn[p] - vn[n] for sym, (p, n) in self.ir.voltages.items()}
        resid = []
        for k in self.nodes:
            f = sp.Integer(0)
            for b, i in zip(self.ir.branches, currents):
                if b.pos == k:
                    f += i
                if b.neg == k:
                    f -= i
            resid.append(f.xreplace(probe))
        inner = [vn[n] for n in self.nodes]
        jac = [sp.diff(f, x) for f in resid for x in inner]
        return sp.lambdify([vn[n] for n in names] + self.ssyms, resid + jac, modules="numpy", cse=True)

    def solve_nodes(self, node_v: dict, y) -> dict:
        """``node_v`` (terminal voltages) completed with the internal-node voltages that satisfy
        KCL, by Newton's method (vectorised over arrays; warm-started from the last solution)."""
        if not self.nodes or all(k in node_v for k in self.nodes):
            return node_v
        tv = [node_v[t] for t in self.terminals]
        if isinstance(y, np.ndarray) and y.ndim == 1 and all(isinstance(v, float) for v in tv):
            return self._solve_nodes_scalar(node_v, tv, y)
        if all(np.ndim(v) == 0 for v in (*tv, *y)):
            return self._solve_nodes_scalar(node_v, tv, y)
        n = len(self.nodes)
        shape = np.broadcast(*[np.asarray(node_v[t]) for t in self.terminals], *[np.asarray(v) for v in y]).shape
        guess = self._node_guess
        if guess is not None and guess.shape == (n, *shape):
            x = guess.copy()
        else:
            x = np.zeros((n, *shape))
        scale = 1.0 + max(float(np.max(np.abs(np.asarray(v)))) for v in tv) if tv else 1.0
        for _ in range(60):
            vals = [np.broadcast_to(np.asarray(v, dtype=float), shape) for v in self._kcl(*tv, *x, *y)]
            f = np.stack(vals[:n])
            jac = np.stack(vals[n:]).reshape((n, n, *shape))
            if n == 1:
                dx = f / jac[0]
            else:
                dx = np.moveaxis(np.linalg.solve(np.moveaxis(jac, (0, 1), (-2, -1)),
                                                 np.moveaxis(f, 0, -1)[..., None])[..., 0], -1, 0)
            x = x - dx
            if np.max(np.abs(dx), initial=0.0) <= 1e-13 * scale:
                break
        else:
            if all(np.all(np.isfinite(v)) for v in (*tv, *y)):
                raise RuntimeError(f"reference solver: KCL at internal nodes {self.nodes} did not converge")
            x = np.full_like(x, np.nan)  # a trial step of the integrator left the sphere: let it reject
        self._node_guess = x if np.all(np.isfinite(x)) else None
        out = dict(node_v)
        out.update({name: x[i] if shape else float(x[i]) for i, name in enumerate(self.nodes)})
        return out

    def _solve_nodes_scalar(self, node_v, tv, y):
        """solve_nodes for one operating point (the integrator's case): plain floats, no arrays."""
        n = len(self.nodes)
        if n == 1:  # one internal node (a write line under a junction): the integrator's hot path
            return self._solve_one_node(node_v, tv, y)
        guess = self._node_guess
        x = list(guess) if guess is not None and np.shape(guess) == (n,) else [0.0] * n
        tol = 1e-13 * (1.0 + max(abs(float(v)) for v in tv))
        for _ in range(60):
            vals = self._kcl(*tv, *x, *y)
            if n == 1:
                dx = [vals[0] / vals[1]]
            else:
                dx = list(np.linalg.solve(np.reshape(np.asarray(vals[n:], dtype=float), (n, n)),
                                          np.asarray(vals[:n], dtype=float)))
            x = [a - b for a, b in zip(x, dx)]
            if max(abs(d) for d in dx) <= tol:
                break
        else:
            if all(np.isfinite(v) for v in (*tv, *y)):
                raise RuntimeError(f"reference solver: KCL at internal nodes {self.nodes} did not converge")
            x = [float("nan")] * n  # a trial step of the integrator left the sphere: let it reject
        self._node_guess = np.array(x) if all(np.isfinite(x)) else None
        out = dict(node_v)
        out.update({name: float(x[i]) for i, name in enumerate(self.nodes)})
        return out

    def _solve_one_node(self, node_v, tv, y):
        guess = self._node_guess
        x = float(guess[0]) if guess is not None and np.shape(guess) == (1,) else 0.0
        tol = 1e-13 * (1.0 + max(abs(float(v)) for v in tv))
        kcl = self._kcl
        for _ in range(60):
            f, jac = kcl(*tv, x, *y)
            dx = f / jac
            x -= dx
            if not abs(dx) > tol:
                break
        if not np.isfinite(x):
            if all(np.isfinite(v) for v in (*tv, *y)):
                raise RuntimeError(f"reference solver: KCL at internal node {self.nodes[0]} did not converge")
            self._node_guess = None
        elif abs(dx) > tol:
            raise RuntimeError(f"reference solver: KCL at internal node {self.nodes[0]} did not converge")
        else:
            self._node_guess = np.array([x])
        out = dict(node_v)
        out[self.nodes[0]] = float(x)
        return out

    # ---- evaluation --------------------------------------------------------------------
    def probe_values(self, node_v: dict[str, np.ndarray | float]) -> list:
        """Voltages of the probes; ``node_v`` must hold every terminal and internal node."""
        def v(n):
            return 0.0 if n == "0" else node_v[n]

        return [v(p) - v(n) for p, n in self.ir.voltages.values()]

    def _probes(self, node_v, y) -> list:
        return self.probe_values(self.solve_nodes(node_v, y))

    def rhs(self, node_v, y):
        return np.array(self._rhs(*self._probes(node_v, y), *y), dtype=float)

    def terminal_currents(self, node_v, y) -> dict[str, np.ndarray]:
        """Current flowing into the device at each terminal [A]."""
        vals = self._branch(*self._probes(node_v, y), *y)
        out = {t: 0.0 for t in self.terminals}
        for b, i in zip(self.ir.branches, vals):
            if b.pos in out:
                out[b.pos] = out[b.pos] + i
            if b.neg in out:
                out[b.neg] = out[b.neg] - i
        return out

    def output(self, name, node_v, y):
        """An output of the IR (``ir.outputs`` or the range output ``drive_ratio``) at terminal
        voltages ``node_v`` and states ``y`` (arrays broadcast, as in ``dc``)."""
        return self._outputs[name](*self._probes(node_v, y), *y)

    def check_range(self, node_v, y, where: str = "") -> list[str]:
        """Warn (OutOfCalibratedRange) where the drive exceeds a calibrated-range limit."""
        notes = []
        for name, fn in self._limits.items():
            value = np.max(np.abs(fn(*self._probes(node_v, y), *y)))
            limit = self.num[self.ir.params[name].symbol]
            if value > limit:
                spec = self.ir.params[name]
                msg = (f"{where}{self.ir.name}: |{self.ir.limits[name]}| reached {value:.4g} {spec.unit}, beyond "
                       f"the calibrated limit {name} = {limit:.4g} {spec.unit} ({spec.desc})")
                warnings.warn(msg, OutOfCalibratedRange, stacklevel=3)
                notes.append(msg)
        return notes

    def solve_current_drive(self, node_v: dict, y, targets: dict[str, float]) -> dict:
        """``node_v`` completed with the voltages of the terminals in ``targets`` at which the device
        draws the target currents (A into the device), by Newton's method with a difference
        Jacobian, warm-started from the last solution."""
        names = list(targets)
        guess = getattr(self, "_current_guess", None)
        v = np.array(guess if guess is not None and len(guess) == len(names) else [node_v[n] for n in names], float)
        want = np.array([targets[n] for n in names])

        def currents_at(vals):
            nv = dict(node_v)
            nv.update(zip(names, vals))
            cur = self.terminal_currents(nv, y)
            return np.array([float(cur[n]) for n in names])

        if len(names) == 1:  # one current-driven terminal (a two-terminal device): chord iterations
            return self._solve_one_current(node_v, y, names[0], float(want[0]), float(v[0]))
        for _ in range(60):
            i0 = currents_at(v)
            jac = np.empty((len(names), len(names)))
            for j in range(len(names)):
                h = 1e-7 * (1.0 + abs(v[j]))
                dv = np.zeros_like(v)
                dv[j] = h
                jac[:, j] = (currents_at(v + dv) - i0) / h
            step = np.linalg.solve(jac, i0 - want)
            v = v - step
            if np.max(np.abs(step)) <= 1e-13 * (1.0 + np.max(np.abs(v))):
                break
        else:
            if np.all(np.isfinite(y)):
                raise RuntimeError(f"reference solver: current drive of {names} did not converge")
        self._current_guess = v if np.all(np.isfinite(v)) else None
        out = dict(node_v)
        out.update(zip(names, (float(x) for x in v)))
        return out

    def _solve_one_current(self, node_v: dict, y, name: str, want: float, v: float) -> dict:
        """solve_current_drive for one terminal: the slope from one difference, then chord steps."""
        nv = dict(node_v)

        def current(x):
            nv[name] = x
            return float(self.terminal_currents(nv, y)[name])

        i0 = current(v)
        h = 1e-7 * (1.0 + abs(v))
        slope = (current(v + h) - i0) / h
        for _ in range(100):
            step = (i0 - want) / slope
            v -= step
            if not abs(step) > 1e-13 * (1.0 + abs(v)):  # also stops on NaN (a rejected trial stage)
                break
            i1 = current(v)
            if i1 != i0:  # secant update: the junction's I(V) is not linear (TMR falls with bias)
                slope = (i1 - i0) / -step
            i0 = i1
        else:
            if np.all(np.isfinite(y)):
                raise RuntimeError(f"reference solver: current drive of {name} did not converge")
        self._current_guess = np.array([v]) if np.isfinite(v) else None
        nv[name] = v
        return nv

    # ---- runs ----------------------------------------------------------------------------
    def dc(self, node_v: dict[str, np.ndarray]) -> Trace:
        """DC operating points with the states held at their initial values (as in both
        simulators' operating point)."""
        y = [np.full_like(np.asarray(next(iter(node_v.values())), dtype=float), y0) for y0 in self.initial]
        node_v = self.solve_nodes(node_v, y)
        cur = self.terminal_currents(node_v, y)
        return Trace(t=np.zeros(0), voltages={k: np.asarray(v, float) for k, v in node_v.items()},
                     currents={k: np.broadcast_to(v, y[0].shape).astype(float) for k, v in cur.items()},
                     states={s.name: yy for s, yy in zip(self.ir.states, y)})

    def transient(self, drives: dict, t_end: float, t_eval: np.ndarray | None = None,
                  rtol: float = 1e-10, atol: float = 1e-12, max_step: float | None = None, method: str = "DOP853",
                  currents: dict | None = None) -> Trace:
        """Integrate with every terminal driven by a voltage waveform (objects with
        ``value(t)`` and ``breakpoints(t_end)``); unlisted terminals are at 0 V.  ``currents`` maps
        terminals to current waveforms instead (A into the device at that terminal, e.g. a
        junction current taken from a circuit simulation): their voltages are solved at every
        evaluation so that the device carries exactly that current."""
        currents = dict(currents or {})
        clash = set(currents) & set(drives)
        if clash or not set(currents) <= set(self.terminals):
            raise ValueError(f"current-driven terminals {sorted(currents)} must be terminals of the device "
                             f"and not voltage-driven too")
        if currents and len(currents) == len(self.terminals):
            raise ValueError("at least one terminal must be voltage-driven (or at 0 V) to fix the potential")
        bps = sorted({0.0, t_end, *[b for w in (*drives.values(), *currents.values()) for b in w.breakpoints(t_end)]})
        bps = [b for b in bps if 0.0 <= b <= t_end]

        def node_v(t, y=None):
            nv = {n: (drives[n].value(t) if n in drives else 0.0) for n in self.terminals}
            if currents:
                nv = self.solve_current_drive(nv, y, {n: w.value(t) for n, w in currents.items()})
            return nv

        def f(t, y):
            # a trial stage of a rejected step may leave the sphere far enough for the cubic
            # restoring term to overflow; the step is then rejected, so stay quiet about it
            with np.errstate(over="ignore", invalid="ignore"):
                return self.rhs(node_v(t, y), y)

        from scipy.integrate import solve_ivp  # here, not at import: `compactgen build` needs no scipy

        ts, ys = [], []
        last_t = None
        y = self.initial.copy()
        # a cap of a few precession periods keeps the adaptive first steps from leaving the sphere
        step = max_step if max_step is not None else 5.0 * self.tsc
        for a, b in zip(bps[:-1], bps[1:]):
            if b - a <= 0:
                continue
            with np.errstate(over="ignore", invalid="ignore"):  # rejected trial steps may overflow
                sol = solve_ivp(f, (a, b), y, method=method, rtol=rtol, atol=atol, dense_output=True,
                                max_step=step)
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
        if currents:
            solved = [node_v(x, yy[:, i]) for i, x in enumerate(t)]
            nv.update({n: np.array([p[n] for p in solved]) for n in currents})
        nv = self.solve_nodes(nv, list(yy))
        cur = self.terminal_currents(nv, list(yy))
        self.check_range(nv, list(yy))
        return Trace(t=t, voltages=nv, currents={k: np.broadcast_to(v, t.shape).astype(float) for k, v in cur.items()},
                     states={s.name: yy[i] for i, s in enumerate(self.ir.states)},
                     info={"method": method, "rtol": rtol, "atol": atol})


def isclose_rel(a: float, b: float, rel: float) -> bool:
    return math.isclose(a, b, rel_tol=rel)
