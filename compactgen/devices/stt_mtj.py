"""Two-terminal perpendicular MTJ switched by spin-transfer torque.

Ports ``t b``: t is the top (free-layer side) electrode, b the bottom (reference-layer side).
The reference layer points along +z, so m_z = +1 is the parallel (low-resistance) state.
Positive conventional current from t to b means electrons flow from the reference layer into
the free layer, whose damping-like torque pulls m toward +z: positive current writes P.
"""
from __future__ import annotations

import numpy as np
import sympy as sp
from scipy.optimize import brentq

from ..benches import (Bench, Dc, Metric, Pulse, crossing_time, dc_curve_deviation_factory, dc_resistance_at,
                       extreme_value, final_value, switching_time)
from ..ir import Branch, Figure, ModelIR, Output, Terminal
from ..physics import macrospin, switching, thermal, torques, tunnelling
from ..constants import ZERO_CELSIUS
from ..physics.constants import const_values
from ..reference import ReferenceModel, figures
from .base import DeviceKind, Option, register
from .common import (cylinder_nz, free_layer_specs, limit_specs, macrospin_states, mtj_conductance,
                     mtj_read_specs, orientation_specs, pillar_free_layer)
from ..params import ParamSpec
from .variation import variation_specs


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
    )

    def param_specs(self) -> list[ParamSpec]:
        stt = [
            ParamSpec("eta", "1", 0.6, 0.01, 2.0, "spin-torque efficiency (constant, angle-independent)",
                      source="J. C. Slonczewski, J. Magn. Magn. Mater. 159, L1 (1996)", group="spin-transfer torque"),
            ParamSpec("xi_fl", "1", 0.0, -2.0, 2.0, "field-like to damping-like torque ratio",
                      source="|xi| <~ 0.3 typical for MgO MTJs (from memory)", group="spin-transfer torque"),
        ]
        return (free_layer_specs() + mtj_read_specs() + stt + limit_specs() + orientation_specs()
                + variation_specs(VARIED))

    def derive_defaults(self, values, options, given=frozenset()):
        out = dict(values)
        if "demag_nz" not in given:
            out["demag_nz"] = cylinder_nz(values, options.get("demag", "cylinder"))
        return out

    def build_ir(self, name, values, options) -> ModelIR:
        table, P, parts, area, fl = pillar_free_layer(self, values, VARIED)
        v = sp.Symbol("v_tb", real=True)
        mz_sym = sp.Symbol("mz", real=True)
        g = mtj_conductance(parts, area, v, mz_sym)  # p = +z, so cos(theta) = m_z
        i_tb = parts.loc("i_tb", v * g)
        j = parts.loc("j_tb", i_tb / area)
        h_dl = parts.loc("h_dl", torques.spin_torque_field(j, P["eta"], P["ms"], P["t_free"]),
                         node_scale=fl["hk_eff"])
        h_fl = parts.loc("h_fl", P["xi_fl"] * h_dl)
        _, states = macrospin_states(parts, fl, h_dl, h_fl, (0, 0, 1))
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
                   "L. Neel, Ann. Geophys. 5, 99 (1949) (from memory); W. F. Brown, Phys. Rev. 130, 1677 (1963)"),
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
                "Instance parameter state0 = +1 starts the free layer parallel, -1 antiparallel; tilt0 sets the "
                "initial cone angle (0 = thermal most-probable angle at tnom).",
                "Internal nodes mx, my, mz carry the free-layer unit vector as voltages (1 V = 1).",
            ],
            constraints=parts.constraints,
            shared=parts.shared,
            limits={"v_max": v, "j_max": j},
        )
        ir.validate()
        return ir

    def benches(self, ir, values):
        return stt_benches(ir, values)


# ---- benches ---------------------------------------------------------------------------------
#: tolerance reasons, stated once
WHY_R = ("DC operating point: only the Newton tolerance (reltol 1e-6) and 17-digit parameter "
         "printing separate the simulators from the reference; 0.1 % bounds both with margin")
WHY_TSW = ("trapezoidal integration, step cap 1/20 of the precession period: measured errors "
           "<= 0.3 % in switching time; 1 % leaves margin for the restart after each pulse edge")
#: circuit temperatures of the temperature benches [degC]: automotive low end, room, hot
BENCH_TEMPERATURES_C = (-40.0, 25.0, 125.0)
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
    # temperature: TMR(T) in the AP resistance, Ms(T) and K(T) in the switching time
    for t_c in BENCH_TEMPERATURES_C:
        t_k = t_c + ZERO_CELSIUS
        tag = f"{t_c:+.0f}C".replace("+", "p").replace("-", "m")
        metrics = [Metric(f"R at {v:+.2f} V", "ohm", dc_resistance_at("t", "b", v), 1e-3, 0.0, WHY_R)
                   for v in (-0.5, 0.1, 0.5)]
        benches.append(Bench(f"temp_rv_antiparallel_{tag}", f"R-V sweep, antiparallel state, at {t_c:g} degC", "dc", {},
                             metrics, instance={"state0": -1.0}, sweep=sweep, plot=("resistance",), temperature=t_k))
        model = ReferenceModel(ir, {"state0": -1.0}, temperature=t_k)
        i_c0_t = figures(ir, temperature=t_k)["i_c0"]
        v = bias_for_current(model, 2.0 * i_c0_t, -1.0)
        width = _pulse_width(model, v, delay, rise)
        benches.append(Bench(
            f"temp_write_to_p_2ic0_{tag}", f"AP->P write at {t_c:g} degC, 2 x I_c0(T) ({2 * i_c0_t * 1e6:.1f} uA, {v:+.3f} V)",
            "tran", {"t": Pulse(0.0, v, delay, rise, rise, width), "b": Dc(0.0)},
            [Metric("switching time", "s", switching_time("mz", delay, 1), 1e-2, 0.0, WHY_TSW),
             Metric("final m_z", "1", final_value("mz"), 0.0, 0.02, WHY_FINAL, expect=(1.0, 0.02))],
            instance={"state0": -1.0}, t_stop=delay + 2 * rise + width + 1.0e-9, t_step=1e-11, max_step=tmax,
            plot=("state:mz",), temperature=t_k))
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
