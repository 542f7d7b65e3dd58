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

from ..ir import Branch, Constraint, Figure, ModelIR, Output, State
from ..params import ParamSpec
from ..physics import anisotropy, domain_wall, heavy_metal, temperature, torques, tunnelling
from ..physics.constants import const_values, gamma0
from .variation import apply_variation, variation_specs
from .base import DeviceKind, register
from .common import NM, Parts, device_temperature, free_layer_specs, limit_specs, mtj_conductance, mtj_read_specs
from .sot_mtj import MT
from .write_line import (CONVENTIONS, WHY_DC, heavy_metal_specs, line_current_density, line_resistance_bench,
                         three_terminal)

#: edge barriers: centre this many wall widths inside each track end, decay length one wall width
EDGE_INSET = 3
#: the track must be at least this many wall widths long
MIN_TRACK_WIDTHS = 10


#: process variation (devices/variation.py): name, direction of the slow corner, global sigma,
#: mismatch sigma at area_ref -- illustrative defaults, no source
VARIED = (("ra", +1, 0.03, 0.015), ("tmr0", -1, 0.03, 0.015), ("theta_sh", -1, 0.05, 0.02),
          ("h_dep", +1, 0.1, 0.05), ("rho_hm", +1, 0.03, 0.01))

@register
class DwMtj(DeviceKind):
    key = "dw-mtj"
    title = "Three-terminal domain-wall MTJ (spin-orbit-torque driven wall, multi-level read-out)"
    summary = ("1D (q, phi) domain wall with spin Hall torque, DMI, pinning and edge barriers in a perpendicular "
               "track on a heavy-metal line; junction read-out integrated over the wall profile")

    def param_specs(self) -> list[ParamSpec]:
        keep = {"t_free": "ferromagnet (track) thickness", "ms": "saturation magnetisation of the track",
                "ki": "interface anisotropy energy density of the track",
                "kb": "bulk uniaxial anisotropy energy density of the track (perpendicular > 0)",
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
                      source="Co-based films 10-20 pJ/m (from memory)", card_unit="pJ/m", group=g),
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
        return (track + geo + fields + mtj_read_specs() + mtj + heavy_metal_specs() + pin
                + limit_specs(v_max=1.0, j_max=5e12) + inst + variation_specs(VARIED))

    def build_ir(self, name, values, options) -> ModelIR:
        table = self.table_with(values)
        P = table.symbols()
        parts = Parts(P)
        apply_variation(parts, VARIED, P["mtj_length"] * P["track_width"])
        L, w = P["track_length"], P["track_width"]
        # perpendicular track, thin-film demagnetisation (N_z = 1)
        ku = parts.d("ku", anisotropy.uniaxial_energy_density(P["kb"], P["ki"], P["t_free"]))
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
            Figure("phi0", phi0, "rad", "wall angle at rest"),
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
                   "A. Thiaville et al., EPL 100, 57002 (2012) for the model; closed form derived (PHYSICS 6.3)"),
            Figure("h_walker_dmi_limit", domain_wall.walker_field_dmi_limit(P["alpha"], h_d), "A/m",
                   "comparison only: large-DMI approximation (pi/2) alpha H_D (H_K and hx neglected)",
                   "A. Thiaville et al., EPL 100, 57002 (2012)"),
            Figure("h_walker_no_dmi", domain_wall.walker_field_no_dmi(P["alpha"], h_kw), "A/m",
                   "comparison only: Walker field the track would have without DMI, alpha H_K/2",
                   "N. L. Schryer and L. R. Walker, J. Appl. Phys. 45, 5406 (1974)"),
            Figure("levels", P["mtj_length"] / P["pin_pitch"], "1", "pinning sites under the junction"),
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


# ---- benches ---------------------------------------------------------------------------------
WHY_SLICES = WHY_DC + ("; every run must match the junction conductance integrated slice by slice over the wall "
                       "profile by quadrature (PHYSICS 6.5) to 1e-6")
WHY_V = ("wall speed from the slope of q(t) over a window after the wall angle has settled; trapezoidal steps of at "
         "most 1 ps keep the position error far below 0.2 % of the distance travelled")
WHY_V_EXPECT = ("; every run must meet the steady state of the 1D model (root of dphi/dt = 0, H_K included) within "
                "0.5 % (the window starts where the reference is within 1e-4 of it)")
