"""Two-terminal perpendicular MTJ switched by spin-transfer torque.

Ports ``t b``: t is the top (free-layer side) electrode, b the bottom (reference-layer side).
The reference layer points along +z, so m_z = +1 is the parallel (low-resistance) state.
Positive conventional current from t to b means electrons flow from the reference layer into
the free layer, whose damping-like torque pulls m toward +z: positive current writes P.
"""
from __future__ import annotations

import math

import numpy as np
import sympy as sp

from compactgen.harness.benches import Bench, Dc, Metric, Pulse, crossing_time, dc_curve_deviation_factory, dc_resistance_at, extreme_value, settled_value, switching_time
from compactgen.model.ir import Branch, Figure, ModelIR, Output, Terminal
from compactgen.physics import geometry, macrospin, switching, thermal, torques, tunnelling
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.physics.constants import const_values
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures
from compactgen.devices.base import DeviceKind, Option, register
from compactgen.devices.common import cylinder_nz, thermal_option, free_layer_specs, limit_specs, macrospin_states, mtj_conductance, mtj_read_specs, orientation_specs, pillar_free_layer
from compactgen.model.params import ParamSpec
from compactgen.model.variation import variation_specs


#: parameters with process variation: (name, direction of the slow corner, global sigma, mismatch
#: sigma at area_ref) -- illustrative spreads, no source (devices/variation.py)
VARIED = (("ra", +1, 0.03, 0.015), ("tmr0", -1, 0.03, 0.015), ("ki", +1, 0.01, 0.005),
          ("alpha", +1, 0.05, 0.02), ("eta", -1, 0.03, 0.015))


READ_BIAS = 0.1  # [V] read bias of the key figure tmr_read (a point of the R-V benches)


