"""Three-terminal domain-wall MTJ: one wall in a perpendicular track on a heavy-metal line,
read by a tunnel junction that covers part of the track (an analog, multi-level device).

Ports ``w1 w2 t`` (devices/write_line.py).  The track runs along +x from w1 (x = 0) to w2
(x = track_length); the junction covers [mtj_start, mtj_start + mtj_length] and its bottom is
the line at the junction's centre (internal node ``mid``).  The wall is an up -> down wall
(Q = +1): the track is +z (parallel to the reference layer) for x < q and -z beyond, so moving
the wall towards w2 lowers the read resistance.

Dynamics: the 1D collective-coordinate model (q, phi) of physics/domain_wall.py with the spin
Hall damping-like and field-like torques of the current at the wall, interfacial DMI, wall shape
anisotropy, external fields, a smooth periodic pinning landscape (depinning field h_dep, pitch
pin_pitch) and smooth barriers that keep the wall inside the track.  Read-out: the junction's
conductance is the mean of parallel slices over the wall profile (PHYSICS 6.5).
"""
from __future__ import annotations

import dataclasses

import sympy as sp

from compactgen.model.ir import Branch, Constraint, Figure, ModelIR, Output, State
from compactgen.model.params import ParamSpec
from compactgen.physics import anisotropy, domain_wall, heavy_metal, temperature, torques, tunnelling
from compactgen.physics.constants import const_values, gamma0, mu0
from compactgen.model.variation import apply_variation, variation_specs
from compactgen.devices.base import DeviceKind, register
from compactgen.devices.common import NM, Parts, device_temperature, free_layer_specs, limit_specs, mtj_conductance, mtj_read_specs
from compactgen.errors import RangeError
from compactgen.devices.sot_mtj import MT
#: longest transient a bench may need, in step caps (the stt-mtj budget: one card's verify within a minute)
from compactgen.devices.stt_mtj import POINT_BUDGET
from compactgen.devices.write_line import CONVENTIONS, READ_PORT_LABEL, WHY_DC, heavy_metal_specs, line_current_density, line_resistance_bench, three_terminal

#: edge barriers: centre this many wall widths inside each track end, decay length one wall width
EDGE_INSET = 3
#: the track must be at least this many wall widths long
MIN_TRACK_WIDTHS = 10


#: process variation (devices/variation.py): name, direction of the slow corner, global sigma,
#: mismatch sigma at area_ref -- illustrative defaults, no source
VARIED = (("ra", +1, 0.03, 0.015), ("tmr0", -1, 0.03, 0.015), ("theta_sh", -1, 0.05, 0.02),
          ("h_dep", +1, 0.1, 0.05), ("rho_hm", +1, 0.03, 0.01))

#: starter-card values of a track (illustrative, no source): a well-damped Pt/Co-like wall that settles
#: within its 500 nm track, so every bench of `compactgen init dw-mtj` applies (the shared free-layer
#: defaults describe a low-damping CoFeB pillar, whose wall would need microns to settle)
STARTER = {"alpha": 0.25, "t_free": 0.9 * NM, "ms": 0.95e6, "ki": 0.9e-3, "dmi": 0.8e-3, "a_ex": 12e-12,
           "track_width": 60 * NM, "mtj_start": 150 * NM, "mtj_length": 200 * NM, "h_dep": 10 * MT,
           "pin_pitch": 25 * NM, "theta_sh": 0.12, "rho_hm": 40e-8, "t_hm": 4 * NM, "ra": 20e-12, "v_max": 0.5}