WHY_VW_EXPECT = ("; every run must meet Schryer & Walker's closed form (no DMI, no pinning) within 0.5 %")
WHY_VWD_EXPECT = ("; every run must meet the exact 1D result within 0.5 %: gamma0 Delta hz/alpha below the Walker "
                  "field, (Delta/alpha)(gamma0 hz - 2 pi/T) above it with the period T by quadrature")
WHY_PIN = ("the wall sits in a pinning well and relaxes back; positions agree to far better than 1 % of the pinning "
           "pitch")
WHY_LEVEL = ("the wall ends each step in a pinning minimum, so the read resistance depends on which well it reached, "
             "not on integration error; 0.1 %")
WHY_END = "the wall rests against the smooth edge barrier; 0.1 % of its position"

PULSE_RISE = 0.05e-9
READ_BIAS = 0.05


def _num(model, name: str) -> float:
    for k, v in model.num.items():
        if str(k) == name:
            return float(v)
    raise KeyError(name)


def _probe(model, drives, t_probe):
    import numpy as np

    return model.transient(drives, t_probe, t_eval=np.linspace(0.0, t_probe, 4001), rtol=1e-9, atol=1e-12)


def _settled_window(tr, length, v_target, rel=1e-4, width=0.2e-9):
    """A window of the reference probe ``tr`` after which the wall speed stays within ``rel`` of
    the steady value ``v_target``."""
    import numpy as np

    v = np.gradient(tr.states["xw"], tr.t) * length
    bad = np.flatnonzero(np.abs(v / v_target - 1.0) >= rel)
    if bad.size and bad[-1] >= len(v) - 2:
        raise ValueError(f"bench set-up: the wall speed does not settle to {v_target:.5g} m/s within "
                         f"{tr.t[-1] * 1e9:.2f} ns")
    t_a = tr.t[bad[-1] + 1] if bad.size else tr.t[0]
    return float(t_a), float(t_a + width)


def steady_sot_velocity(model, j: float, values: dict, phi_guess: float) -> float:
    """Steady wall speed of the 1D model without pinning: the stable root of dphi/dt = 0 near
    ``phi_guess``, then dq/dt = Delta A / alpha (physics/domain_wall.py, same equations, solved
    algebraically instead of integrated)."""
    import numpy as np
    from scipy.optimize import brentq

    phi = sp.Symbol("phi", real=True)
    num = {k: v for k, v in model.num.items()}
    h_sh = float(torques.spin_torque_field(j, values["theta_sh"], values["ms"], values["t_free"]).xreplace(num))
    a, b = domain_wall.drive_terms(phi, values["hz"], h_sh, 0.0, _num(model, "h_kwall"), _num(model, "h_dmi"),
                                   values["hx"], values["hy"], values["xi_sot"] * h_sh)
    alpha = values["alpha"]
    qdot, phidot = domain_wall.wall_rates(a, b, alpha, _num(model, "wall_width"))
    fq = sp.lambdify(phi, qdot.xreplace(num))
    fp = sp.lambdify(phi, phidot.xreplace(num))
    lo, hi = phi_guess - 0.2, phi_guess + 0.2
    if np.sign(fp(lo)) == np.sign(fp(hi)):
        raise ValueError("bench set-up: no steady wall angle near the reference's")
    root = brentq(fp, lo, hi, xtol=1e-14)
    return float(fq(root))