@register
class SttMtj(DeviceKind):
    key = "stt-mtj"
    title = "Two-terminal perpendicular MTJ, spin-transfer-torque switched"
    summary = "macrospin free layer (Cartesian LLG) with Slonczewski torque, TMR read-out linear in cos(theta)"
    options = (
        Option("demag", ("cylinder", "thin-film"), "cylinder",
               "demagnetising factors: magnetometric cylinder from diameter and t_free, or the thin-film limit"),
        thermal_option(),
    )

    def param_specs(self) -> list[ParamSpec]:
        stt = [
            ParamSpec("eta", "1", 0.6, 0.01, 2.0, "spin-torque efficiency (constant, angle-independent)",
                      source="J. C. Slonczewski, J. Magn. Magn. Mater. 159, L1 (1996)", group="spin-transfer torque"),
            ParamSpec("xi_fl", "1", 0.0, -2.0, 2.0, "field-like to damping-like torque ratio",
                      source="|xi| <~ 0.3 typical for MgO junctions: from memory, no source", group="spin-transfer torque"),
        ]
        # the starter's limit covers its own benches: 3 x I_c0 at -40 degC, after the junction has
        # switched to the parallel state (voltage drive: the current rises with the conductance)
        return (free_layer_specs() + mtj_read_specs() + stt + limit_specs(j_max=6e11) + orientation_specs()
                + variation_specs(VARIED))

    def derive_defaults(self, values, options, given=frozenset()):
        out = dict(values)
        if "demag_nz" not in given:
            out["demag_nz"] = cylinder_nz(values, options.get("demag", "cylinder"))
        return out

    def build_ir(self, name, values, options) -> ModelIR:
        table, P, parts, area, fl = pillar_free_layer(self, values, VARIED, options)
        v = sp.Symbol("v_tb", real=True)
        mz_sym = sp.Symbol("mz", real=True)
        g = mtj_conductance(parts, area, v, mz_sym)  # p = +z, so cos(theta) = m_z
        i_tb = parts.loc("i_tb", v * g)
        j = parts.loc("j_tb", i_tb / area)
        h_dl = parts.loc("h_dl", torques.spin_torque_field(j, P["eta"], P["ms"], P["t_free"]),
                         node_scale=fl["hk_eff"])
        h_fl = parts.loc("h_fl", P["xi_fl"] * h_dl)
        _, states = macrospin_states(parts, fl, h_dl, h_fl, (0, 0, 1), axial=True)
        # key figures (parameter-only)
        r_p = P["ra"] / area
        i_c0 = switching.stt_critical_current(P["alpha"], P["eta"], P["ms"], fl["vol"], fl["hk_eff_t"])
        figures = [
            Figure("r_p", r_p, "ohm", "resistance, parallel state, zero bias"),
            Figure("r_ap", r_p * (1 + P["tmr0"]), "ohm", "resistance, antiparallel state, zero bias"),
            Figure("tmr_read", tunnelling.tmr_bias(P["tmr0"], READ_BIAS, P["v_half"]), "1",
                   f"TMR ratio at the read bias {READ_BIAS:g} V",
                   condition=f"V = {READ_BIAS:g} V across the junction: a fixed read bias of this datasheet, "
                             "not a card parameter"),
            Figure("hk_eff", fl["hk_eff_t"], "A/m", "effective anisotropy field"),
            Figure("delta", fl["delta_t"], "1", "thermal stability factor E_b/(k_B T)"),
            Figure("i_c0", i_c0, "A", "zero-temperature STT critical current",
                   "J. Z. Sun, Phys. Rev. B 62, 570 (2000)"),
            Figure("j_c0", i_c0 / area, "A/m^2", "critical current density"),
            Figure("tau_prec", switching.precession_time_scale(P["alpha"], fl["hk_eff_t"]), "s",
                   "precessional time scale (1+alpha^2)/(alpha gamma0 H_k,eff)"),
            Figure("retention", thermal.neel_brown_time(1e-9, fl["delta_t"]), "s",
                   "Neel-Brown retention time tau0 exp(Delta) with the conventional tau0 = 1 ns",
                   "L. Neel, Ann. Geophys. 5, 99 (1949) (volume and page from memory); W. F. Brown, Phys. Rev. 130, 1677 (1963)"),
            Figure("dwell_brown", 2 * thermal.brown_relaxation_time(P["alpha"], fl["hk_eff_t"], fl["delta_t"]), "s",
                   "mean dwell time in one state, 2 tau_N with Brown's attempt time (high-barrier limit)",
                   "W. F. Brown, Phys. Rev. 130, 1677 (1963)"),
            Figure("f_fmr", macrospin.kittel_frequency(P["hz"], fl["hk_t"], P["ms"], (fl["nx"], fl["nx"], P["demag_nz"])),
                   "Hz", "ferromagnetic resonance frequency (P state)", "C. Kittel, Phys. Rev. 73, 155 (1948)"),
        ]
        ir = ModelIR(
            name=name,
            kind=self.key,
            title=self.title,
            terminals=[Terminal("t", "top electrode, free-layer side"),
                       Terminal("b", "bottom electrode, reference-layer side")],
            params=table,
            constants=const_values(),
            derived=parts.derived,
            voltages={v: ("t", "b")},
            temperature=sp.Symbol("temp_k", positive=True),
            locals=parts.locals,
            states=states,
            time_scale=fl["tsc"],
            branches=[Branch("t", "b", i_tb, "tunnelling current, conventional, t to b")],
            outputs=[
                Output("res", 1 / g, "ohm", "junction resistance V/I"),
                Output("jdens", j, "A/m^2", "current density through the pillar"),
            ],
            figures=figures,
            conventions=[
                "Ports in order: t (top, free-layer side), b (bottom, reference-layer side).",
                "Reference layer along +z: m_z = +1 is the parallel (low-resistance) state.",
                "Positive conventional current from t to b (electrons from the reference into the free layer) "
                "drives the free layer toward the parallel state; negative current toward antiparallel.",
                "Instance parameter state0 = +1 starts the free layer parallel, -1 antiparallel.",
                "thermal_rest = 1 (default): the free layer rests at its thermal angle exp(-gamma_E/2)/sqrt(Delta(T)) "
                "from the axis (m_z = +-cos of it, e.g. -0.996 at rest in AP, not -1), held there at any time by a "
                "thermal cone drift, so a write does not depend on when it comes; with no in-plane field the layer is "
                "integrated in the frame co-rotating with its precession: m_z, R and the currents are those of the "
                "laboratory frame, mx and my are the transverse components in the rotating frame (constant at rest).",
                "thermal_rest = 0: plain LLG in the laboratory frame from tilt0 (rad from the axis; 0 = exactly on the "
                "axis, where a spin torque never starts a write: the deterministic worst case) and phi0.",
                "Internal nodes mx, my, mz carry the free-layer unit vector as voltages (1 V = 1).",
            ],
            constraints=parts.constraints,
            noise=parts.noise,
            shared=parts.shared,
            limits={"v_max": v, "j_max": j},
        )
        ir.validate()
        return ir

    def benches(self, ir, values):
        return stt_benches(ir, values)


