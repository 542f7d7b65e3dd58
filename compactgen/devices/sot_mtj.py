"""Three-terminal perpendicular MTJ switched by spin-orbit torque from a heavy-metal write line.

Ports ``w1 w2 t`` (devices/write_line.py): the free layer stands on the middle of the write
line; the junction's bottom is that point of the line (internal node ``mid``).  The spin Hall
current of the line exerts a damping-like torque with p = sigma = -y for theta_sh > 0 and current
along +x (``spin_orbit.spin_hall_polarisation``, signed theta_sh) and a field-like one (ratio
xi_sot, field along sigma); an in-plane bias field hx along the current makes the switching
deterministic: a current above threshold leaves m_z = -sign(J theta_sh hx)
(``spin_orbit.switched_state``).  The read current
through the junction adds a Slonczewski torque (efficiency eta) as in the stt-mtj kind.
"""
from __future__ import annotations

import dataclasses

import numpy as np
import sympy as sp

from compactgen.model.constants import MU0
from compactgen.model.ir import Branch, Constraint, Figure, ModelIR, Output
from compactgen.model.params import ParamSpec
from compactgen.physics import heavy_metal, macrospin, spin_orbit, switching, torques
from compactgen.physics.constants import const_values
from compactgen.model.variation import variation_specs
from compactgen.devices.base import DeviceKind, register
from compactgen.devices.common import NM, free_layer_specs, limit_specs, macrospin_states, mtj_conductance, mtj_read_specs, orientation_specs, pillar_free_layer
from compactgen.devices.stt_mtj import SttMtj
from compactgen.devices.write_line import CONVENTIONS, READ_PORT_LABEL, WHY_DC, heavy_metal_specs, line_current_density, line_resistance_bench, three_terminal

MT = 1e-3 / MU0  # A/m per mT, for readable defaults


#: process variation (devices/variation.py): name, direction of the slow corner, global sigma,
#: mismatch sigma at area_ref -- illustrative defaults, no source
VARIED = (("ra", +1, 0.03, 0.015), ("tmr0", -1, 0.03, 0.015), ("ki", +1, 0.01, 0.005),
          ("theta_sh", -1, 0.05, 0.02), ("rho_hm", +1, 0.03, 0.01))

