"""Benches: stimulus, observables and metrics with tolerances, each tolerance with its reason.

A bench is run three ways (reference, ngspice subcircuit, Verilog-A in VACASK) and every
metric of a simulator run is compared with the same metric of the reference run.  A metric
may also carry an expectation every run must meet on its own (a final state, no switching).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from compactgen.harness.reference import Trace


# ---- stimuli ---------------------------------------------------------------------------------
@dataclass(frozen=True)
class Dc:
    level: float

    def value(self, t: float) -> float:
        return self.level

    def breakpoints(self, t_end: float) -> list[float]:
        return []


@dataclass(frozen=True)
class Pulse:
    """A single SPICE PULSE: v0 until delay, ramp over rise to v1, hold width, ramp over fall."""

    v0: float
    v1: float
    delay: float
    rise: float
    fall: float
    width: float

    def value(self, t: float) -> float:
        t1 = self.delay
        t2 = t1 + self.rise
        t3 = t2 + self.width
        t4 = t3 + self.fall
        if t <= t1:
            return self.v0
        if t < t2:
            return self.v0 + (self.v1 - self.v0) * (t - t1) / self.rise
        if t <= t3:
            return self.v1
        if t < t4:
            return self.v1 + (self.v0 - self.v1) * (t - t3) / self.fall
        return self.v0

    def breakpoints(self, t_end: float) -> list[float]:
        t2 = self.delay + self.rise
        t3 = t2 + self.width
        return [b for b in (self.delay, t2, t3, t3 + self.fall) if b < t_end]

    @property
    def period(self) -> float:
        return 1e3 * (self.delay + self.rise + self.width + self.fall)  # never repeats in a bench


@dataclass(frozen=True)
class Pwl:
    """A piecewise-linear waveform through (time, value) corners; constant after the last."""

    points: tuple[tuple[float, float], ...]

    def __post_init__(self):
        ts = [t for t, _ in self.points]
        if not ts or ts[0] != 0.0 or any(b <= a for a, b in zip(ts[:-1], ts[1:])):
            raise ValueError("Pwl corners must start at t = 0 and increase strictly")

    def value(self, t: float) -> float:
        ts, vs = zip(*self.points)
        return float(np.interp(t, ts, vs))

    def breakpoints(self, t_end: float) -> list[float]:
        return [t for t, _ in self.points if t < t_end]


# ---- metrics -----------------------------------------------------------------------------
@dataclass
class Metric:
    name: str
    unit: str
    func: Callable[[Trace], float]
    rtol: float
    atol: float
    reason: str
    expect: tuple[float, float] | None = None  # (value, absolute tolerance) for every run

    def agrees(self, ref: float, sim: float) -> bool:
        """A NaN (a missing event, a failed measurement) never agrees, not even with another NaN."""
        if not (np.isfinite(ref) and np.isfinite(sim)):
            return False
        return abs(sim - ref) <= self.atol + self.rtol * abs(ref)

    def meets_expectation(self, value: float) -> bool:
        if self.expect is None:
            return True
        return bool(np.isfinite(value) and abs(value - self.expect[0]) <= self.expect[1])


@dataclass
class Bench:
    name: str
    title: str
    analysis: str  # "dc" or "tran"
    drives: dict[str, object]  # terminal -> Dc | Pulse (tran) ; sweep terminal for dc
    metrics: list[Metric]
    instance: dict[str, float] = field(default_factory=dict)
    sweep: tuple[str, float, float, float] | None = None  # terminal, start, stop, step
    t_stop: float = 0.0
    t_step: float = 0.0
    max_step: float = 0.0
    plot: tuple[str, ...] = ()  # quantities to plot: "state:mz", "current:t", "resistance"
    #: axis label of a plot quantity where the default would not say what is plotted (e.g. a
    #: "resistance" V/I whose path holds more than the junction)
    labels: dict[str, str] = field(default_factory=dict)
    temperature: float | None = None  # circuit temperature [K]; None: the simulators' default 27 degC
    #: non-empty: the bench cannot be run physically on this device (one line: the finding and the
    #: measured reason, e.g. the write needs more bias than the calibrated limit); it is reported
    #: as not applicable and not simulated
    not_applicable: str = ""
    #: non-empty: a finding about the device that the bench set-up measured in the reference (e.g. the
    #: free layer rings back into its old well, so the final state is compared, not asserted)
    finding: str = ""
    #: the reference trace, when the set-up already computed it (verify reuses it)
    cached_reference: object = field(default=None, repr=False, compare=False)
    #: reference solver only: largest integration step and output grid spacing [s]; 0 keeps the
    #: defaults (5 x the model's time scale, 0.5 ps) -- for benches whose own time scales are far
    #: from the model's (a slow domain wall: microseconds at 0.5 ps would be millions of points)
    ref_max_step: float = 0.0
    #: reference solver only: scipy integration method ("" = DOP853); "Radau" for a stiff bench
    #: without fast motion (the co-rotating free layer: its sphere-restoring term, not its motion,
    #: limits an explicit method's step)
    ref_method: str = ""
    ref_grid: float = 0.0

    def sweep_values(self) -> np.ndarray:
        term, a, b, step = self.sweep
        n = int(round((b - a) / step))
        return a + step * np.arange(n + 1)


# ---- waveform measurements -------------------------------------------------------------------
def crossing_time(t: np.ndarray, y: np.ndarray, level: float, after: float, direction: int) -> float:
    """First time after ``after`` at which y crosses ``level`` going up (+1) or down (-1),
    linearly interpolated; NaN if it never does."""
    s = direction * (y - level)
    idx = np.flatnonzero((s[:-1] < 0) & (s[1:] >= 0) & (t[1:] > after))
    if idx.size == 0:
        return float("nan")
    i = idx[0]
    return float(t[i] + (t[i + 1] - t[i]) * (-s[i]) / (s[i + 1] - s[i]))


def dc_resistance_at(term: str, ret: str, v: float):
    def f(tr: Trace) -> float:
        vv = tr.voltages[term] - tr.voltages.get(ret, 0.0)
        i = tr.currents[term]
        k = int(np.argmin(np.abs(vv - v)))
        if abs(vv[k] - v) > 1e-9:
            raise ValueError(f"bias {v} V is not a sweep point")
        return float(vv[k] / i[k])

    return f


def dc_curve_deviation_factory(reference_currents: dict[str, np.ndarray], term: str):
    """Largest relative deviation of I(V) from the reference curve (points with |I| > 1 pA)."""

    def f(tr: Trace) -> float:
        ref = reference_currents[term]
        i = tr.currents[term]
        mask = np.abs(ref) > 1e-12
        return float(np.max(np.abs(i[mask] / ref[mask] - 1.0)))

    return f


def switching_time(state: str, delay: float, direction: int):
    def f(tr: Trace) -> float:
        return crossing_time(tr.t, tr.states[state], 0.0, delay, direction) - delay

    return f


def final_value(state: str):
    def f(tr: Trace) -> float:
        return float(tr.states[state][-1])

    return f


def settled_value(state: str, window: float):
    """Transient: the mean of ``state`` over the last ``window`` seconds (one precession period:
    a free layer still ringing about its rest state averages to near that state, and the mean does
    not depend on the phase of the ringing, which integrators drift on over long runs)."""

    def f(tr: Trace) -> float:
        t, x = tr.t, tr.states[state]
        t0 = t[-1] - window
        if t0 <= t[0]:
            return float(np.mean(x))
        grid = np.linspace(t0, t[-1], 201)
        return float(np.trapezoid(np.interp(grid, t, x), grid) / window)

    return f


def extreme_value(state: str, sign: int):
    def f(tr: Trace) -> float:
        return float(sign * np.max(sign * tr.states[state]))

    return f


# ---- three-terminal cells and wall motion ------------------------------------------------------
def _sweep_index(tr: Trace, term: str, v: float) -> int:
    vv = tr.voltages[term]
    k = int(np.argmin(np.abs(vv - v)))
    if abs(vv[k] - v) > 1e-9:
        raise ValueError(f"bias {v} V is not a sweep point")
    return k


def branch_resistance_at(term: str, node: str, v: float):
    """DC: (V_term - V_node)/I_term at the sweep point V_term = v, where ``node`` may be an
    internal node (its voltage is in the trace)."""

    def f(tr: Trace) -> float:
        k = _sweep_index(tr, term, v)
        return float((tr.voltages[term][k] - tr.voltages[node][k]) / tr.currents[term][k])

    return f


def line_resistance_at(a: str, b: str, node: str, v: float):
    """DC: resistance of a line a - node - b from the current into a, the current out of b and
    the node voltage, at the sweep point V_a = v: (V_a - V_n)/I_a + (V_n - V_b)/(-I_b)."""

    def f(tr: Trace) -> float:
        k = _sweep_index(tr, a, v)
        vn = tr.voltages[node][k]
        return float((tr.voltages[a][k] - vn) / tr.currents[a][k] + (vn - tr.voltages[b][k]) / -tr.currents[b][k])

    return f


def resistance_at_time(term: str, node: str, at: float):
    """Transient: (V_term - V_node)/I_term interpolated at time ``at``."""

    def f(tr: Trace) -> float:
        v = np.interp(at, tr.t, tr.voltages[term] - tr.voltages[node])
        return float(v / np.interp(at, tr.t, tr.currents[term]))

    return f


def current_at_crossing(state: str, level: float, direction: int, term: str, scale: float = 1.0):
    """Transient: ``scale`` times the current into ``term`` when ``state`` first crosses ``level``."""

    def f(tr: Trace) -> float:
        tc = crossing_time(tr.t, tr.states[state], level, 0.0, direction)
        return float(scale * np.interp(tc, tr.t, tr.currents[term])) if np.isfinite(tc) else float("nan")

    return f


def mean_rate(state: str, t_a: float, t_b: float, scale: float = 1.0):
    """Transient: ``scale`` times (x(t_b) - x(t_a))/(t_b - t_a), e.g. a steady wall velocity."""

    def f(tr: Trace) -> float:
        x = tr.states[state]
        return float(scale * (np.interp(t_b, tr.t, x) - np.interp(t_a, tr.t, x)) / (t_b - t_a))

    return f


def mean_rate_per_turn(state: str, angle: str, after: float, turns: int, scale: float = 1.0):
    """Transient: ``scale`` times the mean rate of ``state`` over ``turns`` whole turns (2 pi) of
    the angle state ``angle`` counted from its value at ``after``: the time average of a periodic
    motion (e.g. a wall precessing above the Walker field)."""

    def f(tr: Trace) -> float:
        ang = tr.states[angle]
        a0 = float(np.interp(after, tr.t, ang))
        sgn = 1 if ang[-1] >= a0 else -1
        t1 = crossing_time(tr.t, ang, a0 + sgn * 2 * np.pi * turns, after, sgn)
        if not np.isfinite(t1):
            return float("nan")
        x = tr.states[state]
        return float(scale * (np.interp(t1, tr.t, x) - np.interp(after, tr.t, x)) / (t1 - after))

    return f


def extreme_excursion(state: str, scale: float = 1.0):
    """Transient: ``scale`` times the largest |x(t) - x(0)|."""

    def f(tr: Trace) -> float:
        x = tr.states[state]
        return float(scale * np.max(np.abs(x - x[0])))

    return f