# ---- benches ----------------------------------------------------------------------------------
# Every bench follows from the card's own physics: bias range from the calibrated limits, step cap
# from the FMR period, pulse widths from the reference switching time, settling from the
# relaxation time.  A bench the device cannot run is marked not applicable with the reason.
WHY_R = ("DC operating point: only the Newton tolerance (reltol 1e-6) and 17-digit parameter "
         "printing separate the simulators from the reference; 0.1 % bounds both with margin")
WHY_TSW = ("trapezoidal integration, step cap 1/25 of the precession period: measured errors "
           "<= 0.3 % in switching time; 1 % leaves margin for the restart after each pulse edge")
#: circuit temperatures of the temperature benches [degC]: automotive low end, room, hot
BENCH_TEMPERATURES_C = (-40.0, 25.0, 125.0)
WHY_FINAL = ("mean m_z over the last precession period after the pulse: the free layer rests at (or rings "
             "about) its thermal rest state in the written well; 0.02 absolute; every run must end in the "
             "expected well (within half its rest m_z)")
WHY_DELAY = ("the free layer rests at its thermal angle, so a pulse long after the start switches as one at "
             "the start: every run within 1 % of the reference's prompt switching time")
#: steps per precession period (the step cap) -- see WHY_TSW
STEPS_PER_PERIOD = 25
#: bench pulse edges [s], delay of the prompt pulses [s]
RISE = 50e-12
DELAY = 0.1e-9
#: longest transient a bench may need, in step caps (keeps one card's verify within a minute)
POINT_BUDGET = 25_000


#: steps per switching time where the free layer is integrated in its co-rotating frame
STEPS_PER_SWITCH = 400


def corotating(values: dict[str, float]) -> bool:
    """True where the default rest state integrates the free layer in its co-rotating frame (no
    in-plane field: devices/common.macrospin_states)."""
    return values.get("hx", 0.0) == 0.0 and values.get("hy", 0.0) == 0.0 and values.get("thermal_rest", 1.0) >= 0.5


def step_cap(f_fmr: float) -> float:
    """The transient step cap: STEPS_PER_PERIOD steps per precession period."""
    return 1.0 / (STEPS_PER_PERIOD * f_fmr)


def bias_for_current(model: ReferenceModel, current: float, v_limit: float) -> float | None:
    """Voltage across t-b that drives ``current`` through the junction in its initial state;
    None if that needs more than ``v_limit`` (the calibrated bias limit)."""
    sign = 1.0 if current > 0 else -1.0
    y0 = model.initial

    def f(v):
        return model.terminal_currents({"t": v, "b": 0.0}, y0)["t"] - current

    if f(sign * v_limit) * sign < 0:
        return None
    from scipy.optimize import brentq  # here, not at import: `compactgen build` needs no scipy

    return float(brentq(f, 0.0, sign * v_limit, xtol=1e-15, rtol=1e-14))


def rest_mz(ir, state0: float, temperature: float | None = None, overrides: dict | None = None) -> float:
    """m_z of the free layer at rest in the well of ``state0`` (thermal rest state), with further
    instance/model ``overrides``."""
    kw = {} if temperature is None else {"temperature": temperature}
    m = ReferenceModel(ir, dict(overrides or {}, state0=state0), **kw)
    return float(m.initial[[s.name for s in ir.states].index("mz")])