@register
class DwMtj(DeviceKind):
    key = "dw-mtj"
    title = "Three-terminal domain-wall MTJ (spin-orbit-torque driven wall, multi-level read-out)"
    summary = ("1D (q, phi) domain wall with spin Hall torque, DMI, pinning and edge barriers in a perpendicular "
               "track on a heavy-metal line; junction read-out integrated over the wall profile")

    def param_specs(self) -> list[ParamSpec]:
        keep = {"t_free": "ferromagnet (track) thickness", "ms": "saturation magnetisation of the track",
                "ki": "interface anisotropy energy density of the track",
                "kv": "bulk uniaxial anisotropy energy density of the track (perpendicular > 0)",
                "alpha": "Gilbert damping of the track", "hx": None, "hy": None,
                "hz": "external field along z (perpendicular; +z grows the domain between w1 and the wall)",
                "tnom": "temperature at which the card values hold", "t_curie": None, "aniso_exp": None,
                "dtemp": None}
        track = [dataclasses.replace(s, desc=keep[s.name] or s.desc,
                                     group=s.group if s.group in ("fields", "temperature") else "track")
                 for s in free_layer_specs() if s.name in keep]
        g = "track"
        geo = [
            ParamSpec("track_length", "m", 500 * NM, 20 * NM, 100e-6, "track length between the ports w1 and w2",
                      card_unit="nm", required=True, group=g),
            ParamSpec("track_width", "m", 50 * NM, 5 * NM, 100e-6, "track (and junction) width", card_unit="nm",
                      required=True, group=g),
            ParamSpec("a_ex", "J/m", 15e-12, 1e-13, 1e-10, "exchange stiffness of the ferromagnet",
                      source="Co-based films 10-20 pJ/m: from memory, no source", card_unit="pJ/m", group=g),
            ParamSpec("dmi", "J/m^2", 1e-3, -1e-2, 1e-2,
                      "interfacial DMI constant D (energy density D (m_z dm_x/dx - m_x dm_z/dx); D > 0: "
                      "left-handed Neel walls, phi = pi for an up -> down wall, as in Pt/Co-type stacks with Pt below)",
                      source="Pt/Co/AlOx ~1.4-2.8 mJ/m^2, Pt/CoFe/MgO ~0.5 mJ/m^2, both left-handed, so D > 0 here "
                             "(magnitudes from memory; left-handed: S. Emori et al., Nat. Mater. 12, 611 (2013), "
                             "M. Belmeguenai et al., arXiv:1503.00372 (abstract seen; journal reference PRB 91, 180405 (2015) "
                             "from memory), who write D_s < 0 in their own sign convention)",
                      card_unit="mJ/m^2", required=True, group=g),
        ]
        mtj = [
            ParamSpec("mtj_start", "m", 200 * NM, 0.0, 100e-6, "position of the junction's w1-side edge along the track",
                      card_unit="nm", required=True, group="tunnel junction"),
            ParamSpec("mtj_length", "m", 100 * NM, 5 * NM, 100e-6, "junction length along the track",
                      card_unit="nm", required=True, group="tunnel junction"),
        ]
        pin = [
            ParamSpec("h_dep", "A/m", 5 * MT, 0.0, 1e6,
                      "depinning field: the largest restoring field of the periodic pinning landscape "
                      "(instance: it varies from device to device)",
                      kind="instance", card_unit="mT", group="pinning"),
            ParamSpec("pin_pitch", "m", 20 * NM, 1 * NM, 10e-6, "distance between pinning sites (stable wall positions)",
                      card_unit="nm", group="pinning"),
        ]
        inst = [
            ParamSpec("wall0", "m", 0.0, 0.0, 100e-6,
                      "initial wall position from w1; 0 = at the junction's w1-side edge (mtj_start)",
                      kind="instance", card_unit="nm", group="instance"),
        ]
        fields = [s for s in track if s.group == "fields"]
        track = [s for s in track if s.group != "fields"]
        specs = (track + geo + fields + mtj_read_specs() + mtj + heavy_metal_specs() + pin
                 + limit_specs(v_max=1.0, j_max=5e12) + inst + variation_specs(VARIED))
        return [dataclasses.replace(s, default=STARTER[s.name]) if s.name in STARTER else s for s in specs]

    def build_ir(self, name, values, options) -> ModelIR:
        table = self.table_with(values)
        P = table.symbols()
        parts = Parts(P)
        apply_variation(parts, VARIED, P["mtj_length"] * P["track_width"])
        L, w = P["track_length"], P["track_width"]
        # perpendicular track, thin-film demagnetisation (N_z = 1)
        ku = parts.d("ku", anisotropy.uniaxial_energy_density(P["kv"], P["ki"], P["t_free"]))
        hk = parts.d("hk", anisotropy.anisotropy_field(ku, P["ms"]))
        hk_eff = parts.d("hk_eff", anisotropy.effective_anisotropy_field(hk, P["ms"], 0, 1))
        parts.constraints.append(Constraint(hk_eff, "the effective anisotropy field H_k,eff = {value} of the track "
                                            "must be positive (perpendicular track; raise ki or lower ms)",
                                            "A/m", "kA/m"))
        keff = parts.d("keff", anisotropy.effective_energy_density(hk_eff, P["ms"]))
        tsc = parts.d("tsc", 1 / (gamma0 * hk_eff))  # at tnom: time scales may not depend on temperature
        # at the device temperature T = simulator temperature + dtemp: Ms(T) (Bloch) and K(T)
        # (Callen-Callen) as for the free layer of the MTJ kinds; the exchange stiffness a_ex is
        # kept at its card value.  From here on P["ms"] is Ms(T).
        temp = device_temperature(parts)
        ms_ratio = parts.d("ms_ratio", temperature.magnetisation_ratio(temp, P["tnom"], P["t_curie"]), positive=True)
        ms_nom = P["ms"]
        P["ms"] = parts.d("ms_t", ms_nom * ms_ratio, positive=True)
        ku_t = parts.d("ku_t", temperature.callen_callen(ku, ms_ratio, P["aniso_exp"]))
        hk_eff_t = parts.d("hk_eff_t", anisotropy.effective_anisotropy_field(
            anisotropy.anisotropy_field(ku_t, P["ms"]), P["ms"], 0, 1))
        keff_t = parts.d("keff_t", anisotropy.effective_energy_density(hk_eff_t, P["ms"]))
        parts.nominal.update({P["ms"]: ms_nom, ku_t: ku, hk_eff_t: hk_eff, keff_t: keff})
        dw = parts.d("wall_width", domain_wall.wall_width(P["a_ex"], keff_t), positive=True)
        h_kw = parts.d("h_kwall", domain_wall.wall_anisotropy_field(domain_wall.wall_demag_factor(P["t_free"], dw),
                                                                    P["ms"]))
        h_d = parts.d("h_dmi", domain_wall.dmi_field(P["dmi"], P["ms"], dw))
        wall = domain_wall.wall_width(P["a_ex"], keff)
        parts.constraints += [
            Constraint(L - MIN_TRACK_WIDTHS * wall, f"{{track_length}} must exceed {MIN_TRACK_WIDTHS} wall widths "
                       "Delta = sqrt(a_ex/K_eff) = {wall} (the wall is too wide for the track; lower a_ex or raise the "
                       "anisotropy)", "m", "nm", shown=(("wall", wall),)),
            Constraint(L - P["mtj_length"],
                       "the track ({track_length}) must be longer than the junction ({mtj_length})"),
            Constraint(L - P["mtj_start"] - P["mtj_length"] + sp.Rational(1, 10**15),
                       "the junction ({mtj_start} + {mtj_length}) must lie inside the track ({track_length})"),
            Constraint(L - P["wall0"] + sp.Rational(1, 10**15),
                       "{wall0} must lie inside the track (at most {track_length})"),
        ]
        # write line split at the junction centre
        x_tap = parts.d("x_tap", P["mtj_start"] + P["mtj_length"] / 2)
        cell = three_terminal(parts, heavy_metal.line_resistance(P["rho_hm"], x_tap, w, P["t_hm"]),
                              heavy_metal.line_resistance(P["rho_hm"], L - x_tap, w, P["t_hm"]))
        # states: wall position as a fraction of the track (1 V = whole track) and wall angle
        xw = sp.Symbol("xw", real=True)
        phi = sp.Symbol("phi", real=True)
        q = L * xw
        mz_avg = parts.loc("mz_mtj", tunnelling.sharp_wall_fraction(q - P["mtj_start"], P["mtj_length"], dw))
        area = parts.d("area_mtj", P["mtj_length"] * w, positive=True)
        g = mtj_conductance(parts, area, cell["v_tm"], mz_avg)
        i_tm = parts.loc("i_tm", cell["v_tm"] * g)
        i_wall = heavy_metal.current_at_position(q, x_tap, cell["i_w1"], cell["i_w2"], dw)
        j = line_current_density(parts, "j_wall", i_wall, w)
        j_peak = parts.loc("j_peak", sp.Max(sp.Abs(cell["i_w1"]), sp.Abs(cell["i_w2"])) / (w * P["t_hm"]))
        h_sh = parts.loc("h_sh", torques.spin_torque_field(j, P["theta_sh"], P["ms"], P["t_free"]))
        # pinning landscape and edge barriers (energies; the field is their derivative)
        h_edge = parts.d("h_edge", 2 * (sp.pi / 2 * sp.Abs(torques.spin_torque_field(P["j_max"], P["theta_sh"], P["ms"],
                                                                                      P["t_free"]))
                                        + P["h_dep"] + sp.Abs(P["hz"])))
        qs = sp.Symbol("q_wall", real=True)
        energy = (domain_wall.periodic_pinning_energy(qs, P["ms"], P["h_dep"], P["pin_pitch"])
                  + domain_wall.edge_barrier_energy(qs, P["ms"], h_edge, EDGE_INSET * dw, L - EDGE_INSET * dw, dw))
        h_pin = parts.loc("h_pin", domain_wall.pinning_field(energy, qs, P["ms"]).xreplace({qs: q}))
        a, b = domain_wall.drive_terms(phi, P["hz"], h_sh, h_pin, h_kw, h_d, P["hx"], P["hy"], P["xi_sot"] * h_sh)
        a = parts.loc("drive_a", a)
        b = parts.loc("drive_b", b)
        qdot, phidot = domain_wall.wall_rates(a, b, P["alpha"], dw)
        wall0 = parts.d("wall0_eff", sp.Piecewise((P["mtj_start"], P["wall0"] <= 0), (P["wall0"], True)))
        phi0 = parts.d("phi0", domain_wall.rest_angle(h_kw, h_d, P["hx"]))
        states = [
            State("xw", xw, qdot / L, wall0 / L, "wall position q / track_length (0 at w1, 1 at w2)"),
            State("phi", phi, phidot, phi0, "wall angle phi [rad] (0: wall moment along +x)", unit="rad"),
        ]
        r_p = P["ra"] / area
        r_line = heavy_metal.line_resistance(P["rho_hm"], L, w, P["t_hm"])
        figures = [
            Figure("r_line", r_line, "ohm", "track (heavy-metal line) resistance between w1 and w2"),
            Figure("r_p", r_p, "ohm", "junction resistance, parallel state (wall beyond the junction on the w2 side)"),
            Figure("r_ap", r_p * (1 + P["tmr0"]), "ohm", "junction resistance, antiparallel state"),
            Figure("wall_width", dw, "m", "wall-width parameter sqrt(A/K_eff)"),
            Figure("h_dmi", h_d, "A/m", "DMI field D/(mu0 Ms Delta)",
                   "A. Thiaville et al., EPL 100, 57002 (2012)"),
            Figure("h_kwall", h_kw, "A/m", "wall shape-anisotropy field N_x Ms"),
            Figure("phi_wall_rest", phi0, "rad", "wall angle at rest"),
            Figure("v_dmi", domain_wall.dmi_saturation_velocity(P["dmi"], P["ms"]), "m/s",
                   "DMI saturation velocity (pi/2) gamma_e D/Ms", "A. Thiaville et al., EPL 100, 57002 (2012)"),
            Figure("j_half", domain_wall.half_saturation_current_density(P["alpha"], h_d, P["theta_sh"], P["ms"],
                                                                         P["t_free"]),
                   "A/m^2", "current density at which the SOT speed reaches v_D/sqrt(2) (H_K neglected)"),
            Figure("j_dep", sp.Abs(domain_wall.depinning_current_density(P["h_dep"], P["theta_sh"], P["ms"],
                                                                         P["t_free"])),
                   "A/m^2", "depinning current density of a Neel wall (rigid wall)"),
            Figure("h_walker", domain_wall.walker_field(P["alpha"], h_kw, h_d, P["hx"]), "A/m",
                   "Walker field of this model: the largest |hz| with a steady wall (DMI, wall anisotropy and hx "
                   "included, hy = 0, no current); exact maximum of the 1D restoring torque",
                   "A. Thiaville et al., EPL 100, 57002 (2012) for the model; the exact maximum derived here from it"),
            Figure("h_walker_dmi_limit", domain_wall.walker_field_dmi_limit(P["alpha"], h_d), "A/m",
                   "comparison only: large-DMI approximation (pi/2) alpha H_D (H_K and hx neglected)",
                   "A. Thiaville et al., EPL 100, 57002 (2012)"),
            Figure("h_walker_no_dmi", domain_wall.walker_field_no_dmi(P["alpha"], h_kw), "A/m",
                   "comparison only: Walker field the track would have without DMI, alpha H_K/2",
                   "N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974)"),
            Figure("levels", P["mtj_length"] / P["pin_pitch"], "1", "pinning sites under the junction"),
            Figure("tau_wall", _rest_relaxation_time(P["alpha"], h_kw, h_d, P["hx"], phi0), "s",
                   "wall-angle relaxation time at rest (1 + alpha^2)/(alpha gamma0 |b'(phi0)|): H_K, H_D and hx, "
                   "hy = 0, no current; the benches' settling times follow from it and its driven counterparts",
                   "A. Thiaville et al., EPL 100, 57002 (2012) for the 1D model; its linearisation derived here"),
        ]
        ir = ModelIR(
            name=name, kind=self.key, title=self.title,
            terminals=cell["terminals"], params=table, constants=const_values(), derived=parts.derived,
            voltages=cell["voltages"], temperature=sp.Symbol("temp_k", positive=True), locals=parts.locals,
            states=states, time_scale=tsc,
            branches=cell["branches"] + [Branch("t", "mid", i_tm, "tunnelling current, conventional, t to mid")],
            outputs=[Output("res", 1 / g, "ohm", "junction resistance V/I"),
                     Output("jdens", j, "A/m^2", "current density in the heavy metal at the wall"),
                     Output("wall_pos", q, "m", "wall position from w1")],
            figures=figures,
            conventions=CONVENTIONS + [
                "One up -> down wall (Q = +1): the track is +z (parallel) between w1 and the wall and -z beyond; "
                "the wall moving towards w2 lowers the read resistance.",
                "With theta_sh > 0 (Pt below) and dmi > 0 (left-handed walls), current from w1 to w2 moves the wall "
                "towards w2 (along the current); the direction reverses with the sign of theta_sh * dmi (beta-Ta or "
                "beta-W below: against the current).",
                "Positive hz moves the wall towards w2 (it grows the +z domain).",
                "Internal node xw carries the wall position as a fraction of track_length (1 V = w2 end), phi the "
                "wall angle in radians.",
                "Smooth barriers within about 3 wall widths of each end keep the wall inside the track.",
                "Validity: rigid 1D wall narrower than the track width (no tilt, no Bloch lines), no thermal creep; "
                "the pinning landscape is an idealised periodic one (fit h_dep and pin_pitch to your devices).",
            ],
            constraints=parts.constraints,
            limits={"v_max": cell["v_tm"], "j_max": j_peak},
            nodes=cell["nodes"],
        )
        ir.validate()
        return ir

    def benches(self, ir, values):
        return dw_benches(ir, values)


def _rest_relaxation_time(alpha, h_k, h_d, h_x, phi0):
    """physics/domain_wall.angle_relaxation_time about the rest angle, without current or H_z."""
    phi = sp.Symbol("phi", real=True)
    a, b = domain_wall.drive_terms(phi, 0, 0, 0, h_k, h_d, h_x, 0, 0)
    return domain_wall.angle_relaxation_time(a, b, alpha, phi).xreplace({phi: phi0})


# ---- benches ---------------------------------------------------------------------------------
# Every bench follows from the card: its drive (a multiple of J_1/2, of the static depinning current
# density or of the Walker field), its settling time (the wall angle's own flow to its steady angle),
# its step cap (the fastest time constant of the linearised wall motion), the track it needs and its
# pulse widths (the travel time over the pinning pitch and the junction).  A bench the device cannot
# run -- a drive beyond the calibrated limits, a track too short, more than POINT_BUDGET time steps,
# no pinning site under the junction -- comes back not applicable with the measured reason.
WHY_SLICES = WHY_DC + ("; every run must match the junction conductance integrated slice by slice over the wall "
                       "profile by quadrature to 1e-6")
WHY_V = ("wall speed from the slope of q(t) over a window after the wall angle has settled; trapezoidal steps of at "
         "most 1/100 of the wall's fastest time constant keep the position error far below 0.2 % of the distance "
         "travelled")
WHY_V_EXPECT = ("; every run must meet the steady state of the 1D model (root of dphi/dt = 0, H_K included) within "
                "0.5 % (the window starts where the reference is within 1e-4 of it)")
WHY_V_TEMP = ("; every run must meet the steady state of the 1D model at this temperature (Ms(T) and K(T) in the "
              "wall width, the DMI and wall-anisotropy fields and the torque; root of dphi/dt = 0) within 0.5 %, "
              "which fixes the direction of motion too")
WHY_VW_EXPECT = ("; every run must meet Schryer & Walker's closed form (no DMI, no pinning) within 0.5 %")
WHY_VWD_EXPECT = ("; every run must meet the exact 1D result within 0.5 %: gamma0 Delta hz/alpha below the Walker "
                  "field, (Delta/alpha)(gamma0 hz - 2 pi/T) above it with the period T by quadrature")
WHY_PIN = ("the wall sits in a pinning well and relaxes back; positions agree to far better than 1 % of the pinning "
           "pitch")