@register
class SotMtj(DeviceKind):
    key = "sot-mtj"
    title = "Three-terminal perpendicular MTJ, spin-orbit-torque switched"
    summary = ("macrospin free layer on a heavy-metal write line: spin Hall damping-like and field-like torques, "
               "in-plane bias field, read-current STT, TMR read-out linear in cos(theta)")
    options = SttMtj.options

    def param_specs(self) -> list[ParamSpec]:
        # starter: hx/H_k,eff = 0.055 with its free layer, enough for the end state to follow
        # -sign(J theta_sh hx) at 1.5-3 x J_c and -40..125 degC (20 mT rang back at 3 x J_c)
        fl = [dataclasses.replace(s, default=50.0 * MT,
                                  desc="in-plane bias field along the write current (x); needed for deterministic "
                                       "switching of a perpendicular free layer")
              if s.name == "hx" else s for s in free_layer_specs()]
        line = [
            ParamSpec("line_length", "m", 200 * NM, 10 * NM, 100e-6, "write-line length between the ports w1 and w2",
                      card_unit="nm", required=True, group="heavy-metal line"),
            ParamSpec("line_width", "m", 60 * NM, 5 * NM, 100e-6, "write-line width (at least the pillar diameter)",
                      card_unit="nm", required=True, group="heavy-metal line"),
        ]
        stt = [dataclasses.replace(s, desc="spin-transfer efficiency of the read current through the junction "
                                           "(constant)")
               for s in SttMtj().param_specs() if s.name == "eta"]
        return (fl + mtj_read_specs() + heavy_metal_specs() + line + stt
                + limit_specs(v_max=1.0, j_max=2.5e13) + orientation_specs() + variation_specs(VARIED))

    derive_defaults = SttMtj.derive_defaults  # demagnetising factor from the pillar, as for stt-mtj

    def build_ir(self, name, values, options) -> ModelIR:
        table, P, parts, area, fl = pillar_free_layer(self, values, VARIED, options)
        r_line = parts.d("r_line", heavy_metal.line_resistance(P["rho_hm"], P["line_length"], P["line_width"],
                                                               P["t_hm"]), positive=True)
        cell = three_terminal(parts, r_line / 2, r_line / 2)
        mz = sp.Symbol("mz", real=True)
        g = mtj_conductance(parts, area, cell["v_tm"], mz)  # reference layer +z: cos(theta) = m_z
        i_tm = parts.loc("i_tm", cell["v_tm"] * g)
        # the free layer spans the middle of the line: the current under it is the mean of both halves
        j_line = line_current_density(parts, "j_line", (cell["i_w1"] + cell["i_w2"]) / 2, P["line_width"])
        h_sh = parts.loc("h_sh", torques.spin_torque_field(j_line, P["theta_sh"], P["ms"], P["t_free"]))
        # read current t -> mid flows from the reference into the free layer (conventional), i.e.
        # electrons leave the free layer: its Slonczewski torque favours the antiparallel state
        j_mtj = parts.loc("j_mtj", i_tm / area)
        h_stt = parts.loc("h_stt", torques.spin_torque_field(-j_mtj, P["eta"], P["ms"], P["t_free"]))
        sigma = tuple(spin_orbit.spin_hall_polarisation())
        _, states = macrospin_states(parts, fl, h_sh, P["xi_sot"] * h_sh, sigma,
                                     extra_torques=[(h_stt, 0, (0, 0, 1))])
        parts.constraints.append(Constraint(P["line_width"] - P["diameter"],
                                            "{line_width} must be at least the pillar {diameter}"))
        parts.constraints.append(Constraint(P["line_length"] - P["diameter"],
                                            "{line_length} must be longer than the pillar {diameter}"))
        parts.constraints.append(Constraint(sp.Abs(P["theta_sh"]) - 1e-4, "{theta_sh} must not be zero (|theta_sh| "
                                            "at least 1e-4; without it there is no spin-orbit torque)"))
        parts.constraints.append(Constraint(fl["hk_eff"] - sp.Abs(P["hx"]),
                                            "the bias field {hx} must stay below the effective anisotropy field "
                                            "H_k,eff = {hk_eff} in magnitude (else the free layer lies in plane)",
                                            "A/m", "mT", shown=(("hk_eff", fl["hk_eff"]),)))
        h_c = spin_orbit.threshold_field(sp.Abs(P["hx"]), fl["hk_eff_t"])
        j_c = spin_orbit.current_density_for_field(h_c, sp.Abs(P["theta_sh"]), P["ms"], P["t_free"])
        r_p = P["ra"] / area
        figures = [
            Figure("r_line", r_line, "ohm", "write-line resistance rho L/(w t) between w1 and w2"),
            Figure("r_p", r_p, "ohm", "junction resistance, parallel state, zero bias"),
            Figure("r_ap", r_p * (1 + P["tmr0"]), "ohm", "junction resistance, antiparallel state, zero bias"),
            Figure("hk_eff", fl["hk_eff_t"], "A/m", "effective anisotropy field"),
            Figure("delta", fl["delta_nom"], "1", "thermal stability factor E_b/(k_B tnom)"),
            Figure("j_c_sot", j_c, "A/m^2", "quasi-static SOT threshold (exact torque balance, field-like torque "
                   "neglected)", "K.-S. Lee et al., Appl. Phys. Lett. 102, 112410 (2013); the exact torque balance derived here from the model"),
            Figure("i_c_sot", j_c * P["line_width"] * P["t_hm"], "A", "write-line current at the threshold"),
            Figure("tau_prec", switching.precession_time_scale(P["alpha"], fl["hk_eff_t"]), "s",
                   "relaxation (precessional) time scale (1+alpha^2)/(alpha gamma0 H_k,eff)"),
            Figure("f_fmr", macrospin.kittel_frequency(P["hz"], fl["hk"], P["ms"], (fl["nx"], fl["nx"], P["demag_nz"])),
                   "Hz", "ferromagnetic resonance frequency (m_z = +1, in-plane field neglected)",
                   "C. Kittel, Phys. Rev. 73, 155 (1948)"),
        ]
        ir = ModelIR(
            name=name, kind=self.key, title=self.title,
            terminals=cell["terminals"], params=table, constants=const_values(), derived=parts.derived,
            voltages=cell["voltages"], temperature=sp.Symbol("temp_k", positive=True), locals=parts.locals,
            states=states, time_scale=fl["tsc"],
            branches=cell["branches"] + [Branch("t", "mid", i_tm, "tunnelling current, conventional, t to mid")],
            outputs=[Output("res", 1 / g, "ohm", "junction resistance V/I"),
                     Output("jdens", j_line, "A/m^2", "current density in the write line under the free layer")],
            figures=figures,
            conventions=CONVENTIONS + [
                "A write current above threshold leaves m_z = -sign(J * theta_sh * hx): with theta_sh > 0 (Pt) and "
                "hx > 0, current from w1 to w2 writes antiparallel (m_z = -1), from w2 to w1 parallel; with "
                "theta_sh < 0 (beta-Ta, beta-W) the other way round.",
                "Read current from t to mid (electrons from the free into the reference layer) favours antiparallel "
                "through the spin-transfer torque (efficiency eta).",
                "Instance parameter state0 = +1 starts the free layer parallel, -1 antiparallel. thermal_rest = 1 "
                "(default): the free layer starts at rest, at its static equilibrium in the bias field (tilted by about "
                "asin(hx/H_k,eff)), a fixed point, so a write does not depend on when it comes; thermal_rest = 0: it "
                "starts at tilt0/phi0 about the axis and relaxes from there.",
                "Internal nodes mx, my, mz carry the free-layer unit vector as voltages (1 V = 1).",
                "Validity: macrospin; real free layers larger than the nucleation size switch by domain nucleation "
                "and wall motion at lower currents; at small damping a step pulse may end in either state (use a "
                "trailing edge the free layer can follow).",
            ],
            constraints=parts.constraints,
            noise=parts.noise,
            limits={"v_max": cell["v_tm"], "j_max": j_line},
            nodes=cell["nodes"],
        )
        ir.validate()
        return ir

    def benches(self, ir, values):
        return sot_benches(ir, values)