def dw_benches(ir, values):
    import numpy as np

    from ..benches import (Bench, Dc, Metric, Pulse, branch_resistance_at, extreme_excursion, mean_rate,
                           mean_rate_per_turn)
    from ..reference import ReferenceModel, figures
    from .write_line import line_drive

    figs = figures(ir)
    L = values["track_length"]
    dw = figs["wall_width"]
    cross = values["track_width"] * values["t_hm"]
    pitch = values["pin_pitch"]
    x_m, l_m = values["mtj_start"], values["mtj_length"]
    tmax = 1e-12
    benches: list[Bench] = []
    # ---- DC: line resistance and read-out against the slice integral
    benches.append(line_resistance_bench(figs["r_line"]))
    for frac in (0.25, 0.5, 0.75):
        q0 = x_m + frac * l_m
        model = ReferenceModel(ir, {"wall0": q0})
        metrics = []
        for v in (-0.2, 0.05, 0.2):
            ref = model.dc({"t": np.array([v]), "w1": np.zeros(1), "w2": np.zeros(1)})
            v_j = float(ref.voltages["t"][0] - ref.voltages["mid"][0])
            expect = slice_resistance(values, dw, q0, v_j)
            metrics.append(Metric(f"R(t-mid) at {v:+.2f} V", "ohm", branch_resistance_at("t", "mid", v), 1e-3, 0.0,
                                  WHY_SLICES, expect=(expect, 1e-6 * expect)))
        benches.append(Bench(f"read_q{int(frac * 100)}", f"junction read with the wall {frac:g} of the way along the "
                             f"junction (q = {q0 * 1e9:.1f} nm): t swept -0.2..0.2 V", "dc", {}, metrics,
                             instance={"wall0": q0}, sweep=("t", -0.2, 0.2, 0.05), plot=("resistance",)))
    # ---- SOT-driven steady velocity (pinning off), linear to saturating regime
    if values["dmi"] != 0.0:
        sign_v = _sot_direction(values)  # wall velocity for current along +x
        for k in (0.1, 0.3, 1.0, 3.0):
            j = k * figs["j_half"]
            start = 0.9 * L if sign_v < 0 else 0.1 * L
            inst = {"h_dep": 0.0, "wall0": start}
            model = ReferenceModel(ir, inst)
            drive = line_drive(model, j * cross)
            drives = {n: (Pulse(0.0, v, 0.0, PULSE_RISE, PULSE_RISE, 1.0) if v else Dc(0.0)) for n, v in drive.items()}
            probe = _probe(model, drives, _travel_time(L, dw, figs["v_dmi"], k))
            v_ss = steady_sot_velocity(model, j, values, float(probe.states["phi"][-1]))
            t_a, t_b = _settled_window(probe, L, v_ss)
            h_sh = torques.spin_torque_field(j, values["theta_sh"], values["ms"], values["t_free"])
            v_0 = float(domain_wall.sot_velocity_without_hk(h_sh, values["alpha"], figs["h_dmi"], dw)
                        .xreplace(model.num))
            benches.append(Bench(
                f"velocity_{k:g}jhalf", f"SOT-driven wall, no pinning: J = {k:g} x J_1/2 = {j / 1e10:.1f} MA/cm^2; "
                f"speed over [{t_a * 1e9:.3f}, {t_b * 1e9:.3f}] ns; 1D steady state {v_ss:.5g} m/s, closed form "
                f"without H_K {v_0:.5g} m/s (Thiaville et al. 2012), v_D = {figs['v_dmi']:.5g} m/s",
                "tran", drives,
                [Metric("wall velocity", "m/s", mean_rate("xw", t_a, t_b, L), 2e-3, 0.0, WHY_V + WHY_V_EXPECT,
                        expect=(v_ss, 5e-3 * abs(v_ss)))],
                instance=inst, t_stop=t_b + 0.02e-9, t_step=1e-11, max_step=tmax, plot=("state:xw", "state:phi")))
    # ---- temperature: Ms(T), K(T) change the wall width, the DMI field and the torque; the same
    # current density (J_1/2 at tnom) at each bench temperature
    if values["dmi"] != 0.0:
        from ..constants import ZERO_CELSIUS
        from .stt_mtj import BENCH_TEMPERATURES_C

        j = figs["j_half"]
        sign_v = _sot_direction(values)
        for t_c in BENCH_TEMPERATURES_C:
            t_k = t_c + ZERO_CELSIUS
            tag = f"{t_c:+.0f}C".replace("+", "p").replace("-", "m")
            inst = {"h_dep": 0.0, "wall0": 0.9 * L if sign_v < 0 else 0.1 * L}
            model = ReferenceModel(ir, inst, temperature=t_k)
            drive = line_drive(model, j * cross)
            drives = {n: (Pulse(0.0, v, 0.0, PULSE_RISE, PULSE_RISE, 1.0) if v else Dc(0.0)) for n, v in drive.items()}
            probe = _probe(model, drives, _travel_time(L, dw, figs["v_dmi"], 1.0))
            v_probe = float(np.mean(np.diff(probe.states["xw"][-50:]) / np.diff(probe.t[-50:]))) * L
            t_a, t_b = _settled_window(probe, L, v_probe)
            benches.append(Bench(
                f"temp_velocity_{tag}", f"SOT-driven wall at {t_c:g} degC, J = {j / 1e10:.1f} MA/cm^2 (J_1/2 at tnom), "
                f"no pinning", "tran", drives,
                [Metric("wall velocity", "m/s", mean_rate("xw", t_a, t_b, L), 2e-3, 0.0, WHY_V)],
                instance=inst, t_stop=t_b + 0.02e-9, t_step=1e-11, max_step=tmax, plot=("state:xw",),
                temperature=t_k))
    # ---- field-driven, no pinning: below and above the Walker field of this card (DMI included)
    benches += _field_benches(ir, values, figs)
    if values["dmi"] == 0.0 or values["h_dep"] <= 0.0:
        return benches
    # ---- pinning: no motion below the depinning current; steps and levels above it
    j_dep = figs["j_dep"]
    toward_w2 = _sot_direction(values)  # current sign that moves the wall to w2
    q_home = round((x_m + 0.5 * l_m) / pitch) * pitch
    inst = {"wall0": q_home}
    model = ReferenceModel(ir, inst)
    drive = line_drive(model, -toward_w2 * 0.8 * j_dep * cross)
    drives = {n: (Pulse(0.0, v, 0.1e-9, PULSE_RISE, PULSE_RISE, 2e-9) if v else Dc(0.0)) for n, v in drive.items()}
    benches.append(Bench(
        "hold_0.8jdep", f"sub-threshold pulse, 0.8 x J_dep ({0.8 * j_dep / 1e10:.2f} MA/cm^2, 2 ns): the wall stays in "
        f"its pinning well at q = {q_home * 1e9:.0f} nm",
        "tran", drives,
        [Metric("largest displacement", "m", extreme_excursion("xw", L), 0.0, 0.01 * pitch, WHY_PIN,
                expect=(0.0, 0.3 * pitch)),
         Metric("final position", "m", lambda tr: float(tr.states["xw"][-1] * L), 0.0, 0.01 * pitch, WHY_PIN,
                expect=(q_home, 0.01 * pitch))],
        instance=inst, t_stop=4e-9, t_step=1e-11, max_step=2e-12, plot=("state:xw", "current:w1")))
    benches.append(_pulse_train(ir, values, figs, toward_w2))
    benches.append(_long_pulse(ir, values, figs, toward_w2))
    return benches