WHY_HOLD_EXPECT = ("; every run must stay below 0.3 pitch (the static displacement at 0.8 x the threshold is "
                   "asin(0.8)/(2 pi) = 0.15 pitch) and return to the well within 1 % of the pitch")
WHY_LEVEL = ("the wall ends each step in a pinning minimum, so the read resistance depends on which well it reached, "
             "not on integration error; 0.1 %; every read must lie between R_P and R_AP (1 % margin)")
WHY_END = "the wall rests against the smooth edge barrier; 0.1 % of its position"
WHY_END_EXPECT = ("; every run must end at the rest position the static landscape (periodic pinning + edge barrier, "
                  "no current) gives below the point where the barrier stopped the driven wall, within 5 % of the "
                  "pitch")

PULSE_RISE = 0.05e-9
READ_BIAS = 0.05
#: step cap = the fastest time constant of the linearised wall motion / STEPS_PER_TAU, coarsened up to
#: / MIN_STEPS_PER_TAU where the time-step budget demands it (trapezoidal steps of a tenth of a time
#: constant still follow a decaying or ringing mode to about 1e-4 per step)
STEPS_PER_TAU = 100
MIN_STEPS_PER_TAU = 10
#: the steady speed counts as reached when the reference stays within this fraction of it
SETTLE_REL = 1e-4
#: margin on the settling time computed from the angle's flow (the flow is exact once the drive is on;
#: the reference probe checks the rest)
SETTLE_MARGIN = 1.1
#: the edge barriers count as absent where their field is below this fraction of the drive (moving
#: walls) or of h_dep (pinned walls)
EDGE_CLEAR = 1e-6
EDGE_CLEAR_PIN = 1e-4


def _num(model, name: str) -> float:
    for k, v in model.num.items():
        if str(k) == name:
            return float(v)
    raise KeyError(name)


def _ma(j: float) -> str:
    return f"{abs(j) / 1e10:.4g} MA/cm^2"


def _mt(h: float) -> str:
    import numpy as np

    return f"{h * 4e-4 * np.pi:.4g} mT"


def _t(t: float) -> str:
    return f"{t * 1e9:.4g} ns" if t >= 1e-10 or t == 0 else f"{t * 1e12:.4g} ps"


def _x(x: float) -> str:
    return f"{x * 1e9:.4g} nm" if x < 1e-5 else f"{x * 1e6:.4g} um"


class _Wall:
    """The 1D drive terms of physics/domain_wall.py with a reference model's numbers (its temperature
    and instance), no pinning, as numpy functions of the wall angle phi and the current density j in
    the heavy metal: the equations the model composes, solved algebraically."""

    def __init__(self, model):
        import numpy as np

        phi, h_sh = sp.symbols("phi h_sh", real=True)
        g = lambda n: _num(model, n)  # noqa: E731
        num = model.num
        self.h_per_j = float(sp.sympify(torques.spin_torque_field(1.0, g("theta_sh"), g("ms_t"), g("t_free")))
                             .xreplace(num))
        self.hz = g("hz")
        self.alpha = g("alpha")
        self.gamma0 = float(gamma0.xreplace(num))
        a, b = domain_wall.drive_terms(phi, self.hz, h_sh, 0.0, g("h_kwall"), g("h_dmi"), g("hx"), g("hy"),
                                       g("xi_sot") * h_sh)
        qdot, phidot = domain_wall.wall_rates(a, b, self.alpha, g("wall_width"))
        tau = domain_wall.angle_relaxation_time(a, b, self.alpha, phi)

        def f(e):
            fn = sp.lambdify((phi, h_sh), sp.sympify(e).xreplace(num), "numpy")
            return lambda x, h: np.asarray(fn(x, h), dtype=float) + 0.0 * np.asarray(x, dtype=float)

        self._qdot, self._phidot, self._tau = f(qdot), f(phidot), f(tau)
        self._dqdot = f(sp.diff(qdot, phi))
        self._drive = f(a / gamma0)  # the field along z that pushes the wall [A/m]
        self._torque = f(-b)  # a held wall's angle flows along -B

    def at(self, j: float):
        """The functions of phi at current density ``j``."""
        from types import SimpleNamespace

        h = j * self.h_per_j
        return SimpleNamespace(h_sh=h, qdot=lambda x: self._qdot(x, h), phidot=lambda x: self._phidot(x, h),
                               tau=lambda x: self._tau(x, h), dqdot=lambda x: self._dqdot(x, h),
                               drive=lambda x: self._drive(x, h), torque=lambda x: self._torque(x, h))


def _flow_root(f, start: float, n: int = 4096):
    """Where the angle comes to rest under dphi/dt ~ f(phi) started at ``start``: the first zero of f in
    the direction f(start) points (a stable root), or None if f keeps its sign over a whole turn (the
    angle precesses)."""
    import numpy as np
    from scipy.optimize import brentq

    f0 = float(f(start))
    if f0 == 0.0:
        return float(start)
    if not np.isfinite(f0):
        return None
    grid = start + np.sign(f0) * np.linspace(0.0, 2 * np.pi, n + 1)
    vals = f(grid)
    idx = np.flatnonzero(np.sign(vals[1:]) != np.sign(f0))
    if idx.size == 0:
        return None
    a, b = sorted((grid[idx[0]], grid[idx[0] + 1]))
    return float(brentq(lambda x: float(f(x)), a, b, xtol=1e-15, rtol=1e-15))


def steady_state(model, j: float, phi_start: float, wall: _Wall | None = None):
    """Steady wall motion of the 1D model without pinning at current density ``j`` (the model's field,
    temperature and instance): the angle the flow dphi/dt reaches from ``phi_start`` (root of
    dphi/dt = 0), the speed there, the angle's relaxation time there
    (physics/domain_wall.angle_relaxation_time).  None if the angle precesses (no steady state)."""
    from types import SimpleNamespace

    w = (wall or _Wall(model)).at(j)
    root = _flow_root(w.phidot, phi_start)
    if root is None:
        return None
    return SimpleNamespace(phi=root, v=float(w.qdot(root)), tau=float(w.tau(root)), w=w)


def steady_sot_velocity(model, j: float, values: dict, phi_guess: float) -> float:
    """Steady wall speed of the 1D model without pinning: the stable root of dphi/dt = 0 reached from
    ``phi_guess``, then dq/dt = Delta (B + alpha A)/(1 + alpha^2) (physics/domain_wall.py, same
    equations, solved algebraically instead of integrated; ``values`` is kept for callers, the numbers
    come from the model)."""
    st = steady_state(model, j, phi_guess)
    if st is None:
        raise ValueError("no steady wall angle: the angle precesses at this drive")
    return st.v


def _settling(st, phi0: float, v: float, rise: float):
    """How the wall reaches its steady speed from rest, from the angle's own flow (the drive switched
    on over ``rise``, then dphi/dt a function of phi alone): the time the angle takes from phi0 to
    within delta of its steady angle, dt = dphi/(dphi/dt), delta such that the speed is then within
    SETTLE_REL of v; the distance the wall runs ahead and falls behind its start on the way,
    dq = (dq/dt)/(dphi/dt) dphi (both by quadrature); and the fastest angle time constant."""
    from types import SimpleNamespace

    import numpy as np
    from scipy.integrate import quad

    w = st.w
    gap = st.phi - phi0
    path = np.linspace(phi0, st.phi, 401)
    tau_min = float(min(np.min(w.tau(path)), st.tau))
    slope = abs(float(w.dqdot(st.phi)))
    delta = abs(gap) if slope == 0 else min(SETTLE_REL * abs(v) / slope, abs(gap))
    # while the drive ramps up the wall moves no faster than it does along the path at full drive
    along_v = np.sign(v) * w.qdot(path)
    out = SimpleNamespace(t=rise, tau_min=tau_min, ahead=max(0.0, float(along_v.max())) * rise,
                          behind=max(0.0, -float(along_v.min())) * rise)
    if delta >= abs(gap):
        return out
    end = st.phi - np.sign(gap) * delta
    # cumulative time and displacement along the path, finer near the steady angle (a log-like tail)
    u = 1.0 - np.geomspace(1.0, delta / abs(gap), 120)
    u[0] = 0.0
    nodes = phi0 + (end - phi0) * np.concatenate([u, [1.0]])
    t, q, qs = 0.0, 0.0, [0.0]
    for a, b in zip(nodes[:-1], nodes[1:]):
        if b == a:
            continue
        t += quad(lambda x: 1.0 / float(w.phidot(x)), a, b, limit=200)[0]
        q += quad(lambda x: float(w.qdot(x)) / float(w.phidot(x)), a, b, limit=200)[0]
        qs.append(q)
    along = np.sign(v) * np.array(qs)
    out.t = rise + abs(t)
    out.ahead += max(0.0, float(along.max()))
    out.behind += max(0.0, -float(along.min()))
    return out


def _edge_field(model):
    """The edge barriers' field along the track [A/m] as a function of the wall position: the
    physics/domain_wall.py landscape with the model's numbers (pinning left out)."""
    g = lambda n: _num(model, n)  # noqa: E731
    dw, L = g("wall_width"), g("track_length")
    fn = _edge_field_function()
    args = (g("ms_t"), g("h_edge"), EDGE_INSET * dw, L - EDGE_INSET * dw, dw, float(mu0.xreplace(model.num)))
    return lambda q: fn(q, *args)


_EDGE_FIELD = []


def _edge_field_function():
    """physics/domain_wall.pinning_field of edge_barrier_energy, lambdified once over its symbols."""
    if not _EDGE_FIELD:
        q, ms, h_e, lo, hi, width = sp.symbols("q ms h_e x_lo x_hi width", real=True)
        field = domain_wall.pinning_field(domain_wall.edge_barrier_energy(q, ms, h_e, lo, hi, width), q, ms)
        _EDGE_FIELD.append(sp.lambdify((q, ms, h_e, lo, hi, width, mu0), field, "numpy"))
    return _EDGE_FIELD[0]


def _interior(model, h_ref: float, clear: float):
    """The stretch of track where the edge barriers' field is below ``clear`` x ``h_ref``: (lo, hi) or None."""
    import numpy as np

    L = _num(model, "track_length")
    q = np.linspace(0.0, L, 40001)
    with np.errstate(over="ignore", invalid="ignore"):
        h = np.abs(_edge_field(model)(q))
    ok = np.flatnonzero(h <= clear * abs(h_ref))
    if ok.size < 2:
        return None
    return float(q[ok[0]]), float(q[ok[-1]])


def _rates(model, levels: dict, y, dx: float):
    """Eigenvalues [1/s] of the wall motion (position, angle) linearised about the state ``y`` under the
    port voltages ``levels``: the model's own right-hand side, differentiated numerically (``dx`` is the
    position step as a fraction of the track)."""
    import numpy as np

    y = np.asarray(y, dtype=float)
    jac = np.empty((2, 2))
    for i, h in enumerate((dx, 1e-6)):
        e = np.zeros(2)
        e[i] = h
        jac[:, i] = (model.rhs(levels, y + e) - model.rhs(levels, y - e)) / (2 * h)
    return np.linalg.eigvals(jac)


