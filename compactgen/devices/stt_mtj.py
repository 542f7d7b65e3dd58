"""Two-terminal perpendicular MTJ switched by spin-transfer torque.

Ports ``t b``: t is the top (free-layer side) electrode, b the bottom (reference-layer side).
The reference layer points along +z, so m_z = +1 is the parallel (low-resistance) state.
Positive conventional current from t to b means electrons flow from the reference layer into
the free layer, whose damping-like torque pulls m toward +z: positive current writes P.
"""
from __future__ import annotations

import sympy as sp

from ..ir import Branch, Figure, ModelIR, Output, Terminal
from ..physics import geometry, macrospin, switching, torques
from ..physics.constants import const_values
from .base import DeviceKind, Option, register
from .common import (Parts, cylinder_nz, free_layer, free_layer_specs, limit_specs, macrospin_states,
                     mtj_conductance, mtj_read_specs, orientation_specs)
from ..params import ParamSpec


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
        return free_layer_specs() + mtj_read_specs() + stt + limit_specs() + orientation_specs()

    def derive_defaults(self, values, options, given=frozenset()):
        out = dict(values)
        if "demag_nz" not in given:
            out["demag_nz"] = cylinder_nz(values, options.get("demag", "cylinder"))
        return out

    def build_ir(self, name, values, options) -> ModelIR:
        table = self.table_with(values)
        P = table.symbols()
        parts = Parts(P)
        area = parts.d("area_fl", geometry.disk_area(P["diameter"]), positive=True)
        fl = free_layer(parts, area)
        v = sp.Symbol("v_tb", real=True)
        mz_sym = sp.Symbol("mz", real=True)
        g = mtj_conductance(parts, area, v, mz_sym)  # p = +z, so cos(theta) = m_z
        i_tb = parts.loc("i_tb", v * g)
        j = parts.loc("j_tb", i_tb / area)
        h_dl = parts.loc("h_dl", torques.spin_torque_field(j, P["eta"], P["ms"], P["t_free"]))
        h_fl = parts.loc("h_fl", P["xi_fl"] * h_dl)
        _, states = macrospin_states(parts, fl, h_dl, h_fl, (0, 0, 1))
        # key figures (parameter-only)
        r_p = P["ra"] / area
        i_c0 = switching.stt_critical_current(P["alpha"], P["eta"], P["ms"], fl["vol"], fl["hk_eff"])
        figures = [
            Figure("r_p", r_p, "ohm", "resistance, parallel state, zero bias"),
            Figure("r_ap", r_p * (1 + P["tmr0"]), "ohm", "resistance, antiparallel state, zero bias"),
            Figure("hk_eff", fl["hk_eff"], "A/m", "effective anisotropy field"),
            Figure("delta", fl["delta_nom"], "1", "thermal stability factor E_b/(k_B tnom)"),
            Figure("i_c0", i_c0, "A", "zero-temperature STT critical current",
                   "J. Z. Sun, Phys. Rev. B 62, 570 (2000)"),
            Figure("j_c0", i_c0 / area, "A/m^2", "critical current density"),
            Figure("tau_prec", switching.precession_time_scale(P["alpha"], fl["hk_eff"]), "s",
                   "precessional time scale (1+alpha^2)/(alpha gamma0 H_k,eff)"),
            Figure("f_fmr", macrospin.kittel_frequency(P["hz"], fl["hk"], P["ms"], (fl["nx"], fl["nx"], P["demag_nz"])),
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
            limits={"v_max": v, "j_max": j},
        )
        ir.validate()
        return ir

    def benches(self, ir, values):
        from ..benches import stt_benches

        return stt_benches(ir, values)