class WritePlan:
    """A write pulse at k x I_c0 planned from the card: its bias, width and length, or the reason
    it does not apply to this device."""

    def __init__(self, ir, values, k: float, direction: int, temperature: float | None = None,
                 delay: float = DELAY):
        figs = figures(ir, temperature=temperature)
        kw = {} if temperature is None else {"temperature": temperature}
        self.k, self.direction, self.delay = k, direction, delay
        self.start = -float(direction)
        self.current = direction * k * figs["i_c0"]
        self.v = None
        self.width = self.t_stop = 0.0
        self.reason = ""
        self.tsw = float("nan")
        area = float(geometry.disk_area(values["diameter"]))
        j = abs(self.current) / area
        if j > values["j_max"]:
            self.reason = (f"{k:g} x I_c0 = {abs(self.current) * 1e6:.4g} uA is {j / 1e10:.4g} MA/cm^2, beyond the "
                           f"calibrated limit j_max = {values['j_max'] / 1e10:.4g} MA/cm^2")
            return
        model = ReferenceModel(ir, {"state0": self.start}, **kw)
        v_lim = values["v_max"]
        self.v = bias_for_current(model, self.current, v_lim)
        if self.v is None:
            r_lim = abs(v_lim / model.terminal_currents({"t": v_lim, "b": 0.0}, model.initial)["t"])
            self.reason = (f"{k:g} x I_c0 = {abs(self.current) * 1e6:.4g} uA needs more than the calibrated bias "
                           f"limit v_max = {v_lim:g} V across the junction (R = {r_lim:.4g} ohm there)")
            return
        # under voltage drive the current changes as the junction switches: the written state's
        # current must stay inside the calibrated range too
        written = ReferenceModel(ir, {"state0": -self.start}, **kw)
        j_end = abs(written.terminal_currents({"t": self.v, "b": 0.0}, written.initial)["t"]) / area
        if j_end > values["j_max"]:
            self.reason = (f"{k:g} x I_c0 at {self.v:+.4g} V reaches {j_end / 1e10:.4g} MA/cm^2 once written "
                           f"(voltage drive), beyond the calibrated limit j_max = {values['j_max'] / 1e10:.4g} MA/cm^2")
            return
        theta = float(np.arccos(min(1.0, abs(rest_mz(ir, self.start, temperature)))))
        t_est = figs["tau_prec"] * float(switching.switching_integral(k, max(theta, 1e-6)).evalf())
        cap = step_cap(figs["f_fmr"])
        if corotating(values):  # no precession to resolve: the step follows the polar motion
            cap = max(cap, t_est / STEPS_PER_SWITCH)
        settle = float(np.clip(3.0 * figs["tau_prec"], 1e-9, 20e-9))
        # the pulse lasts 3x the constant-current estimate (voltage drive changes the current as the
        # junction switches); its reference run is the bench's own (kept for verify)
        self.width = float(np.ceil(max(3.0 * t_est, 1e-9) / 1e-11) * 1e-11)
        self.t_stop = delay + 2 * RISE + self.width + settle
        if self.t_stop / cap > POINT_BUDGET:
            self.reason = (f"switching at {k:g} x I_c0 takes about {t_est * 1e9:.4g} ns (alpha = {values['alpha']:.3g}, "
                           f"step cap {cap * 1e12:.4g} ps): more than {POINT_BUDGET} time steps")
            return
        self.cap = cap
        self.period = 1.0 / figs["f_fmr"]
        self.final = rest_mz(ir, -self.start, temperature)
        self.temperature = temperature
        from compactgen.harness.verify import reference_trace

        self.trace = tr = reference_trace(ir, self.bench("probe", ""))
        self.tsw = crossing_time(tr.t, tr.states["mz"], 0.0, delay, direction) - delay
        if not np.isfinite(self.tsw):
            i_end = abs(np.interp(delay + RISE + self.width, tr.t, tr.currents["t"]))
            self.reason = (f"the reference does not switch at {k:g} x I_c0 ({self.v:+.4g} V) within a "
                           f"{self.width * 1e9:.3g} ns pulse (3x the constant-current estimate): under voltage drive "
                           f"the current ends at {i_end / figs['i_c0']:.3g} x I_c0 as the resistance changes")

    def bench(self, name: str, title: str, expect_tsw: float | None = None, plot=("state:mz", "current:t")) -> Bench:
        b = Bench(name, f"{title} ({abs(self.current) * 1e6:.4g} uA, {self.v:+.4g} V)", "tran",
                  {"t": self.pulse(), "b": Dc(0.0)}, self.metrics(expect_tsw), instance={"state0": self.start},
                  t_stop=self.t_stop, t_step=1e-11, max_step=self.cap, plot=plot, temperature=self.temperature)
        if self.cap > step_cap(1.0 / self.period):  # co-rotating: no precession for the reference to follow
            b.ref_max_step, b.ref_grid, b.ref_method = self.cap, max(0.5e-12, self.cap / 20), "Radau"
        b.cached_reference = getattr(self, "trace", None)
        return b

    def pulse(self) -> Pulse:
        return Pulse(0.0, self.v, self.delay, RISE, RISE, self.width)

    def metrics(self, expect_tsw: float | None = None) -> list[Metric]:
        ms = [Metric("switching time", "s", switching_time("mz", self.delay, self.direction), 1e-2, 0.0,
                     WHY_DELAY if expect_tsw is not None else WHY_TSW,
                     expect=None if expect_tsw is None else (expect_tsw, 1e-2 * expect_tsw)),
              Metric("final m_z", "1", settled_value("mz", self.period), 0.0, 0.02, WHY_FINAL,
                     expect=(self.final, 0.5 * abs(self.final)))]
        return ms