def _time_constants(eigs):
    """(fastest time constant, slowest relaxation time, angular frequency) of linear modes."""
    import numpy as np

    mag = np.abs(eigs)
    re = np.abs(eigs.real)
    decaying = re[re > 1e-9 * mag.max()]
    return 1.0 / mag.max(), (1.0 / decaying.min() if decaying.size else float("inf")), float(np.max(np.abs(eigs.imag)))


def _settled_window(tr, length, v_target, rel=SETTLE_REL, width=0.2e-9):
    """A window of the reference probe ``tr`` after which the wall speed stays within ``rel`` of the
    steady value ``v_target``; None if it does not settle before the probe ends."""
    import numpy as np

    v = np.gradient(tr.states["xw"], tr.t) * length
    bad = np.flatnonzero(~(np.abs(v / v_target - 1.0) < rel))
    if bad.size and bad[-1] >= len(v) - 2:
        return None
    t_a = tr.t[bad[-1] + 1] if bad.size else tr.t[0]
    return float(t_a), float(t_a + width)


def _cap_for(t_total: float, fast: float):
    """The step cap for a transient of ``t_total`` whose fastest time constant is ``fast``: fast/100
    when POINT_BUDGET allows it, else as coarse as the budget demands up to fast/10; None beyond."""
    cap = max(fast / STEPS_PER_TAU, t_total / POINT_BUDGET)
    return cap if cap <= fast / MIN_STEPS_PER_TAU * (1 + 1e-9) else None


def _ref_steps(fast: float) -> float:
    """The reference solver's step cap for a bench: twice the wall's fastest time constant (DOP853 is
    stable there and its error control sets the step; the simulators' trapezoidal steps need the finer
    cap)."""
    return 2.0 * fast


def _grid(t_end: float, cap: float):
    import numpy as np

    return np.linspace(0.0, t_end, int(np.clip(t_end / cap, 2000, 40000)) + 1)


class _Card:
    """What the benches of one card share: its numbers, figures and cached reference models."""

    def __init__(self, ir, values):
        from compactgen.model.evaluate import DEFAULT_TEMPERATURE, figures

        self.ir, self.values = ir, values
        self.figs = figures(ir)  # the datasheet's figures, at tnom
        self.figs_b = figures(ir, temperature=DEFAULT_TEMPERATURE)  # at the benches' 27 degC
        self.L = values["track_length"]
        self.cross = cross_section(values)
        self.j_max, self.v_max = values["j_max"], values["v_max"]
        self._models: dict = {}
        self._walls: dict = {}

    def model(self, inst: dict, temperature: float | None = None):
        """A reference model for ``inst``; models that differ only in the initial wall position share
        one compiled model (wall0 enters nothing but the initial state: the IR's wall0_eff, with
        0 meaning mtj_start)."""
        import copy

        from compactgen.harness.reference import ReferenceModel

        inst = dict(inst)
        wall0 = inst.pop("wall0", None)
        key = (tuple(sorted(inst.items())), temperature)
        if key not in self._models:
            kw = {} if temperature is None else {"temperature": temperature}
            self._models[key] = ReferenceModel(self.ir, inst, **kw)
        base = self._models[key]
        if wall0 is None:
            return base
        if not 0.0 <= wall0 <= self.L:
            raise RangeError(f"wall0 = {wall0:.6g} m lies outside the track")
        model = copy.copy(base)
        model.initial = base.initial.copy()
        model.initial[0] = (wall0 if wall0 > 0 else self.values["mtj_start"]) / self.L
        return model

    def wall(self, model) -> _Wall:
        key = id(model.num)  # shared by the models that differ only in wall0
        if key not in self._walls:
            self._walls[key] = _Wall(model)
        return self._walls[key]

    def rest_angle(self, model) -> float:
        """The wall angle at rest without current (B = 0), reached from the model's initial angle
        (the IR's phi0 leaves hy out: with hy the wall turns a little further)."""
        phi = _flow_root(self.wall(model).at(0.0).torque, float(model.initial[1]))
        return float(model.initial[1]) if phi is None else phi

    def drives(self, model, j: float, rise: float = PULSE_RISE) -> dict:
        """Line drive for current density ``j`` (no junction current), switched on over ``rise``."""
        from compactgen.harness.benches import Dc, Pulse
        from compactgen.devices.write_line import line_drive

        lv = line_drive(model, j * self.cross)
        return {n: (Pulse(0.0, v, 0.0, rise, rise, 1.0) if v else Dc(0.0)) for n, v in lv.items()}


def _sweep_limit(nominal: float, steps: int, *limits: float) -> float:
    """The end of a symmetric DC sweep of ``steps`` steps per side: ``nominal``, or below the calibrated
    ``limits`` a power-of-two multiple of ``steps`` (the sweep points are then exact binary numbers, so no
    simulator's sweep loop loses its last point to rounding; measured: VACASK dropped +0.1043 V)."""
    import math

    top = min(limits)
    if top >= nominal:
        return nominal
    return steps * 2.0 ** math.floor(math.log2(top / steps))


def _decimals(step: float) -> int:
    """Decimals that tell the points of a sweep with this step apart (2 for 0.05 V, as before)."""
    import math

    return max(2, -math.floor(math.log10(step)))


def _na(name: str, title: str, reason: str, inst=None, temperature=None):
    from compactgen.harness.benches import Bench

    return Bench(name, title, "tran", {}, [], instance=dict(inst or {}), temperature=temperature,
                 not_applicable=reason)


def _steady_bench(card: _Card, name: str, title: str, inst: dict, j: float, expect: float | None, why: str,
                  start_frac: float, temperature=None, plot=("state:xw", "state:phi")):
    """A bench that measures the steady wall speed under a constant drive (current density ``j``, or
    the instance's hz when j = 0), pinning off: settling, window, step cap and track from the card."""
    import numpy as np

    from compactgen.harness.benches import Bench, Metric, mean_rate

    L = card.L
    if abs(j) > card.j_max:
        return _na(name, title, f"J = {_ma(j)} is beyond the calibrated limit j_max = {_ma(card.j_max)}", inst,
                   temperature)
    model = card.model(inst, temperature)
    phi0 = float(model.initial[1])
    st = steady_state(model, j, phi0, card.wall(model))
    if st is None:
        return _na(name, title, "no steady wall angle at this drive: the wall angle precesses, the speed oscillates",
                   inst, temperature)
    v = st.v
    if not (np.isfinite(v) and v != 0.0):
        return _na(name, title, f"the wall does not move at this drive (steady speed {v:.3g} m/s)", inst, temperature)
    expect = v if expect is None else expect
    rise = PULSE_RISE if j else 0.0
    flow = _settling(st, phi0, v, rise)
    t_settle, tau_min = flow.t, flow.tau_min
    room = _interior(model, np.pi / 2 * abs(st.w.h_sh) + abs(_num(model, "hz")), EDGE_CLEAR)
    avail = 0.0 if room is None else room[1] - room[0]
    cap = tau_min / STEPS_PER_TAU
    for _ in range(4):  # the window and the tail grow with the cap
        window = max(50 * cap, 1e-3 * L / abs(v), min(0.2e-9, 0.1 * avail / abs(v)))
        tail = 20 * cap
        t_probe = SETTLE_MARGIN * t_settle + window + tail
        new = _cap_for(t_probe, tau_min)
        if new is None or new <= cap:
            break
        cap = new
    if new is None or t_probe / cap > POINT_BUDGET * (1 + 1e-9):
        return _na(name, title, f"the wall's steady speed {v:.4g} m/s is not reached within {POINT_BUDGET} time steps: "
                   f"the angle settles in about {_t(t_settle)} (relaxation time {_t(st.tau)} at the steady angle), "
                   f"its fastest time constant is {_t(tau_min)}", inst, temperature)
    # the wall runs ahead (and may first fall behind) while its angle settles, then at v to the end
    behind = 1.05 * flow.behind
    need = 1.05 * flow.ahead + abs(v) * (t_probe - t_settle)
    if room is not None:
        start = max(start_frac * L, room[0] + behind) if v > 0 else min((1 - start_frac) * L, room[1] - behind)
        avail = room[1] - start if v > 0 else start - room[0]
    if room is None or need > avail:
        back = f"first falls {_x(behind)} back, then " if behind > 0 else ""
        return _na(name, title, f"the track is too short: at {v:.4g} m/s the wall {back}travels about {_x(need)} while "
                   f"its angle settles ({_t(t_settle)}) and its speed is measured, but only {_x(max(avail, 0.0))} of "
                   f"the {_x(L)} track lie clear of the edge barriers ahead of it", inst, temperature)
    inst = dict(inst, wall0=start)
    model = card.model(inst, temperature)
    drives = card.drives(model, j) if j else {}
    ref_step = _ref_steps(tau_min)
    probe = model.transient(drives, t_probe, t_eval=_grid(t_probe, cap), rtol=1e-9, atol=1e-12, max_step=ref_step)
    win = _settled_window(probe, L, v, SETTLE_REL, window)
    q = probe.states["xw"] * L
    if win is None or win[1] + tail > t_probe * (1 + 1e-9):
        late = float(np.gradient(probe.states["xw"], probe.t)[-1] * L)
        return _na(name, title, f"the wall's steady speed is not reached within {_t(t_probe)}: the reference ends at "
                   f"{late:.5g} m/s against the steady {v:.5g} m/s", inst, temperature)
    if q.min() < room[0] or q.max() > room[1]:
        return _na(name, title, f"the track is too short: the wall leaves the {_x(room[1] - room[0])} clear of the "
                   f"edge barriers before its speed has settled", inst, temperature)
    t_a, t_b = win
    return Bench(name, f"{title}; speed over [{_t(t_a)}, {_t(t_b)}]", "tran", drives,
                 [Metric("wall velocity", "m/s", mean_rate("xw", t_a, t_b, L), 2e-3, 0.0, why,
                         expect=(expect, 5e-3 * abs(expect)))],
                 instance=inst, t_stop=t_b + tail, t_step=min(1e-11, 10 * cap), max_step=cap, plot=plot,
                 temperature=temperature, ref_max_step=ref_step, ref_grid=cap / 2)