def _field_benches(ir, values, figs) -> list:
    """Field-driven wall, pinning off, at 0.5 and 2 x the card's Walker field h_walker (DMI, wall
    anisotropy and hx included; hy set to 0 where the card has one), against the exact 1D results:
    gamma0 Delta hz/alpha below it, (Delta/alpha)(gamma0 hz - 2 pi/T) above it with the precession
    period T by quadrature (physics/domain_wall.py).  Then, with dmi = 0 on the instance (and hx = hy = 0),
    the same at 0.5 and 2 x h_walker_no_dmi against Schryer & Walker's closed forms."""
    import numpy as np

    from ..benches import Bench, Metric, mean_rate, mean_rate_per_turn
    from ..reference import ReferenceModel

    L = values["track_length"]
    dw = figs["wall_width"]
    alpha = values["alpha"]
    tmax = 1e-12
    phi = sp.Symbol("phi", real=True)
    cases = [("", figs["h_walker"], {"hy": 0.0} if values["hy"] else {})]
    if values["dmi"] != 0.0:
        zero = {n: 0.0 for n in ("hx", "hy") if values[n]}
        cases.append(("_nodmi", figs["h_walker_no_dmi"], dict(zero, dmi=0.0)))
    benches = []
    for tag, h_w, extra in cases:
        for k in (0.5, 2.0):
            hz = k * h_w
            inst = dict({"h_dep": 0.0, "hz": hz, "wall0": 0.2 * L}, **extra)
            model = ReferenceModel(ir, inst)
            if tag:  # no DMI: Schryer & Walker's closed forms
                closed = float(domain_wall.field_velocity(hz, h_w, alpha, dw).xreplace(model.num))
                source = "Schryer & Walker"
            else:  # the exact 1D results with DMI (physics/domain_wall.py)
                rate = 0.0
                if k > 1:
                    _, b = domain_wall.drive_terms(phi, 0.0, 0.0, 0.0, _num(model, "h_kwall"), _num(model, "h_dmi"),
                                                   values["hx"], 0.0, 0.0)
                    period = float(sp.N(domain_wall.precession_period_integral(hz, alpha, b / gamma0, phi)
                                        .xreplace(model.num), 15))
                    rate = 2 * np.pi / period
                closed = float(domain_wall.field_velocity_from_angle_rate(hz, rate, alpha, dw).xreplace(model.num))
                source = "1D model, exact"
            if k < 1:
                probe = _probe(model, {}, min(8e-9, 0.5 * L / abs(closed)))
                t_a, t_b = _settled_window(probe, L, closed)
                metric = mean_rate("xw", t_a, t_b, L)
                how = f"speed over [{t_a * 1e9:.3f}, {t_b * 1e9:.3f}] ns"
                t_stop = t_b + 0.02e-9
            else:
                if tag:
                    period = 2 * float(domain_wall.precession_period(hz, h_w, alpha).xreplace(model.num))
                metric = mean_rate_per_turn("xw", "phi", 0.05e-9, 1, L)
                how = "mean speed over one full turn (2 pi) of the wall angle"
                t_stop = 0.05e-9 + 1.1 * period
            which = "h_walker_no_dmi, with dmi = 0" if tag else "h_walker"
            benches.append(Bench(
                f"field{tag}_{k:g}hw", f"field-driven wall{', no DMI' if tag else ''}, no pinning: hz = {k:g} x "
                f"{which} = {hz * 4e-4 * np.pi:.3f} mT ({'below' if k < 1 else 'above'} the Walker field); {how}; "
                f"{source}: {closed:.5g} m/s",
                "tran", {}, [Metric("wall velocity", "m/s", metric, 2e-3, 0.0,
                                    WHY_V + (WHY_VW_EXPECT if tag else WHY_VWD_EXPECT),
                                    expect=(closed, 5e-3 * abs(closed)))],
                instance=inst, t_stop=t_stop, t_step=1e-11, max_step=tmax, plot=("state:xw", "state:phi")))
    return benches


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

    g, _ = quad(slice_g, x0, x1, points=[min(max(q, x0), x1)], epsabs=0, epsrel=1e-13, limit=200)
    return 1.0 / g


