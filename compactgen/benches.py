"""Benches: stimulus, observables and metrics with tolerances, each tolerance with its reason.

A bench is run three ways (reference, ngspice subcircuit, Verilog-A in VACASK) and every
metric of a simulator run is compared with the same metric of the reference run.  A metric
may also carry an expectation every run must meet on its own (a final state, no switching).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .reference import Trace


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
        if not (np.isfinite(ref) and np.isfinite(sim)):
            return bool(np.isnan(ref) and np.isnan(sim))
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
    temperature: float | None = None  # circuit temperature [K]; None: the simulators' default 27 degC

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


def extreme_value(state: str, sign: int):
    def f(tr: Trace) -> float:
        return float(sign * np.max(sign * tr.states[state]))

    return f