def dw_benches(ir, values):
    import numpy as np

    from compactgen.harness.benches import Bench, Metric, branch_resistance_at
    from compactgen.model.constants import ZERO_CELSIUS
    from compactgen.model.evaluate import DEFAULT_TEMPERATURE
    from compactgen.devices.stt_mtj import BENCH_TEMPERATURES_C

    card = _Card(ir, values)
    figs, figs_b = card.figs, card.figs_b
    L = card.L
    x_m, l_m = values["mtj_start"], values["mtj_length"]
    benches: list[Bench] = []
    # ---- DC: line resistance and read-out against the slice integral, inside the calibrated range
    r_w2 = figs["r_line"] * (L - x_m - l_m / 2) / L
    v_line = _sweep_limit(0.5, 10, card.j_max * card.cross * figs["r_line"], card.v_max * figs["r_line"] / r_w2)
    benches.append(line_resistance_bench(figs["r_line"], v_line))
    v_read = _sweep_limit(0.2, 4, card.v_max, card.j_max * card.cross * figs["r_p"])
    # the slice integral takes the card's values (tmr0, the wall width) as they hold at tnom
    t_read = None if values["tnom"] == DEFAULT_TEMPERATURE else values["tnom"]
    for frac in (0.25, 0.5, 0.75):
        q0 = x_m + frac * l_m
        model = card.model({"wall0": q0}, t_read)
        metrics = []
        for v in (-v_read, v_read / 4, v_read):
            ref = model.dc({"t": np.array([v]), "w1": np.zeros(1), "w2": np.zeros(1)})
            v_j = float(ref.voltages["t"][0] - ref.voltages["mid"][0])
            expect = slice_resistance(values, figs["wall_width"], q0, v_j)
            metrics.append(Metric(f"R(t-mid) at {v:+.{_decimals(v_read / 4)}f} V", "ohm",
                                  branch_resistance_at("t", "mid", v), 1e-3, 0.0, WHY_SLICES,
                                  expect=(expect, 1e-6 * expect)))
        benches.append(Bench(f"read_q{int(frac * 100)}", f"junction read with the wall {frac:g} of the way along the "
                             f"junction (q = {q0 * 1e9:.1f} nm): t swept {-v_read:.3g}..{v_read:.3g} V", "dc", {},
                             metrics, instance={"wall0": q0}, sweep=("t", -v_read, v_read, v_read / 4),
                             plot=("resistance",), labels={"resistance": READ_PORT_LABEL}, temperature=t_read))
    # ---- SOT-driven steady velocity (pinning off), linear to saturating regime
    for k in (0.1, 0.3, 1.0, 3.0):
        name = f"velocity_{k:g}jhalf"
        j = k * figs["j_half"]
        title = f"SOT-driven wall, no pinning: J = {k:g} x J_1/2 = {j / 1e10:.4g} MA/cm^2"
        if values["dmi"] == 0.0:
            benches.append(_na(name, title, "no DMI (dmi = 0): the damping-like torque does not drive a Bloch wall "
                               "steadily (v = 0 in the 1D model)", {"h_dep": 0.0}))
            continue
        b = _steady_bench(card, name, title, {"h_dep": 0.0}, j, None, WHY_V + WHY_V_EXPECT, 0.1)
        if not b.not_applicable:
            model = card.model(b.instance)
            h_sh = torques.spin_torque_field(j, values["theta_sh"], _num(model, "ms_t"), values["t_free"])
            v_0 = float(sp.sympify(domain_wall.sot_velocity_without_hk(h_sh, values["alpha"], _num(model, "h_dmi"),
                                                                       _num(model, "wall_width"))).xreplace(model.num))
            b.title += (f"; 1D steady state {b.metrics[0].expect[0]:.5g} m/s, closed form without H_K {v_0:.5g} m/s "
                        f"(Thiaville et al. 2012), v_D = {figs_b['v_dmi']:.5g} m/s")
        benches.append(b)
    # ---- temperature: Ms(T), K(T) change the wall width, the DMI field and the torque; the same
    # current density (J_1/2 at tnom) at each bench temperature, against the 1D steady state at T
    for t_c in BENCH_TEMPERATURES_C:
        t_k = t_c + ZERO_CELSIUS
        tag = f"{t_c:+.0f}C".replace("+", "p").replace("-", "m")
        name = f"temp_velocity_{tag}"
        j = figs["j_half"]
        title = f"SOT-driven wall at {t_c:g} degC, J = {j / 1e10:.4g} MA/cm^2 (J_1/2 at tnom), no pinning"
        if values["dmi"] == 0.0:
            benches.append(_na(name, title, "no DMI (dmi = 0): the damping-like torque does not drive a Bloch wall "
                               "steadily (v = 0 in the 1D model)", {"h_dep": 0.0}, t_k))
            continue
        try:
            b = _steady_bench(card, name, title, {"h_dep": 0.0}, j, None, WHY_V + WHY_V_TEMP, 0.1, temperature=t_k,
                              plot=("state:xw",))
        except RangeError as exc:  # e.g. no perpendicular anisotropy left at this temperature
            b = _na(name, title, f"the card is not valid at {t_c:g} degC: {exc}", {"h_dep": 0.0}, t_k)
        if not b.not_applicable:
            b.title += f"; 1D steady state at {t_c:g} degC {b.metrics[0].expect[0]:.5g} m/s"
        benches.append(b)
    # ---- field-driven, no pinning: below and above the Walker field of this card (DMI included)
    benches += _field_benches(ir, values, figs, card)
    # ---- pinning: no motion below the depinning current; steps and levels above it
    benches += _pinned_benches(card)
    return benches


def _field_benches(ir, values, figs, card: _Card | None = None) -> list:
    """Field-driven wall, pinning off, at 0.5 and 2 x the card's Walker field h_walker (DMI, wall
    anisotropy and hx included; hy set to 0 where the card has one), against the exact 1D results:
    gamma0 Delta hz/alpha below it, (Delta/alpha)(gamma0 hz - 2 pi/T) above it with the precession
    period T by quadrature (physics/domain_wall.py).  Then, with dmi = 0 on the instance (and hx = hy = 0),
    the same at 0.5 and 2 x h_walker_no_dmi against Schryer & Walker's closed forms.  The expectations
    use the model's numbers at the bench temperature."""
    import numpy as np

    card = card or _Card(ir, values)
    phi = sp.Symbol("phi", real=True)
    hz_spec = ir.params["hz"]
    cases = [("", figs["h_walker"], {"hy": 0.0} if values["hy"] else {})]
    if values["dmi"] != 0.0:
        zero = {n: 0.0 for n in ("hx", "hy") if values[n]}
        cases.append(("_nodmi", figs["h_walker_no_dmi"], dict(zero, dmi=0.0)))
    benches = []
    for tag, h_w, extra in cases:
        for k in (0.5, 2.0):
            hz = k * h_w
            name = f"field{tag}_{k:g}hw"
            which = "h_walker_no_dmi, with dmi = 0" if tag else "h_walker"
            title = (f"field-driven wall{', no DMI' if tag else ''}, no pinning: hz = {k:g} x {which} = {_mt(hz)} "
                     f"({'below' if k < 1 else 'above'} the Walker field)")
            inst = dict({"h_dep": 0.0, "hz": hz}, **extra)
            if not hz_spec.lo <= hz <= hz_spec.hi:
                benches.append(_na(name, title, f"hz = {_mt(hz)} is outside the card's range of hz "
                                   f"[{_mt(hz_spec.lo)}, {_mt(hz_spec.hi)}]", inst))
                continue
            model = card.model(inst)
            alpha, dw = values["alpha"], _num(model, "wall_width")
            if tag:  # no DMI: Schryer & Walker's closed forms, at the bench temperature
                h_w_t = float(sp.sympify(domain_wall.walker_field_no_dmi(alpha, _num(model, "h_kwall"))))
                closed = float(sp.sympify(domain_wall.field_velocity(hz, h_w_t, alpha, dw)).xreplace(model.num))
                source = "Schryer & Walker"
                why = WHY_V + WHY_VW_EXPECT
            else:
                source = "1D model, exact"
                why = WHY_V + WHY_VWD_EXPECT
            if k < 1:
                if not tag:
                    closed = float(sp.sympify(domain_wall.field_velocity_from_angle_rate(hz, 0.0, alpha, dw))
                                   .xreplace(model.num))
                b = _steady_bench(card, name, title, inst, 0.0, closed, why, 0.2)
                if not b.not_applicable:
                    b.title += f"; {source}: {closed:.5g} m/s"
                benches.append(b)
                continue
            try:
                if tag:
                    h_w_t = float(sp.sympify(domain_wall.walker_field_no_dmi(alpha, _num(model, "h_kwall"))))
                    period = 2 * float(sp.sympify(domain_wall.precession_period(hz, h_w_t, alpha)).xreplace(model.num))
                else:
                    _, b_t = domain_wall.drive_terms(phi, 0.0, 0.0, 0.0, _num(model, "h_kwall"), _num(model, "h_dmi"),
                                                     _num(model, "hx"), 0.0, 0.0)
                    period = float(sp.N(domain_wall.precession_period_integral(hz, alpha, b_t / gamma0, phi)
                                        .xreplace(model.num), 15))
                    rate = 2 * np.pi / period
                    closed = float(sp.sympify(domain_wall.field_velocity_from_angle_rate(hz, rate, alpha, dw))
                                   .xreplace(model.num))
            except (TypeError, ValueError) as exc:
                benches.append(_na(name, title, f"the precession period does not evaluate ({exc})", inst))
                continue
            benches.append(_precession_bench(card, name, title, inst, period, closed, source, why))
    return benches


def _precession_bench(card: _Card, name, title, inst, period, closed, source, why):
    """Above the Walker field: the mean speed over one full turn of the wall angle."""
    import numpy as np

    from compactgen.harness.benches import Bench, Metric, mean_rate_per_turn

    L = card.L
    model = card.model(inst)
    if not (np.isfinite(period) and period > 0 and np.isfinite(closed)):
        return _na(name, title, f"the precession period T = {period:.4g} s does not evaluate to a finite time", inst)
    w = card.wall(model).at(0.0)
    turn = np.linspace(0.0, 2 * np.pi, 721)
    tau_min = float(np.min(w.tau(turn)))
    v_fast = float(np.max(np.abs(w.qdot(turn))))
    after = min(0.05e-9, 0.25 * period)
    t_stop = after + 1.1 * period
    # the mean over a turn comes from the angle's crossing time: at most period/200 per step (measured on the
    # demo card: period/40 already costs 0.6 of the tolerance)
    cap = _cap_for(t_stop, min(period / 20, tau_min))
    if cap is None:
        return _na(name, title, f"one turn of the wall angle (period {_t(period)}) with its fastest time constant "
                   f"{_t(tau_min)} is more than {POINT_BUDGET} time steps", inst)
    # where the wall goes: dt = dphi/(dphi/dt), dq = (dq/dt)/(dphi/dt) dphi along the precessing angle
    from scipy.integrate import cumulative_trapezoid

    phi0 = float(model.initial[1])
    path = phi0 + np.sign(float(w.phidot(phi0))) * np.linspace(0.0, 3 * np.pi, 6001)
    rate = w.phidot(path)
    if not np.all(np.sign(rate) == np.sign(rate[0])):
        return _na(name, title, "the wall angle comes to rest: no precession at this field", inst)
    t_path = cumulative_trapezoid(1.0 / rate, path, initial=0.0)
    q_path = cumulative_trapezoid(w.qdot(path) / rate, path, initial=0.0)[t_path <= t_stop]
    ahead, behind = 1.05 * max(0.0, float(q_path.max())), 1.05 * max(0.0, -float(q_path.min()))
    if t_path[-1] < t_stop:  # more than 1.5 turns in t_stop cannot happen (t_stop < 1.35 T); be safe
        ahead = v_fast * t_stop
    room = _interior(model, abs(inst["hz"]), EDGE_CLEAR)
    start = max(0.2 * L, room[0] + behind) if room else 0.0
    avail = room[1] - start if room else 0.0
    if room is None or ahead > avail:
        return _na(name, title, f"the track is too short: over one turn ({_t(period)}) the wall runs {_x(ahead)} "
                   f"ahead (up to {v_fast:.4g} m/s) but only {_x(max(avail, 0.0))} lie clear of the edge barriers "
                   f"ahead of it", inst)
    inst = dict(inst, wall0=start)
    model = card.model(inst)
    return Bench(name, f"{title}; mean speed over one full turn (2 pi) of the wall angle, period {_t(period)}; "
                 f"{source}: {closed:.5g} m/s", "tran", {},
                 [Metric("wall velocity", "m/s", mean_rate_per_turn("xw", "phi", after, 1, L), 2e-3, 0.0, why,
                         expect=(closed, 5e-3 * abs(closed)))],
                 instance=inst, t_stop=t_stop, t_step=min(1e-11, 10 * cap), max_step=cap,
                 plot=("state:xw", "state:phi"), ref_max_step=_ref_steps(min(period / 20, tau_min)), ref_grid=cap / 2)