def _sot_direction(values) -> float:
    """Sign of the SOT-driven wall velocity for current along +x (w1 to w2): the closed form of
    physics/domain_wall.py (its sign follows spin_orbit.spin_hall_polarisation), +sign(theta_sh dmi)."""
    import numpy as np

    v = domain_wall.sot_velocity_without_hk(np.sign(values["theta_sh"]), 1, np.sign(values["dmi"]), 1)
    return float(np.sign(float(sp.sympify(v).xreplace(const_values()))))


def _travel_time(length, width, v_d, k):
    """A probe time long enough for the wall angle to settle, short enough for the wall to stay
    clear of the track ends at the given drive."""
    return min(3e-9, 0.6 * length / max(v_d * min(k, 1.0), 1e-3))


def _train_drives(drive: dict, n_pulses, width, relax, read):
    """Pwl drives: a read of the junction (t at READ_BIAS, line ends at 0 V), then for each write
    pulse the line ends get +-I r, all ports rest for ``relax``, and t reads again.
    Returns the drives, the pulse end times, the read times and the end time."""
    from ..benches import Pwl

    pts = {n: [(0.0, 0.0)] for n in ("w1", "w2", "t")}
    t = 0.1e-9
    reads, ends = [], []

    def segment(levels, duration):
        nonlocal t
        for n in pts:
            v = levels[n]
            pts[n] += [(t, 0.0), (t + PULSE_RISE, v), (t + PULSE_RISE + duration, v),
                       (t + 2 * PULSE_RISE + duration, 0.0)]
        t += 2 * PULSE_RISE + duration

    read_levels = {"w1": 0.0, "w2": 0.0, "t": READ_BIAS}
    for k in range(n_pulses + 1):
        segment(read_levels, read)
        reads.append(t - PULSE_RISE)
        if k == n_pulses:
            break
        t += 0.1e-9
        segment(drive, width)
        ends.append(t)
        t += relax
    out = {}
    for n, p in pts.items():
        clean = [p[0]]
        for a in p[1:]:
            if a[0] > clean[-1][0]:
                clean.append(a)
        out[n] = Pwl(tuple(clean))
    return out, ends, reads, t + 0.1e-9


