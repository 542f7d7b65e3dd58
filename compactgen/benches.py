"""Benches: stimulus, observables and metrics with tolerances, each tolerance with its reason.

A bench is run three ways (reference, ngspice subcircuit, Verilog-A in VACASK) and every
metric of a simulator run is compared with the same metric of the reference run.  A metric
may also carry an expectation every run must meet on its own (a final state, no switching).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np
from scipy.optimize import brentq

from .reference import ReferenceModel, Trace, figures


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


# ---- STT MTJ benches -----------------------------------------------------------------------
#: tolerance reasons, stated once
WHY_R = ("DC operating point: only the Newton tolerance (reltol 1e-6) and 17-digit parameter "
         "printing separate the simulators from the reference; 0.1 % bounds both with margin")
WHY_TSW = ("trapezoidal integration, step cap 1/20 of the precession period: measured errors "
           "<= 0.3 % in switching time; 1 % leaves margin for the restart after each pulse edge")
WHY_FINAL = "after the pulse the free layer relaxes to a pole; 0.02 absolute on m_z"


def bias_for_current(model: ReferenceModel, current: float, state0: float) -> float:
    """Voltage across t-b that drives ``current`` through the junction in its initial state."""
    sign = 1.0 if current > 0 else -1.0
    y0 = model.initial

    def f(v):
        return model.terminal_currents({"t": v, "b": 0.0}, y0)["t"] - current

    return float(brentq(f, 0.0, sign * 20.0, xtol=1e-15, rtol=1e-14))


def stt_benches(ir, values: dict[str, float]) -> list[Bench]:
    figs = figures(ir)
    i_c0 = figs["i_c0"]
    f_fmr = figs["f_fmr"]
    tmax = min(2e-12, 1.0 / (25.0 * f_fmr))
    benches: list[Bench] = []
    sweep = ("t", -1.0, 1.0, 0.05)
    for state0, label in ((1.0, "parallel"), (-1.0, "antiparallel")):
        ref = ReferenceModel(ir, {"state0": state0})
        vs = Bench("x", "", "dc", {}, [], sweep=sweep).sweep_values()
        ref_i = ref.dc({"t": vs, "b": np.zeros_like(vs)}).currents
        metrics = [
            Metric(f"R at {v:+.2f} V", "ohm", dc_resistance_at("t", "b", v), 1e-3, 0.0, WHY_R)
            for v in (-1.0, -0.1, 0.1, 0.5, 1.0)
        ]
        metrics.append(Metric("max |I/I_ref - 1| over sweep", "1", dc_curve_deviation_factory(ref_i, "t"),
                              0.0, 1e-3, WHY_R))
        benches.append(Bench(f"rv_{label}", f"R-V sweep -1..1 V, {label} state", "dc", {}, metrics,
                             instance={"state0": state0}, sweep=sweep, plot=("resistance",)))
    rise = 50e-12
    delay = 0.1e-9
    for direction, start, label in ((+1, -1.0, "to_p"), (-1, +1.0, "to_ap")):
        model = ReferenceModel(ir, {"state0": start})
        for k in (1.5, 2.0, 3.0):
            v = bias_for_current(model, direction * k * i_c0, start)
            width = _pulse_width(model, v, delay, rise)
            pulse = Pulse(0.0, v, delay, rise, rise, width)
            t_stop = delay + 2 * rise + width + 1.0e-9
            metrics = [
                Metric("switching time", "s", switching_time("mz", delay, direction), 1e-2, 0.0, WHY_TSW),
                Metric("final m_z", "1", final_value("mz"), 0.0, 0.02, WHY_FINAL, expect=(float(direction), 0.02)),
            ]
            benches.append(Bench(
                f"write_{label}_{k:g}ic0", f"{'AP->P' if direction > 0 else 'P->AP'} write, "
                f"{k:g} x I_c0 ({k * i_c0 * 1e6:.1f} uA, {v:+.3f} V)",
                "tran", {"t": pulse, "b": Dc(0.0)}, metrics, instance={"state0": start},
                t_stop=t_stop, t_step=1e-11, max_step=tmax, plot=("state:mz", "current:t")))
    # sub-threshold: half the critical current must not switch
    model = ReferenceModel(ir, {"state0": -1.0})
    v = bias_for_current(model, 0.5 * i_c0, -1.0)
    pulse = Pulse(0.0, v, delay, rise, rise, 10e-9)
    benches.append(Bench(
        "hold_0.5ic0", f"sub-threshold pulse 0.5 x I_c0 ({0.5 * i_c0 * 1e6:.1f} uA, {v:+.3f} V) from AP: no switching",
        "tran", {"t": pulse, "b": Dc(0.0)},
        [Metric("largest m_z during pulse", "1", extreme_value("mz", +1), 0.0, 0.02,
                "precession about -z with a shrinking cone; the extreme is a smooth maximum",
                expect=(-1.0, 0.1)),
         Metric("final m_z", "1", final_value("mz"), 0.0, 0.02, WHY_FINAL, expect=(-1.0, 0.02))],
        instance={"state0": -1.0}, t_stop=delay + 2 * rise + 10e-9 + 1e-9, t_step=1e-11, max_step=tmax,
        plot=("state:mz",)))
    return benches


def _pulse_width(model: ReferenceModel, v: float, delay: float, rise: float) -> float:
    """Pulse long enough to finish switching: three times the reference switching time, at least 2 ns."""
    probe = Pulse(0.0, v, delay, rise, rise, 40e-9)
    tr = model.transient({"t": probe}, delay + rise + 40e-9, rtol=1e-8, atol=1e-10)
    direction = 1 if v > 0 else -1
    tsw = crossing_time(tr.t, tr.states["mz"], 0.0, delay, direction) - delay
    if not np.isfinite(tsw):
        raise ValueError(f"bench set-up: {v:+.3f} V does not switch within 40 ns in the reference")
    return float(np.ceil(max(3.0 * tsw, 2e-9) / 1e-10) * 1e-10)