# ---- pinned wall ------------------------------------------------------------------------------
def _static_drive(card: _Card, model, j: float) -> float:
    """The field along z [A/m] that pushes a wall held at its static angle (B = 0, the angle the
    current's field-like torque and the in-plane fields set) at current density ``j``: hz + the
    damping-like spin Hall term; the wall leaves a pinning site where it exceeds h_dep."""
    w = card.wall(model).at(j)
    phi = _flow_root(w.torque, float(model.initial[1]))
    return float("nan") if phi is None else float(w.drive(phi))


def depinning_threshold(card: _Card, model, direction: int):
    """Static depinning current density (signed) that moves the wall toward w2 (``direction`` +1) or
    w1 (-1): the smallest |J| at which the drive on a wall at its static angle reaches h_dep; or
    (None, the reason there is none within j_max)."""
    import numpy as np
    from scipy.optimize import brentq

    h_dep = _num(model, "h_dep")
    d0 = _static_drive(card, model, 0.0)
    if abs(d0) >= h_dep:
        return None, f"the wall is not pinned: the field along z, {_mt(d0)}, exceeds h_dep = {_mt(h_dep)}"
    sign = 0
    for s in (+1, -1):
        for k in (1e-3, 1.0):  # small and largest calibrated current
            if direction * (_static_drive(card, model, s * k * card.j_max) - d0) > 1e-9 * h_dep:
                sign = s
                break
        if sign:
            break
    if not sign:
        return None, (f"the current does not push the wall toward w{1 if direction < 0 else 2} at its static angle up to "
                      f"j_max = {_ma(card.j_max)} (no damping-like drive on a Bloch wall: dmi = "
                      f"{card.values['dmi'] * 1e3:.4g} mJ/m^2, hx = {_mt(card.values['hx'])})")
    js = sign * card.j_max * np.geomspace(1e-6, 1.0, 121)
    ds = np.array([direction * _static_drive(card, model, j) for j in js])
    hit = np.flatnonzero(ds >= h_dep)
    if not hit.size:
        best = float(np.nanmax(ds)) if np.isfinite(ds).any() else float("nan")
        rigid = card.figs_b["j_dep"]
        return None, (f"the wall does not move below the calibrated limit j_max = {_ma(card.j_max)}: depinning needs "
                      f"the drive to reach h_dep = {_mt(h_dep)}, at j_max it reaches {_mt(best)} (rigid-wall "
                      f"estimate j_dep = {_ma(rigid)})")
    k = int(hit[0])
    lo = js[k - 1] if k else 0.0
    return float(brentq(lambda j: direction * _static_drive(card, model, j) - h_dep, lo, js[k], xtol=1e-9 * abs(js[k]),
                        rtol=1e-12)), ""


def _well_offset(card: _Card, model) -> float:
    """Where the wall rests relative to the pinning minima k x pitch without current: shifted by
    pitch/(2 pi) asin(hz/h_dep) where the card has a perpendicular field (H_pin = -hz)."""
    import numpy as np

    d0 = _static_drive(card, model, 0.0)
    return float(card.values["pin_pitch"] / (2 * np.pi) * np.arcsin(np.clip(d0 / card.values["h_dep"], -1, 1)))


def _wells(card: _Card, room, offset: float = 0.0) -> list[float]:
    """The wall's rest positions (pinning minima + ``offset``) inside ``room``."""
    import numpy as np

    p = card.values["pin_pitch"]
    if room is None:
        return []
    first, last = int(np.ceil((room[0] - offset) / p)), int(np.floor((room[1] - offset) / p))
    return [k * p + offset for k in range(first, last + 1)]


def _well_rates(card: _Card, model, levels, q: float, phi: float):
    dx = 1e-4 * min(card.values["pin_pitch"], _num(model, "wall_width")) / card.L
    return _time_constants(_rates(model, levels, [q / card.L, phi], dx))


def _pinned_benches(card: _Card) -> list:
    values = card.values
    names = [("hold_0.8jdep", "sub-threshold pulse, 0.8 x J_dep: the wall stays in its pinning well"),
             ("pulse_train", "write pulses of 2 x J_dep toward w2, each followed by a read: the resistance walks "
                             "down in steps"),
             ("long_pulse", "a long pulse, 3 x J_dep toward w2: the wall stops at the track end")]
    h_dep = values["h_dep"]
    if h_dep <= 0.0:
        return [_na(n, t, "no pinning (h_dep = 0): the wall has no stable positions to hold or step between")
                for n, t in names]
    model = card.model({})
    room = _interior(model, h_dep, EDGE_CLEAR_PIN)
    wells = _wells(card, room, _well_offset(card, model))
    if not wells:
        span = "" if room is None else f" [{_x(room[0])}, {_x(room[1])}]"
        return [_na(n, t, f"no pinning site (pitch {_x(values['pin_pitch'])}) lies on the track clear of the edge "
                    f"barriers{span} (track {_x(card.L)})") for n, t in names]
    out = []
    j_w1, why_w1 = depinning_threshold(card, model, -1)
    j_w2, why_w2 = depinning_threshold(card, model, +1)
    out.append(_hold_bench(card, names[0], j_w1, why_w1, wells))
    out.append(_train_bench(card, names[1], j_w2, why_w2, wells, room))
    out.append(_long_bench(card, names[2], j_w2, why_w2, wells, room))
    return out


def _hold_bench(card: _Card, name_title, j_th, why, wells):
    import numpy as np

    from compactgen.harness.benches import Bench, Dc, Metric, Pulse, extreme_excursion
    from compactgen.devices.write_line import line_drive

    name, title = name_title
    values, L = card.values, card.L
    pitch = values["pin_pitch"]
    if j_th is None:
        return _na(name, title, why)
    j = 0.8 * j_th
    if abs(j) > card.j_max:
        return _na(name, title, f"0.8 x J_dep = {_ma(j)} is beyond the calibrated limit j_max = {_ma(card.j_max)}")
    centre = values["mtj_start"] + values["mtj_length"] / 2
    q_home = min(wells, key=lambda q: abs(q - centre))
    inst = {"wall0": q_home}
    model = card.model(inst)
    phi0 = float(model.initial[1])
    levels = line_drive(model, j * card.cross)
    zero = {n: 0.0 for n in levels}
    # time constants in the well at rest and at the static displacement under the pulse
    d = _static_drive(card, model, j)
    # static: H_pin = -d, so the wall shifts from the pinning minimum by pitch/(2 pi) asin(d/h_dep)
    shift = pitch / (2 * np.pi) * np.arcsin(np.clip(d / values["h_dep"], -1, 1)) - _well_offset(card, model)
    w = card.wall(model).at(j)
    phi_j = _flow_root(w.torque, phi0)
    c0, s0, om0 = _well_rates(card, model, zero, q_home, card.rest_angle(model))
    c1, s1, om1 = _well_rates(card, model, levels, q_home + shift, phi_j if phi_j is not None else phi0)
    fast, slow, omega = min(c0, c1), max(s0, s1), max(om0, om1)
    rise = max(PULSE_RISE, 20.0 / omega) if omega > 0 else PULSE_RISE
    width = max(5 * slow, 2 * rise)  # the displacement under the pulse is reached
    tail = 6 * slow  # and 0.15 pitch decays back below 0.01 pitch
    cap = _cap_for(0.1e-9 + 2 * rise + width + tail, fast) if np.isfinite(width + tail) else None
    if cap is None:
        return _na(name, title, f"the wall settles in its pinning well in about {_t(slow)} (fastest time constant "
                   f"{_t(fast)}, alpha = {values['alpha']:.3g}): holding and returning take more than {POINT_BUDGET} "
                   f"time steps")
    delay = min(0.1e-9, 20 * cap)
    t_stop = delay + 2 * rise + width + tail
    drives = {n: (Pulse(0.0, v, delay, rise, rise, width) if v else Dc(0.0)) for n, v in levels.items()}
    ref_step = _ref_steps(fast)
    tr = model.transient(drives, t_stop, t_eval=_grid(t_stop, cap / 2), rtol=1e-9, atol=1e-12, max_step=ref_step)
    q = tr.states["xw"] * L
    moved, final = float(np.max(np.abs(q - q[0]))), float(q[-1])
    if not (moved < 0.3 * pitch and abs(final - q_home) < 0.01 * pitch):
        return _na(name, title, f"0.8 x J_dep ({_ma(j)}) does not hold the wall in the 1D model: it moves "
                   f"{moved / pitch:.3g} pitch and ends {(final - q_home) / pitch:+.3g} pitch from its well (the "
                   f"wall angle's transient pushes it over the pinning barrier)")
    return Bench(
        name, f"sub-threshold pulse, 0.8 x J_dep ({_ma(j)}, {_t(width)}, edges {_t(rise)}; J_dep = {_ma(j_th)} is the "
        f"static threshold toward w1, rigid-wall figure {_ma(card.figs_b['j_dep'])}): the wall stays in its pinning "
        f"well at q = {_x(q_home)}",
        "tran", drives,
        [Metric("largest displacement", "m", extreme_excursion("xw", L), 0.0, 0.01 * pitch, WHY_PIN + WHY_HOLD_EXPECT,
                expect=(0.0, 0.3 * pitch)),
         Metric("final position", "m", lambda tr: float(tr.states["xw"][-1] * L), 0.0, 0.01 * pitch,
                WHY_PIN + WHY_HOLD_EXPECT, expect=(q_home, 0.01 * pitch))],
        instance=inst, t_stop=t_stop, t_step=min(1e-11, 10 * cap), max_step=cap, plot=("state:xw", "current:w1"),
        ref_max_step=ref_step, ref_grid=cap / 2)