# ---- benches ---------------------------------------------------------------------------------
WHY_RP = WHY_DC + "; in the parallel state every run must give RA/area at any bias (TMR roll-off acts on R_AP only)"
WHY_TSW = ("trapezoidal integration with a step cap of 1/25 of the precession period; the crossing of m_z = 0 "
           "comes 0.1-0.2 ns into the pulse, soon after its 50 ps edge; 1 % leaves margin for the restart there")
WHY_FINAL = ("mean m_z over the last precession period after the pulse: the free layer rests at (or rings about) "
             "its equilibrium tilted by the bias field; 0.02 absolute; every run must end in the expected well "
             "(within half its rest m_z)")
WHY_JSW = ("the current is a slow ramp, so a shift of the escape time by the simulators' 1e-3 timing errors "
           "moves the switching current by far less than 0.5 %")
WHY_JSW_FAST = ("a ramp shortened by the step budget crosses the threshold within a few relaxation times, like a "
                "write pulse: the crossing time carries the write benches' 1 % timing tolerance, and J with it "
                "(measured: 0.6 % between VACASK and the reference on a 16-relaxation-time ramp)")
WHY_JSW_EXPECT = ("every run must meet the exact torque-balance threshold within 5 %: a 20 ns ramp lags the "
                  "saddle-node bifurcation at the threshold: measured +2.4 % in the "
                  "reference for the example (+1.4 % for 40 ns, +4.1 % for 10 ns); 5 % bound")

DELAY = 0.1e-9
RISE = 0.05e-9
FALL = 1.0e-9  # shortest trailing edge
#: trailing edge in relaxation times: a free layer that follows the edge ends in the well the current
#: chose, -sign(J theta_sh hx) (the demo card at 125 degC: 2 and 3 x J_c ring back with a 1 ns edge, about
#: 4 relaxation times, and follow a 5 ns one)
FALL_TAUS = 25.0
WIDTH = 2.0e-9
RAMP = 20e-9
#: the threshold ramp lasts at least this many relaxation times: the lag behind the exact threshold
#: grows as the ramp shortens (the demo card, relaxation time 0.19 ns: +1.4 % for 40 ns, +2.4 % for
#: 20 ns, +4.1 % for 10 ns = 52 relaxation times, all measured in the reference), inside the 5 % bound
RAMP_TAUS = 50.0