def _pulse_train(ir, values, figs, toward_w2):
    import numpy as np

    from ..benches import Bench, Metric, Pwl, resistance_at_time
    from ..reference import ReferenceModel
    from .write_line import line_drive

    L, pitch = values["track_length"], values["pin_pitch"]
    x_m, l_m = values["mtj_start"], values["mtj_length"]
    n_pulses = 4
    step = l_m / (n_pulses + 1)  # aim: the wall crosses the junction in n_pulses + 1 steps
    inst = {"wall0": np.ceil(x_m / pitch) * pitch}
    model = ReferenceModel(ir, inst)
    j = 2.0 * figs["j_dep"]
    drive = line_drive(model, toward_w2 * j * cross_section(values))
    # speed under this drive, pinning included, from a reference probe
    probe = {n: Pwl(((0.0, 0.0), (PULSE_RISE, v), (1.0, v))) for n, v in drive.items()}
    tr = model.transient(probe, 3e-9, t_eval=np.linspace(0, 3e-9, 3001), rtol=1e-9, atol=1e-12)
    speed = (tr.states["xw"][-1] - tr.states["xw"][1000]) * L / 2e-9
    if not speed > 0:
        raise ValueError("bench set-up: 2 x J_dep does not move the wall")
    width = float(np.round(step / speed / 1e-11) * 1e-11)
    for _ in range(8):  # keep each stop clear of a pinning maximum, so the wall lands in a well surely
        drives, ends, reads, t_end = _train_drives(drive, n_pulses, width, 1.0e-9, 0.4e-9)
        tr = model.transient(drives, t_end, t_eval=np.linspace(0, t_end, int(t_end / 1e-12) + 1), rtol=1e-9,
                             atol=1e-12)
        frac = [(np.interp(e, tr.t, tr.states["xw"]) * L / pitch) % 1.0 for e in ends]
        if all(abs(f - 0.5) > 0.15 for f in frac):
            break
        width *= 1.07
    metrics = [Metric(f"R after pulse {i}" if i else "R before the pulses", "ohm",
                      resistance_at_time("t", "mid", r), 1e-3, 0.0, WHY_LEVEL) for i, r in enumerate(reads)]
    r_p, r_ap = figs["r_p"], figs["r_ap"]

    def walks_down(tr) -> float:
        levels = [resistance_at_time("t", "mid", r)(tr) for r in reads]
        ok = all(b < a for a, b in zip(levels[:-1], levels[1:])) and all(0.99 * r_p < x < 1.01 * r_ap for x in levels)
        return 1.0 if ok else 0.0

    metrics.append(Metric("levels fall monotonically within [R_P, R_AP] (1 = yes)", "1", walks_down, 0.0, 0.5,
                          "a yes/no property", expect=(1.0, 0.0)))
    return Bench(
        "pulse_train", f"{n_pulses} write pulses of 2 x J_dep ({j / 1e10:.1f} MA/cm^2, {width * 1e9:.2f} ns) toward w2, "
        f"each followed by a {READ_BIAS:g} V read of the junction: the resistance walks down in steps",
        "tran", drives, metrics, instance=inst, t_stop=t_end, t_step=1e-11, max_step=2e-12,
        plot=("state:xw", "current:t"))


def _long_pulse(ir, values, figs, toward_w2):
    import numpy as np

    from ..benches import Bench, Dc, Metric, Pulse
    from ..reference import ReferenceModel
    from .write_line import line_drive

    L = values["track_length"]
    dw = figs["wall_width"]
    inst = {"wall0": values["mtj_start"]}
    model = ReferenceModel(ir, inst)
    j = 3.0 * figs["j_dep"]
    drive = line_drive(model, toward_w2 * j * cross_section(values))
    width = 10e-9
    drives = {n: (Pulse(0.0, v, 0.1e-9, PULSE_RISE, PULSE_RISE, width) if v else Dc(0.0)) for n, v in drive.items()}

    def largest(tr):
        return float(np.max(tr.states["xw"]) * L)

    return Bench(
        "long_pulse", f"a long pulse, 3 x J_dep for {width * 1e9:g} ns toward w2: the wall stops at the track end",
        "tran", drives,
        [Metric("final position", "m", lambda tr: float(tr.states["xw"][-1] * L), 1e-3, 0.0, WHY_END,
                expect=(L - 3 * dw, 3 * dw)),
         Metric("largest position", "m", largest, 1e-3, 0.0, WHY_END + "; every run must stay inside [0, track_length]",
                expect=(L / 2, L / 2))],
        instance=inst, t_stop=0.1e-9 + 2 * PULSE_RISE + width + 1e-9, t_step=1e-11, max_step=2e-12,
        plot=("state:xw", "current:w1"))


def cross_section(values) -> float:
    return values["track_width"] * values["t_hm"]