def _pinned_motion(card: _Card, model, j: float, start: float, direction: int, sites: int, fast: float):
    """The driven wall's mean speed through the pinning landscape, from a reference run: the time it
    takes from 1.5 to (sites + 0.5) pitches past its start.  (speed, time to the first mark) or None."""
    import numpy as np

    from compactgen.harness.benches import Pwl, crossing_time
    from compactgen.devices.write_line import line_drive

    pitch = card.values["pin_pitch"]
    st = steady_state(model, j, float(model.initial[1]), card.wall(model))
    v_free = abs(st.v) if st is not None and st.v else abs(card.figs_b["v_dmi"])
    settle = SETTLE_MARGIN * 10 * st.tau if st is not None else 0.0
    t_probe = PULSE_RISE + settle + (sites + 1) * pitch / (0.3 * v_free)
    cap = _cap_for(t_probe, min(fast, pitch / v_free / 2))
    if cap is None:
        return None, (f"crossing {sites} pinning sites at about a third of the free speed {v_free:.4g} m/s takes "
                      f"{_t(t_probe)}: more than {POINT_BUDGET} time steps (fastest time constant {_t(fast)})")
    lv = line_drive(model, j * card.cross)
    drives = {n: Pwl(((0.0, 0.0), (PULSE_RISE, v))) for n, v in lv.items()}
    tr = model.transient(drives, t_probe, t_eval=_grid(t_probe, cap), rtol=1e-9, atol=1e-12,
                         max_step=_ref_steps(min(fast, pitch / v_free / 2)))
    q = tr.states["xw"] * card.L
    marks = start + direction * (np.arange(1, sites + 1) + 0.5) * pitch
    ts = [crossing_time(tr.t, q, m, 0.0, direction) for m in marks]
    if not all(np.isfinite(ts)) or ts[-1] <= ts[0]:
        return None, (f"the wall does not cross {sites} pinning sites within {_t(t_probe)} (it reaches "
                      f"{(q.max() - start) / pitch:.3g} pitches)")
    return ((abs(marks[-1] - marks[0]) / (ts[-1] - ts[0])), ts[0]), ""


def _landing_width(model, levels, start, pitch, hops, guess, edge, relax, cap, ref_step):
    """The width of a single pulse (``levels`` on the ports, edges ``edge``) that leaves the wall
    ``hops`` pinning sites past ``start`` once it has relaxed, as far as possible from the widths
    that leave it one site short or one site further (bisection to 5 % on reference runs, each
    relaxing for half of ``relax``: the ringing is down to e^-3 and the well decided; the whole
    train then checks the landing with the full rest).  (width, "") or (None, the reason)."""
    import numpy as np

    from compactgen.harness.benches import Pwl

    L = _num(model, "track_length")
    seen: dict[float, float] = {}

    def sites(width):
        if width not in seen:
            t1, t2 = edge + width, 2 * edge + width
            drives = {n: Pwl(((0.0, 0.0), (edge, v), (t1, v), (t2, 0.0))) for n, v in levels.items()}
            t_end = t2 + relax / 2
            tr = model.transient(drives, t_end, t_eval=np.linspace(0.0, t_end, 201), rtol=1e-9, atol=1e-12,
                                 max_step=ref_step)
            seen[width] = (tr.states["xw"][-1] * L - start) / pitch
        return seen[width]

    def first(target):
        """The smallest width (within 5 %) that leaves the wall at least ``target`` sites on."""
        lo = max([w for w, x in seen.items() if round(x) < target], default=0.0)
        hi = min(w for w, x in seen.items() if round(x) >= target)
        while hi - lo > 0.05 * hi:
            mid = (lo + hi) / 2
            if round(sites(mid)) >= target:
                hi = mid
            else:
                lo = mid
        return hi

    hi = max(guess, 2 * cap)
    for _ in range(12):  # a width that carries the wall past the target site
        if round(sites(hi)) >= hops + 1:
            break
        hi *= 1.6
    else:
        return None, f"pulses up to {_t(hi)} do not carry the wall {hops + 1} pinning sites on"
    w_a = first(hops)
    w_b = first(hops + 1)
    width = float(max(cap, np.round((w_a + w_b) / 2 / cap) * cap))
    x = sites(width)
    if not (round(x) == hops and w_b > w_a):
        return None, (f"no pulse width lands the wall {hops} pinning site(s) on: {_t(width)} leaves it {x:.3g} sites "
                      f"on")
    return width, ""


def _train_drives(levels: dict, n_pulses, width, relax, read, edge, gap, read_bias, lead=None):
    """Pwl drives: after ``lead`` (default ``gap``) a read of the junction (t at ``read_bias``, line ends
    at 0 V), then for each write pulse the line ends get +-I r, all ports rest for ``relax``, and t
    reads again.  Returns the drives, the pulse end times, the read times and the end time."""
    from compactgen.harness.benches import Pwl

    pts = {n: [(0.0, 0.0)] for n in ("w1", "w2", "t")}
    t = gap if lead is None else lead

    def segment(lv, duration):
        nonlocal t
        for n in pts:
            v = lv[n]
            pts[n] += [(t, 0.0), (t + edge, v), (t + edge + duration, v), (t + 2 * edge + duration, 0.0)]
        t += 2 * edge + duration

    read_levels = {"w1": 0.0, "w2": 0.0, "t": read_bias}
    reads, ends = [], []
    for k in range(n_pulses + 1):
        segment(read_levels, read)
        reads.append(t - edge)
        if k == n_pulses:
            break
        t += gap
        segment(levels, width)
        ends.append(t)
        t += relax
    out = {}
    for n, p in pts.items():
        clean = [p[0]]
        for a in p[1:]:
            if a[0] > clean[-1][0]:
                clean.append(a)
        out[n] = Pwl(tuple(clean))
    return out, ends, reads, t + gap


def _train_bench(card: _Card, name_title, j_th, why, wells, room):
    import numpy as np

    from compactgen.harness.benches import Bench, Metric, resistance_at_time
    from compactgen.devices.write_line import line_drive

    name, title = name_title
    values, L, figs = card.values, card.L, card.figs_b
    pitch = values["pin_pitch"]
    x_m, l_m = values["mtj_start"], values["mtj_length"]
    if j_th is None:
        return _na(name, title, why)
    j = 2.0 * j_th
    if abs(j) > card.j_max:
        return _na(name, title, f"2 x J_dep = {_ma(j)} is beyond the calibrated limit j_max = {_ma(card.j_max)}")
    n_pulses = min(4, int(np.floor(l_m / pitch + 1e-9)) - 1)
    if n_pulses < 2:
        return _na(name, title, f"the junction ({_x(l_m)}) spans {l_m / pitch:.3g} pinning pitches ({_x(pitch)}): "
                   f"fewer than the 3 stable wall positions under it a stepped read-out needs")
    step = l_m / (n_pulses + 1)  # aim: the wall crosses the junction in n_pulses + 1 steps
    hops = max(1, int(np.floor(step / pitch + 1e-9)))  # pinning sites per pulse
    offset = _well_offset(card, card.model({}))
    start = float(np.ceil((x_m - offset) / pitch - 1e-9) * pitch + offset)
    if start < room[0] or start + n_pulses * step + pitch > room[1]:
        return _na(name, title, f"the junction's pinning sites [{_x(start)}, {_x(start + n_pulses * step + pitch)}] "
                   f"are not clear of the edge barriers [{_x(room[0])}, {_x(room[1])}]")
    inst = {"wall0": start}
    model = card.model(inst)
    phi0 = float(model.initial[1])
    drive = line_drive(model, j * card.cross)
    if not _static_drive(card, model, j) >= 1.05 * values["h_dep"]:
        return _na(name, title, f"at 2 x J_dep the drive on the wall only reaches "
                   f"{_static_drive(card, model, j) / values['h_dep']:.3g} x h_dep (the field-like torque turns the "
                   f"wall toward Bloch)")
    zero = {n: 0.0 for n in drive}
    phi_rest = card.rest_angle(model)
    fast, slow, _ = _well_rates(card, model, zero, start, phi_rest)
    st = steady_state(model, j, phi0, card.wall(model))
    tau_run = st.tau if st is not None else fast
    fast = min(fast, tau_run)
    motion, why_not = _pinned_motion(card, model, j, start, +1, 3, fast)
    if motion is None:
        return _na(name, title, f"2 x J_dep ({_ma(j)}): {why_not}")
    speed, _ = motion
    fast = min(fast, pitch / speed / 2)  # the wall crosses a pinning site in pitch/speed
    # read: low enough that its current cannot push the wall (0.1 x the threshold), inside v_max
    read_bias = min(READ_BIAS, card.v_max / 2, 0.1 * abs(j_th) * card.cross * figs["r_p"])
    cap = fast / STEPS_PER_TAU
    for _ in range(4):  # reads, edges and gaps grow with the cap
        relax = max(6 * slow, 20 * cap)
        read = min(0.4e-9, max(50 * cap, 0.1 * relax))
        width = max(cap, float(np.round(step / speed / cap) * cap))
        edge = max(2 * cap, min(PULSE_RISE, width / 4))
        gap = min(0.1e-9, max(20 * cap, edge))
        t_est = (n_pulses + 1) * (read + 2 * edge + gap) + n_pulses * (width * 1.7 + 2 * edge + relax) + gap
        new = _cap_for(t_est, fast) if np.isfinite(t_est) else None
        if new is None or new <= cap:
            break
        cap = new
    if new is None or t_est / cap > POINT_BUDGET * (1 + 1e-9):
        return _na(name, title, f"{n_pulses} steps of {_t(step / speed)} with {_t(6 * slow)} for the wall to settle in "
                   f"each well (slowest well time constant {_t(slow)}, fastest time constant {_t(fast)}) take more "
                   f"than {POINT_BUDGET} time steps")
    ref_step = _ref_steps(fast)
    # the pulse width from single pulses on the reference: the middle of the widths that leave the
    # wall, once it has relaxed, ``hops`` sites further (a wall with little damping coasts on after
    # the pulse, so the travel time alone does not say where it lands)
    width, why_not = _landing_width(model, drive, start, pitch, hops, width, edge, relax, cap, ref_step)
    if width is None:
        return _na(name, title, f"2 x J_dep ({_ma(j)}): {why_not}")
    # a wall that does not start at rest (the IR's phi0 leaves hy out) settles before the first read
    lead = gap if abs(phi_rest - phi0) < 1e-9 else relax
    drives, _, reads, t_end = _train_drives(drive, n_pulses, width, relax, read, edge, gap, read_bias, lead)
    if t_end / cap > POINT_BUDGET * (1 + 1e-9):
        return _na(name, title, f"{n_pulses} pulses of {_t(width)} with {_t(relax)} of rest take more than "
                   f"{POINT_BUDGET} time steps of {_t(cap)}")
    tr = model.transient(drives, t_end, t_eval=_grid(t_end, cap / 2), rtol=1e-9, atol=1e-12, max_step=ref_step)
    r_p, r_ap = figs["r_p"], figs["r_ap"]

    def walks_down(tr) -> float:
        levels = [resistance_at_time("t", "mid", r)(tr) for r in reads]
        ok = all(b < a for a, b in zip(levels[:-1], levels[1:])) and all(0.99 * r_p < x < 1.01 * r_ap for x in levels)
        return 1.0 if ok else 0.0

    at_read = [np.interp(r, tr.t, tr.states["xw"]) * L / pitch for r in reads]
    in_wells = all(abs(x - offset / pitch - round(x - offset / pitch)) < 0.05 for x in at_read)
    if not (in_wells and walks_down(tr) == 1.0):
        return _na(name, title, f"the pulses do not step the wall from well to well in the 1D model: positions at the "
                   f"reads {', '.join(f'{x:.3g}' for x in at_read)} pitches, speed {speed:.4g} m/s, pulses of "
                   f"{_t(width)}")
    mid_r, half_r = (0.99 * r_p + 1.01 * r_ap) / 2, (1.01 * r_ap - 0.99 * r_p) / 2
    metrics = [Metric(f"R after pulse {i}" if i else "R before the pulses", "ohm", resistance_at_time("t", "mid", r),
                      1e-3, 0.0, WHY_LEVEL, expect=(mid_r, half_r)) for i, r in enumerate(reads)]
    metrics.append(Metric("levels fall monotonically within [R_P, R_AP] (1 = yes)", "1", walks_down, 0.0, 0.5,
                          "a yes/no property", expect=(1.0, 0.0)))
    return Bench(
        name, f"{n_pulses} write pulses of 2 x J_dep ({_ma(j)}, {_t(width)}; {speed:.4g} m/s through the pinning, "
        f"{_t(pitch / speed)} per pitch) toward w2, each followed by {_t(relax)} of rest and a {read_bias:.3g} V read "
        f"of the junction: the resistance walks down in steps",
        "tran", drives, metrics, instance=inst, t_stop=t_end, t_step=min(1e-11, 10 * cap), max_step=cap,
        plot=("state:xw", "current:t"), ref_max_step=ref_step, ref_grid=cap / 2)