def sot_benches(ir, values):
    """Benches derived from the card: line and read sweeps inside the calibrated limits, write pulses
    whose trailing edge the free layer can follow (several relaxation times), a threshold ramp slow
    against the relaxation time; not applicable, with the reason, where the device cannot run one."""
    from compactgen.harness.benches import Bench, Dc, Metric, Pulse, Pwl, branch_resistance_at, current_at_crossing, settled_value, switching_time
    from compactgen.harness.reference import ReferenceModel
    from compactgen.model.evaluate import figures
    from compactgen.model.constants import ZERO_CELSIUS
    from compactgen.devices.stt_mtj import BENCH_TEMPERATURES_C, POINT_BUDGET, rest_mz, step_cap
    from compactgen.devices.write_line import line_drive

    figs = figures(ir)
    jc = figs["j_c_sot"]
    cross = values["line_width"] * values["t_hm"]
    tmax = step_cap(figs["f_fmr"])
    tau_r = figs["tau_prec"]
    period = 1.0 / figs["f_fmr"]

    def timing(tau):
        """Pulse width, trailing edge and settling time for a free layer relaxing in ``tau``: the edge
        lasts FALL_TAUS relaxation times so the layer follows it into the well the current chose --
        or what the step budget leaves (a low-damping layer may then ring back: the bench set-up sees
        that in the reference and reports it as a finding)."""
        width = float(np.clip(10.0 * tau, WIDTH, 20e-9))
        settle = float(np.clip(3.0 * tau, 1.5e-9, 10e-9))
        room = 0.98 * POINT_BUDGET * tmax - DELAY - RISE - width - settle
        return width, float(max(FALL, min(FALL_TAUS * tau, 100e-9, room))), settle
    benches: list[Bench] = []
    # the line sweep stays below j_max in the line
    v_line = min(0.5, 0.9 * values["j_max"] * cross * figs["r_line"])
    benches.append(line_resistance_bench(figs["r_line"], v_line))
    # junction read: t swept inside the calibrated bias range, both line ends at 0 V
    v_read = min(0.5, values["v_max"])
    step = v_read / 10
    sweep = ("t", -v_read, v_read, step)
    for state0, label in ((1.0, "parallel"), (-1.0, "antiparallel")):
        metrics = [Metric(f"R(t-mid) at {v:+.3g} V", "ohm", branch_resistance_at("t", "mid", v), 1e-3, 0.0,
                          WHY_RP if state0 > 0 else WHY_DC,
                          expect=(figs["r_p"], 1e-6 * figs["r_p"]) if state0 > 0 else None)
                   for v in (-10 * step, -step, step, 10 * step)]
        benches.append(Bench(f"read_{label}", f"junction read: t swept {-v_read:+.3g}..{v_read:+.3g} V, w1 = w2 = 0, "
                             f"{label} state (no initial tilt)", "dc", {}, metrics,
                             instance={"state0": state0, "thermal_rest": 0.0, "tilt0": 0.0},
                             sweep=sweep, plot=("resistance",), labels={"resistance": READ_PORT_LABEL}))

    def write(name, title, k, jsign, inst, temperature=None, plot=("state:mz", "current:w1")):
        kw = {} if temperature is None else {"temperature": temperature}
        figs_t = figures(ir, temperature=temperature) if temperature is not None else figs
        width, fall, settle = timing(figs_t["tau_prec"])
        j = k * figs_t["j_c_sot"]
        hx_b = inst.get("hx", values["hx"])
        final = float(spin_orbit.switched_state(jsign, values["theta_sh"], hx_b))
        inst = dict(inst, state0=-final)
        t_stop = DELAY + RISE + width + fall + settle
        reason = ""
        if not np.isfinite(j):
            reason = (f"at {temperature - ZERO_CELSIUS if temperature else 27:g} degC the bias field |hx| exceeds "
                      f"H_k,eff(T) = {figs_t['hk_eff']:.4g} A/m: no perpendicular state to switch")
        elif j > values["j_max"]:
            reason = (f"{k:g} x J_c = {j / 1e10:.4g} MA/cm^2 in the line is beyond the calibrated limit "
                      f"j_max = {values['j_max'] / 1e10:.4g} MA/cm^2")
        elif t_stop / tmax > POINT_BUDGET:
            reason = (f"the shortest write bench (relaxation time {tau_r * 1e9:.3g} ns, alpha = {values['alpha']:.3g}) "
                      f"takes {t_stop * 1e9:.3g} ns: more than {POINT_BUDGET} time steps of {tmax * 1e12:.3g} ps")
        if reason:
            return Bench(name, title, "tran", {}, [], instance=inst, temperature=temperature, not_applicable=reason)
        model = ReferenceModel(ir, inst, **kw)
        drive = line_drive(model, jsign * j * cross)
        drives = {n: (Pulse(0.0, v, DELAY, RISE, fall, width) if v else Dc(0.0)) for n, v in drive.items()}
        mz_end = rest_mz(ir, final, temperature, inst)
        metrics = [
            Metric("switching time", "s", switching_time("mz", DELAY, int(final)), 1e-2, 0.0, WHY_TSW),
            Metric("final m_z", "1", settled_value("mz", period), 0.0, 0.02, WHY_FINAL,
                   expect=(mz_end, 0.5 * abs(mz_end))),
        ]
        bench = Bench(name, f"{title} ({jsign * j / 1e10:+.4g} MA/cm^2 along +x, w1 {drive['w1']:+.3f} V, "
                      f"w2 {drive['w2']:+.3f} V; fall {fall * 1e9:.3g} ns): final m_z = -sign(J theta_sh hx) = {final:+g}",
                      "tran", drives, metrics, instance=inst, t_stop=t_stop, t_step=1e-11, max_step=tmax, plot=plot,
                      temperature=temperature)
        # the end state rule is a macrospin tendency, not a law: where the reference itself rings back
        # into the old well, say so and compare the engines without asserting the rule
        from compactgen.harness.verify import reference_trace

        bench.cached_reference = tr = reference_trace(ir, bench)
        if fall < 0.99 * FALL_TAUS * figs_t["tau_prec"]:
            # an edge the layer cannot follow: where it lands after the pulse depends on the phase of its
            # precession when the current ends, so integrators that agree to 1e-4 may part there
            bench.metrics = [metrics[0]]
            bench.finding = (f"the trailing edge ({fall * 1e9:.3g} ns) is shorter than {FALL_TAUS:g} relaxation times "
                             f"({figs_t['tau_prec'] * 1e9:.3g} ns each; step budget): the end state after the pulse "
                             "depends on the precession's phase at the edge and is not compared")
            if not np.isfinite(metrics[0].func(tr)):
                return Bench(name, title, "tran", {}, [], instance=inst, temperature=temperature, not_applicable=(
                    f"the free layer does not cross m_z = 0 toward {final:+g} in the reference at {k:g} x J_c"))
        elif not np.isfinite(switching_time("mz", DELAY, int(final))(tr)):
            bench.metrics = [metrics[1]]
            bench.metrics[0].expect = None
            bench.finding = (f"the free layer does not cross m_z = 0 toward {final:+g} in the reference at {k:g} x J_c "
                             f"(hx/H_k,eff = {abs(hx_b) / figs_t['hk_eff']:.3g}, alpha = {values['alpha']:.3g}); "
                             "final state compared, not asserted")
        elif not metrics[1].meets_expectation(metrics[1].func(tr)):
            metrics[1].expect = None
            bench.finding = (f"after the pulse the free layer rings back into its old well in the reference "
                             f"(hx/H_k,eff = {abs(hx_b) / figs_t['hk_eff']:.3g}, alpha = {values['alpha']:.3g}, "
                             f"{k:g} x J_c): final state compared, not asserted")
        return bench

    # write pulses: three amplitudes, and the four signs of J * hx
    theta, hx = values["theta_sh"], values["hx"]
    cases = [(1.5, -1, 1), (2.0, -1, 1), (3.0, -1, 1), (2.0, 1, 1), (2.0, 1, -1), (2.0, -1, -1)]
    for k, jsign, hsign in cases:
        inst = {} if hsign > 0 else {"hx": -hx}
        final = float(spin_orbit.switched_state(jsign, theta, hsign * hx))
        benches.append(write(f"write_{'p' if final > 0 else 'ap'}_{k:g}jc{'_hxneg' if hsign < 0 else ''}",
                             f"write pulse {jsign * k:+g} x J_c, hx {'-' if hsign < 0 else '+'}|hx|", k, jsign, inst))
    # temperature: Ms(T), K(T) and TMR(T) move the threshold and the switching time; 2 x J_c(T)
    for t_c in BENCH_TEMPERATURES_C:
        t_k = t_c + ZERO_CELSIUS
        tag = f"{t_c:+.0f}C".replace("+", "p").replace("-", "m")
        benches.append(write(f"temp_write_2jc_{tag}", f"write pulse -2 x J_c(T) at {t_c:g} degC", 2.0, -1, {},
                             temperature=t_k, plot=("state:mz",)))
    # quasi-static threshold: a ramp slow against the relaxation time, to 1.5 J_c
    final = -1.0
    jsign = final * float(spin_orbit.switched_state(1, theta, hx))  # the current sign that writes m_z = final
    ramp = float(np.clip(RAMP_TAUS * tau_r, RAMP, min(200e-9, 0.98 * POINT_BUDGET * tmax)))
    slow = ramp >= RAMP_TAUS * tau_r  # slow enough for the exact-threshold expectation
    title = (f"quasi-static threshold: current ramped 0 -> 1.5 J_c in {ramp * 1e9:.3g} ns ({ramp / tau_r:.0f} relaxation "
             f"times); J at m_z = 0 against the exact torque balance J_c = {jc:.4g} A/m^2")
    inst = {"state0": -final}
    if 1.5 * jc > values["j_max"]:
        benches.append(Bench("threshold_ramp", title, "tran", {}, [], instance=inst, not_applicable=(
            f"1.5 x J_c = {1.5 * jc / 1e10:.4g} MA/cm^2 is beyond the calibrated limit j_max = "
            f"{values['j_max'] / 1e10:.4g} MA/cm^2")))
    elif ramp / tmax > POINT_BUDGET:
        benches.append(Bench("threshold_ramp", title, "tran", {}, [], instance=inst, not_applicable=(
            f"{ramp * 1e9:.3g} ns at a step cap of {tmax * 1e12:.3g} ps is more than {POINT_BUDGET} time steps")))
    else:
        model = ReferenceModel(ir, inst)
        drive = line_drive(model, jsign * 1.5 * jc * cross)
        drives = {n: (Pwl(((0.0, 0.0), (ramp, v))) if v else Dc(0.0)) for n, v in drive.items()}
        exact = (values["xi_sot"] == 0 and values["hy"] == 0 and values["hz"] == 0) and slow
        bench = Bench(
            "threshold_ramp", title, "tran", drives,
            [Metric("switching current density", "A/m^2",
                    current_at_crossing("mz", 0.0, int(final), "w1", jsign / cross), 5e-3 if slow else 1e-2, 0.0,
                    (WHY_JSW if slow else WHY_JSW_FAST) + ("; " + WHY_JSW_EXPECT if exact else ""),
                    expect=(jc, 0.05 * jc) if exact else None)],
            instance=inst, t_stop=ramp, t_step=1e-11, max_step=tmax, plot=("state:mz", "current:w1"))
        from compactgen.harness.verify import reference_trace

        bench.cached_reference = tr = reference_trace(ir, bench)
        if not np.isfinite(bench.metrics[0].func(tr)):
            bench = Bench("threshold_ramp", title, "tran", {}, [], instance=inst, not_applicable=(
                f"the free layer does not switch on a {ramp * 1e9:.3g} ns ramp to 1.5 x J_c in the reference "
                f"({ramp / tau_r:.0f} relaxation times; the step budget allows no slower ramp)"))
        elif not slow:
            bench.finding = (f"the ramp lasts only {ramp / tau_r:.0f} relaxation times (step budget): it lags the "
                             "quasi-static threshold, so the exact threshold is not asserted")
        benches.append(bench)
    return benches