def stt_benches(ir, values: dict[str, float]) -> list[Bench]:
    figs = figures(ir)
    i_c0 = figs["i_c0"]
    benches: list[Bench] = []
    # R-V: the calibrated bias range, limited by j_max in the parallel (lowest-resistance) state
    v_lim = min(values["v_max"], values["j_max"] * values["ra"])
    n = round(v_lim / 0.01)
    if n >= 20 and abs(n * 0.01 - v_lim) < 1e-12:  # a 10 mV grid holds the read bias 0.1 V
        step, n_read = 0.01, 10
    else:
        n, step, n_read = 20, v_lim / 20, 2
    sweep = ("t", -v_lim, v_lim, step)
    points = [k * step for k in (-n, -n_read, n_read, n // 2, n)]
    for state0, label in ((1.0, "parallel"), (-1.0, "antiparallel")):
        inst = {"state0": state0}
        ref = ReferenceModel(ir, inst)
        vs = Bench("x", "", "dc", {}, [], sweep=sweep).sweep_values()
        ref_i = ref.dc({"t": vs, "b": np.zeros_like(vs)}).currents
        metrics = [Metric(f"R at {v:+.2f} V" if step == 0.01 else f"R at {v:+.3g} V", "ohm",
                          dc_resistance_at("t", "b", v), 1e-3, 0.0, WHY_R) for v in points]
        metrics.append(Metric("max |I/I_ref - 1| over sweep", "1", dc_curve_deviation_factory(ref_i, "t"),
                              0.0, 1e-3, WHY_R))
        benches.append(Bench(f"rv_{label}", f"R-V sweep {-v_lim:+.3g}..{v_lim:+.3g} V (calibrated range), {label} "
                             "state at rest", "dc", {}, metrics, instance=inst, sweep=sweep, plot=("resistance",)))

    def write_bench(name, title, plan: WritePlan, temperature=None, expect_tsw=None, plot=("state:mz", "current:t")):
        if plan.reason:
            return Bench(name, title, "tran", {}, [], instance={"state0": plan.start}, temperature=temperature,
                         not_applicable=plan.reason)
        return plan.bench(name, title, expect_tsw, plot)

    prompt_2 = None
    for direction, label in ((+1, "to_p"), (-1, "to_ap")):
        for k in (1.5, 2.0, 3.0):
            plan = WritePlan(ir, values, k, direction)
            if direction > 0 and k == 2.0:
                prompt_2 = plan
            benches.append(write_bench(f"write_{label}_{k:g}ic0",
                                       f"{'AP->P' if direction > 0 else 'P->AP'} write, {k:g} x I_c0", plan))
    # the same write long after the start: the rest state holds, so the write does not depend on when it comes
    if prompt_2 is not None and not prompt_2.reason:
        late = float(np.clip(5.0 * figs["tau_prec"], 20e-9, 200e-9))
        plan = WritePlan(ir, values, 2.0, +1, delay=late)
        benches.append(write_bench("write_to_p_2ic0_late", f"AP->P write, 2 x I_c0, {late * 1e9:.3g} ns after the start "
                                   "(5 relaxation times, at least 20 ns)", plan, expect_tsw=prompt_2.tsw,
                                   plot=("state:mz",)))
    # temperature: TMR(T) in the AP resistance, Ms(T) and K(T) in the switching time
    for t_c in BENCH_TEMPERATURES_C:
        t_k = t_c + ZERO_CELSIUS
        tag = f"{t_c:+.0f}C".replace("+", "p").replace("-", "m")
        step_t = min(v_lim, 0.5) / 10
        metrics = [Metric(f"R at {v:+.3g} V", "ohm", dc_resistance_at("t", "b", v), 1e-3, 0.0, WHY_R)
                   for v in (-10 * step_t, 2 * step_t, 10 * step_t)]
        benches.append(Bench(f"temp_rv_antiparallel_{tag}", f"R-V sweep, antiparallel state, at {t_c:g} degC", "dc", {},
                             metrics, instance={"state0": -1.0}, sweep=("t", -10 * step_t, 10 * step_t, step_t),
                             plot=("resistance",), temperature=t_k))
        plan = WritePlan(ir, values, 2.0, +1, temperature=t_k)
        benches.append(write_bench(f"temp_write_to_p_2ic0_{tag}", f"AP->P write at {t_c:g} degC, 2 x I_c0(T)", plan,
                                   temperature=t_k, plot=("state:mz",)))
    # sub-threshold: half the critical current must not switch
    model = ReferenceModel(ir, {"state0": -1.0})
    v = bias_for_current(model, 0.5 * i_c0, values["v_max"])
    hold = float(np.clip(5.0 * figs["tau_prec"], 10e-9, 50e-9))
    mz_rest = rest_mz(ir, -1.0)
    cap = step_cap(figs["f_fmr"])
    if corotating(values):
        cap = max(cap, hold / STEPS_PER_SWITCH)
    title = f"sub-threshold pulse 0.5 x I_c0 ({0.5 * i_c0 * 1e6:.4g} uA) for {hold * 1e9:.3g} ns from AP: no switching"
    # under i = 0.5 the rest cone widens to sin^2 = sin^2(rest)/(1 - i) (physics/macrospin.thermal_cone_drift)
    s2_hold = (1.0 - mz_rest**2) / (1.0 - 0.5) if corotating(values) else 1.0 - mz_rest**2
    mz_hold = -math.sqrt(max(0.0, 1.0 - s2_hold))
    if v is not None and mz_hold > -0.3:
        benches.append(Bench("hold_0.5ic0", title, "tran", {}, [], not_applicable=(
            f"the thermal cone (Delta = {figs['delta']:.3g}) reaches m_z = {mz_hold:.3g} under 0.5 x I_c0: "
            "no well deep enough to test holding")))
    elif v is None:
        benches.append(Bench("hold_0.5ic0", title, "tran", {}, [], not_applicable=(
            f"0.5 x I_c0 needs more than the calibrated bias limit v_max = {values['v_max']:g} V")))
    elif (hold + 1e-9) / cap > POINT_BUDGET:
        benches.append(Bench("hold_0.5ic0", title, "tran", {}, [], not_applicable=(
            f"{hold * 1e9:.3g} ns at a step cap of {cap * 1e12:.3g} ps is more than {POINT_BUDGET} time steps")))
    else:
        benches.append(Bench(
            "hold_0.5ic0", f"{title} ({v:+.4g} V)", "tran", {"t": Pulse(0.0, v, DELAY, RISE, RISE, hold), "b": Dc(0.0)},
            [Metric("largest m_z during pulse", "1", extreme_value("mz", +1), 0.0, 0.02,
                    "below the threshold the cone about -z widens to its sub-threshold rest (sin^2 / (1 - i)) and "
                    "stays in its well; the extreme is a smooth maximum; every run within 0.1 + 20 % of that rest",
                    expect=(mz_hold, 0.1 + 0.2 * (mz_hold - mz_rest))),
             Metric("final m_z", "1", settled_value("mz", 1.0 / figs["f_fmr"]), 0.0, 0.02, WHY_FINAL,
                    expect=(mz_rest, 0.5 * abs(mz_rest)))],
            instance={"state0": -1.0}, t_stop=DELAY + 2 * RISE + hold + 1e-9, t_step=1e-11, max_step=cap,
            plot=("state:mz",)))
    return benches