def _long_bench(card: _Card, name_title, j_th, why, wells, room):
    import numpy as np

    from compactgen.harness.benches import Bench, Dc, Metric, Pulse
    from compactgen.devices.write_line import line_drive

    name, title = name_title
    values, L = card.values, card.L
    pitch = values["pin_pitch"]
    if j_th is None:
        return _na(name, title, why)
    j = 3.0 * j_th
    if abs(j) > card.j_max:
        return _na(name, title, f"3 x J_dep = {_ma(j)} is beyond the calibrated limit j_max = {_ma(card.j_max)}")
    home = min(wells, key=lambda q: abs(q - values["mtj_start"]))
    model = card.model({"wall0": home})
    phi0 = float(model.initial[1])
    alpha = values["alpha"]
    g0 = card.wall(model).gamma0
    drive = line_drive(model, j * card.cross)
    zero = {n: 0.0 for n in drive}
    w = card.wall(model).at(j)
    phi_j = _flow_root(w.torque, phi0)
    if phi_j is None or not _static_drive(card, model, j) >= 1.05 * values["h_dep"]:
        return _na(name, title, "at 3 x J_dep the drive on the wall does not exceed h_dep clearly (the field-like "
                   "torque turns the wall toward Bloch)")
    # the static landscape near the w2 end: the field on a wall at its static angle, from the model's rhs
    dw = _num(model, "wall_width")
    lo = max(home, L - (EDGE_INSET + 30) * dw - 3 * pitch)
    q = np.linspace(lo, L, int(np.clip((L - lo) / min(dw, pitch) * 40, 2000, 400000)))

    def field(levels, phi):
        y = [q / L, np.full_like(q, phi)]
        return model.rhs({k: np.full_like(q, v) for k, v in levels.items()}, y)[1] * (1 + alpha**2) / g0

    driven = field(drive, phi_j)
    stop = np.flatnonzero((driven[:-1] > 0) & (driven[1:] <= 0))
    phi_rest = card.rest_angle(model)
    free = field(zero, phi_rest)
    if not stop.size:
        return _na(name, title, "the edge barrier does not stop the driven wall inside the track")
    q_push = q[stop[0]]
    back = np.flatnonzero((free[:-1] >= 0) & (free[1:] < 0) & (q[1:] <= q_push))
    if not back.size:
        return _na(name, title, "no rest position below the point where the barrier stops the wall")
    k = back[-1]
    q_rest = float(q[k] + (q[k + 1] - q[k]) * free[k] / (free[k] - free[k + 1]))
    # time constants: in the wells, at the driven stop against the barrier, and of the moving wall's angle
    c0, s0, _ = _well_rates(card, model, zero, home, phi_rest)
    c1, s1, _ = _well_rates(card, model, drive, q_push, phi_j)
    c2, s2, _ = _well_rates(card, model, zero, q_rest, phi_rest)
    st = steady_state(model, j, phi0, card.wall(model))
    fast = min(c0, c1, c2, st.tau if st is not None else c0)
    # the speed through the pinning, a few sites before the end
    ahead = [x for x in wells if x <= q_push - 4.5 * pitch]
    if not ahead:
        return _na(name, title, f"fewer than 5 pinning sites ({_x(pitch)} apart) lie between the junction and the "
                   f"track end's barrier at {_x(q_push)}")
    probe_at = min(ahead, key=lambda x: abs(x - max(home, q_push - 6 * pitch)))
    motion, why_not = _pinned_motion(card, card.model({"wall0": probe_at}), j, probe_at, +1, 3, fast)
    if motion is None:
        return _na(name, title, f"3 x J_dep ({_ma(j)}): {why_not}")
    speed, t_first = motion
    fast = min(fast, pitch / speed / 2)  # the wall crosses a pinning site in pitch/speed
    # the drive falls slowly against the barrier's and the end well's time constants, so the wall
    # eases back into the rest position instead of rebounding past it
    fall = max(PULSE_RISE, 10 * max(s1, s2))
    tail = 10 * max(s2, s0)
    fixed = 0.1e-9 + PULSE_RISE + t_first + 10 * s1 + fall + tail
    # start at the junction, or as close to the end as the time-step budget demands
    reach = (POINT_BUDGET * fast / MIN_STEPS_PER_TAU - fixed) * speed / 1.5
    starts = [x for x in wells if max(home, q_push - reach) <= x <= q_push - 2 * pitch]
    if not np.isfinite(fixed) or not starts:
        return _na(name, title, f"the wall runs at {speed:.4g} m/s through the pinning and needs "
                   f"{_t(10 * max(s1, s2))} to settle at the end: more than {POINT_BUDGET} time steps (fastest time constant {_t(fast)}) even "
                   f"from two pinning sites before the end")
    start = min(starts)
    inst = {"wall0": start}
    model = card.model(inst)
    width = 1.5 * (q_push - start) / speed + t_first + 10 * s1
    cap = _cap_for(fixed + 1.5 * (q_push - start) / speed, fast)
    if cap is None:  # rounding at the edge of the budget
        return _na(name, title, f"the pulse of {_t(width)} is more than {POINT_BUDGET} time steps")
    delay = min(0.1e-9, 20 * cap)
    t_stop = delay + PULSE_RISE + width + fall + tail
    drives = {n: (Pulse(0.0, v, delay, PULSE_RISE, fall, width) if v else Dc(0.0)) for n, v in drive.items()}
    ref_step = _ref_steps(fast)
    tr = model.transient(drives, t_stop, t_eval=_grid(t_stop, cap / 2), rtol=1e-9, atol=1e-12, max_step=ref_step)
    final, top = float(tr.states["xw"][-1] * L), float(np.max(tr.states["xw"]) * L)
    tol = 0.05 * pitch
    if abs(final - q_rest) > tol or not 0 <= top <= L:
        return _na(name, title, f"the wall does not come to rest at the track end's rest position {_x(q_rest)} in the "
                   f"1D model: it ends at {_x(final)} (largest {_x(top)}; it rebounds from the barrier, alpha = "
                   f"{alpha:.3g})")

    def largest(tr):
        return float(np.max(tr.states["xw"]) * L)

    where = "from the junction" if start == home else f"from q = {_x(start)} (closer to the end: time-step budget)"
    return Bench(
        name, f"a long pulse, 3 x J_dep ({_ma(j)}) for {_t(width)} (falling over {_t(fall)}) toward w2 {where}: the "
        f"wall runs at {speed:.4g} m/s through the pinning, stops against the edge barrier at {_x(q_push)} and rests "
        f"at {_x(q_rest)}",
        "tran", drives,
        [Metric("final position", "m", lambda tr: float(tr.states["xw"][-1] * L), 1e-3, 0.0, WHY_END + WHY_END_EXPECT,
                expect=(q_rest, tol)),
         Metric("largest position", "m", largest, 1e-3, 0.0, WHY_END + "; every run must stay inside [0, track_length]",
                expect=(L / 2, L / 2))],
        instance=inst, t_stop=t_stop, t_step=min(1e-11, 10 * cap), max_step=cap, plot=("state:xw", "current:w1"),
        ref_max_step=ref_step, ref_grid=cap / 2)


def slice_resistance(values: dict, width: float, q: float, v_junction: float) -> float:
    """Junction resistance by direct quadrature over parallel slices, each a junction with
    cos(theta) = m_z(x) = -tanh((x - q)/Delta) (PHYSICS 6.5): an independent check of the closed
    form the model uses."""
    import numpy as np
    from scipy.integrate import quad

    g_p = values["mtj_length"] * values["track_width"] / values["ra"]
    tmr = values["tmr0"] / (1 + (v_junction / values["v_half"]) ** 2)
    g_ap = g_p / (1 + tmr)
    x0, x1 = values["mtj_start"], values["mtj_start"] + values["mtj_length"]

    def slice_g(x):
        return ((g_p + g_ap) / 2 - (g_p - g_ap) / 2 * np.tanh((x - q) / width)) / values["mtj_length"]

    # break points at the wall and 40 widths either side: beyond them tanh is +-1 to 1e-34, and a
    # wall thousands of times narrower than the junction is then resolved (measured: with the wall
    # centre alone as break point quad missed by 3e-6 for a 0.7 nm wall under an 11.6 um junction)
    points = sorted({min(max(x, x0), x1) for x in (q - 40 * width, q, q + 40 * width)} - {x0, x1})
    g, _ = quad(slice_g, x0, x1, points=points or None, epsabs=0, epsrel=1e-13, limit=400)
    return 1.0 / g


def cross_section(values) -> float:
    return values["track_width"] * values["t_hm"]
