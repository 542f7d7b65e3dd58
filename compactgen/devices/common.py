"""Building pieces shared by device kinds: parameter groups and the free-layer macrospin.

These compose physics blocks; they contain no equation of their own.
"""
from __future__ import annotations

import math

import sympy as sp

from compactgen.physics import anisotropy, geometry, macrospin, temperature, thermal, tunnelling
from compactgen.physics.constants import const_values, gamma0
from compactgen.model.ir import Constraint
from compactgen.model.params import ParamSpec

NM = 1e-9
KA_M = 1e3
OHM_UM2 = 1e-12
DEG = math.pi / 180


def free_layer_specs() -> list[ParamSpec]:
    g = "free layer"
    return [
        ParamSpec("diameter", "m", 40 * NM, 5 * NM, 1e-6, "free-layer (pillar) diameter", card_unit="nm", required=True, group="geometry", lo_open=True),
        ParamSpec("t_free", "m", 1.3 * NM, 0.3 * NM, 10 * NM, "free-layer thickness", card_unit="nm", required=True, group="geometry"),
        ParamSpec("ms", "A/m", 1.0e6, 1e4, 3e6, "saturation magnetisation of the free layer",
                  source="S. Ikeda et al., Nat. Mater. 9, 721 (2010) (CoFeB/MgO perpendicular junctions); the CoFeB range ~1.0-1.3 MA/m is from memory",
                  card_unit="MA/m", required=True, group=g),
        ParamSpec("ki", "J/m^2", 1.3e-3, 0.0, 1e-2, "interface anisotropy energy density",
                  source="S. Ikeda et al., Nat. Mater. 9, 721 (2010) (interface anisotropy of CoFeB/MgO); the range ~1.0-1.3 mJ/m^2 is from memory",
                  card_unit="mJ/m^2", required=True, group=g),
        ParamSpec("kv", "J/m^3", 0.0, -1e7, 1e7, "bulk uniaxial anisotropy energy density (perpendicular > 0)",
                  card_unit="J/m^3", group=g),
        ParamSpec("alpha", "1", 0.01, 1e-4, 1.0, "Gilbert damping",
                  source="CoFeB range ~0.005-0.03: from memory, no source", required=True, group=g),
        ParamSpec("demag_nz", "1", 1.0, 0.0, 1.0,
                  "axial demagnetising factor N_z (N_x = N_y = (1 - N_z)/2)",
                  computed="from diameter and t_free by [options] demag, unless given",
                  source="cylinder: D.-X. Chen, J. A. Brug, R. B. Goldfarb, IEEE Trans. Magn. 27, 3601 (1991)",
                  group=g),
        ParamSpec("hx", "A/m", 0.0, -1e7, 1e7, "external field along x (in plane)", card_unit="mT", group="fields"),
        ParamSpec("hy", "A/m", 0.0, -1e7, 1e7, "external field along y (in plane)", card_unit="mT", group="fields"),
        ParamSpec("hz", "A/m", 0.0, -1e7, 1e7, "external field along z (perpendicular, +z = reference direction)",
                  card_unit="mT", group="fields"),
        ParamSpec("tnom", "K", 300.15, 150.0, 500.0,
                  "temperature at which the parameters were measured; sets the thermal initial angle",
                  card_unit="degC", group="temperature"),
        ParamSpec("t_curie", "K", 1000.0, 450.0, 3000.0,
                  "Curie temperature of the free layer in Ms(T) = Ms(0)[1 - (T/T_c)^(3/2)]",
                  source="Bloch T^(3/2) law: common practice, no source; CoFeB T_c ~1000 K or more: from memory",
                  card_unit="K", group="temperature"),
        ParamSpec("aniso_exp", "1", 3.0, 1.0, 4.0,
                  "Callen-Callen exponent n of K(T) = K(tnom) [Ms(T)/Ms(tnom)]^n",
                  source="n = 3 single-ion: H. B. Callen and E. Callen, J. Phys. Chem. Solids 27, 1271 (1966) "
                         "(journal reference from memory); CoFeB/MgO n ~2-2.5: from memory, no source", group="temperature"),
        ParamSpec("dtemp", "K", 0.0, -200.0, 300.0,
                  "device temperature above the simulator temperature (self-heating, local hot spot)",
                  kind="instance", card_unit="K", group="temperature"),
    ]


def mtj_read_specs() -> list[ParamSpec]:
    g = "tunnel junction"
    return [
        ParamSpec("ra", "ohm*m^2", 5 * OHM_UM2, 0.05 * OHM_UM2, 1e4 * OHM_UM2,
                  "resistance-area product in the parallel state",
                  source="MgO junction range ~1-20 ohm um^2: from memory, no source", card_unit="ohm*um^2", required=True, group=g,
                  lo_open=True),
        ParamSpec("tmr0", "1", 1.5, 0.0, 10.0, "zero-bias TMR ratio (R_AP - R_P)/R_P",
                  source="CoFeB/MgO perpendicular junction range ~1.0-2.0 at room temperature: from memory, no source", required=True, group=g),
        ParamSpec("v_half", "V", 0.5, 0.02, 10.0, "bias at which the TMR ratio has halved",
                  source="bias law: common practice, no source; MgO range ~0.3-0.6 V: from memory", card_unit="V", group=g),
        ParamSpec("pol_decay", "1/K^1.5", 2e-5, 0.0, 1e-4,
                  "spin-polarisation decay alpha_sp in P(T) = P0 (1 - alpha_sp T^(3/2)) (TMR(T) through Julliere)",
                  source="C. H. Shang et al., Phys. Rev. B 58, R2917 (1998) (law seen; value illustrative)",
                  card_unit="1/K^1.5", group="temperature",
                  computed="from tmr0 and tnom unless given: 2e-05 1/K^1.5, lowered to (1 - P)/(2 tnom^1.5) where "
                           "tmr0 needs it. P = sqrt(tmr0/(2 + tmr0)) is the polarisation at tnom (Julliere); the "
                           "0 K polarisation P/(1 - pol_decay tnom^1.5) must stay below 1, so a given value must "
                           "be below (1 - P)/tnom^1.5 (at 27 degC: 3.5e-5 for tmr0 = 4, 1.7e-5 for tmr0 = 10)"),
    ]


def default_pol_decay(tmr0: float, tnom: float, kind_default: float = 2e-5) -> float:
    """The pol_decay a card gets when it gives none: the kind default, lowered where tmr0 is so
    high that it would put the zero-temperature polarisation P0 = P(tnom)/(1 - a tnom^1.5) at or
    above 1 (the constraint in mtj_conductance).  The lowered value keeps P0 halfway between
    P(tnom) and 1: a = (1 - P(tnom))/(2 tnom^1.5), so every tmr0 in [0, 10] at every tnom in the
    documented range has a valid default, with room left for the larger tmr0 of the ff corner
    and Monte Carlo draws."""
    p_nom = float(tunnelling.julliere_polarisation(tmr0))
    return min(kind_default, (1.0 - p_nom) / (2.0 * tnom ** 1.5))


def shared_defaults(table, values: dict[str, float], given: frozenset[str]) -> dict[str, float]:
    """Defaults every kind with a tunnel junction computes from other card values (after the
    kind's own ``derive_defaults``; ``table`` is the kind's ParamTable): pol_decay from tmr0 and
    tnom unless the card gives it."""
    if "pol_decay" in table and "pol_decay" not in given and {"tmr0", "tnom"} <= set(values):
        values = dict(values, pol_decay=default_pol_decay(values["tmr0"], values["tnom"],
                                                          table["pol_decay"].default))
    return values


def limit_specs(v_max: float = 1.2, j_max: float = 1.5e11) -> list[ParamSpec]:
    g = "calibrated range"
    return [
        ParamSpec("v_max", "V", v_max, 0.01, 10.0,
                  "largest |bias| across the barrier the model was calibrated for (stay well below breakdown)",
                  card_unit="V", group=g),
        ParamSpec("j_max", "A/m^2", j_max, 1e6, 1e14,
                  "largest |current density| the model was calibrated for", card_unit="MA/cm^2", group=g),
    ]


def orientation_specs() -> list[ParamSpec]:
    g = "instance"
    return [
        ParamSpec("state0", "1", 1.0, -1.0, 1.0,
                  "initial orientation: +1 parallel (m_z = +1), -1 antiparallel (sign is taken)", kind="instance",
                  group=g),
        ParamSpec("thermal_rest", "1", 1.0, 0.0, 1.0,
                  "1: the free layer starts at rest and stays there, so a write does not depend on when it comes "
                  "(stt-mtj: at its thermal angle exp(-gamma_E/2)/sqrt(Delta(T)) from the axis; with an in-plane "
                  "field: its static equilibrium in that field); 0: plain deterministic LLG from tilt0, relaxing "
                  "toward the axis",
                  kind="instance", group=g),
        ParamSpec("tilt0", "rad", 0.0, 0.0, 1.5,
                  "initial angle of the free layer from its axis when thermal_rest = 0 (0 = exactly on the axis: "
                  "a spin torque then never starts a write, the deterministic worst case); ignored when thermal_rest = 1",
                  kind="instance", group=g),
        ParamSpec("phi0", "rad", 0.0, -7.0, 7.0,
                  "initial azimuth of the free layer about z when thermal_rest = 0 (with tilt0: a drawn thermal "
                  "initial state)", kind="instance", group=g),
    ]


#: the card option that gives a macrospin kind Brown's thermal field in the circuit simulation
THERMAL_OPTION_NAME = "thermal_field"
#: noise steps per small-angle precession period when the instance leaves noise_step at 0
#: (benchmarks/bench_noise_step.py measured the Wong-Zakai convergence that sets it)
NOISE_STEPS_PER_PERIOD = 40


def thermal_option():
    """The [options] entry of the macrospin kinds: "off" (default) leaves the model as it was,
    "noise-sources" adds the thermal field as three noise inputs (ngspice transient-noise sources
    in the B-source library) switched by the instance parameter thermal_field."""
    from compactgen.devices.base import Option

    return Option(THERMAL_OPTION_NAME, ("off", "noise-sources"), "off",
                  "Brown's thermal field on the free layer in circuit simulation: noise-sources adds three "
                  "noise inputs per instance (ngspice B-source library), switched on by the instance parameter "
                  "thermal_field")


def thermal_specs() -> list[ParamSpec]:
    """The instance parameters of the thermal field (only in models whose card sets
    [options] thermal_field = "noise-sources")."""
    g = "thermal field"
    return [
        ParamSpec("thermal_field", "1", 0.0, 0.0, 2.0,
                  "Brown's thermal field on the free layer: 0 off; 1 piecewise-constant Gaussian samples (ngspice "
                  "trrandom, repeatable with .options seed=N); 2 linearly interpolated samples (ngspice trnoise, "
                  "not repeatable); B-source library only", kind="instance", group=g),
        ParamSpec("noise_step", "s", 0.0, 0.0, 1e-9,
                  f"sample step of the thermal field (it also caps the time step); 0 = the small-angle precession "
                  f"period at tnom / {NOISE_STEPS_PER_PERIOD}", kind="instance", card_unit="ps", group=g),
    ]


def thermal_enabled(options: dict[str, str] | None) -> bool:
    return (options or {}).get(THERMAL_OPTION_NAME, "off") != "off"


def cylinder_nz(values: dict[str, float], mode: str) -> float:
    if mode == "thin-film":
        return 1.0
    return geometry.cylinder_demag_nz(values["diameter"], values["t_free"])


#: the simulator temperature [K] ($temperature in Verilog-A, temper + 273.15 in ngspice)
TEMPERATURE = sp.Symbol("temp_k", positive=True)
#: names of the effective-field locals to which the stochastic solver adds Brown's thermal field
FIELD_LOCALS = ("heff_x", "heff_y", "heff_z")
#: name of the derived thermal-field strength D [(A/m)^2 s] at the device temperature
NOISE_STRENGTH = "hth_strength"


class Parts:
    """Accumulates derived expressions, locals and equations while a device is composed."""

    def __init__(self, P: dict[str, sp.Symbol]):
        self.P = P
        self.derived: list[tuple[sp.Symbol, sp.Expr]] = []
        self.locals: list[tuple[sp.Symbol, sp.Expr]] = []
        self.constraints: list[tuple[sp.Expr, str]] = []
        self.shared: dict[sp.Symbol, sp.Expr] = {}
        #: stochastic inputs (model/ir.NoiseInput), filled by macrospin_states with the thermal field
        self.noise: list = []
        #: temperature-dependent symbol -> its value at tnom (node scales must not depend on T)
        self.nominal: dict[sp.Symbol, sp.Symbol] = {}

    def d(self, name: str, expr, positive: bool = False) -> sp.Symbol:
        s = sp.Symbol(name, real=True, positive=True) if positive else sp.Symbol(name, real=True)
        self.derived.append((s, sp.sympify(expr)))
        return s

    def loc(self, name: str, expr, node_scale=None) -> sp.Symbol:
        """A bias/state-dependent quantity.  ``node_scale`` (parameter-only) marks one that several
        equations share: ngspice then computes it once on an auxiliary node (value/scale, O(1))
        instead of repeating its expression inside every B-source.  Temperature-dependent
        quantities in the scale are replaced by their tnom values (a scale only sets magnitudes)."""
        s = sp.Symbol(name, real=True)
        self.locals.append((s, sp.sympify(expr)))
        if node_scale is not None:
            self.shared[s] = sp.sympify(node_scale).xreplace(self.nominal)
        return s


def device_temperature(parts: Parts) -> sp.Symbol:
    """The derived device temperature T = simulator temperature + dtemp (defined once per model)."""
    for sym, _ in parts.derived:
        if sym.name == "temp_dev":
            return sym
    return parts.d("temp_dev", temperature.device_temperature(TEMPERATURE, parts.P["dtemp"]), positive=True)


def free_layer(parts: Parts, area):
    """Derived quantities of a perpendicular free layer; returns a dict of symbols.

    The card values hold at ``tnom``; the layer's quantities at the device temperature
    T = simulator temperature + dtemp follow Ms(T) (Bloch) and K(T) (Callen-Callen).  After this
    call ``parts.P["ms"]`` is Ms(T), so every later use of it in a device kind (torques, read-out,
    figures) is temperature dependent too.  In the returned dict ``hk``, ``hk_eff``, ``keff``,
    ``e_b``, ``delta_nom`` are the values at tnom (for time and node scales, which must not depend
    on temperature), ``ms_t``, ``hk_t``, ``hk_eff_t``, ``keff_t``, ``e_b_t``, ``delta_t`` the values
    at T.  The time scale ``tsc`` and the default thermal tilt use the tnom values.
    """
    P = parts.P
    ms_nom = P["ms"]
    ku = parts.d("ku", anisotropy.uniaxial_energy_density(P["kv"], P["ki"], P["t_free"]))
    hk = parts.d("hk", anisotropy.anisotropy_field(ku, ms_nom))
    nx = parts.d("demag_nx", (1 - P["demag_nz"]) / 2)
    hk_eff = parts.d("hk_eff", anisotropy.effective_anisotropy_field(hk, ms_nom, nx, P["demag_nz"]))
    parts.constraints.append(Constraint(hk_eff, "the effective anisotropy field H_k,eff = {value} must be positive "
                                        "(perpendicular free layer; raise ki or lower ms)", "A/m", "kA/m"))
    vol = parts.d("vol", area * P["t_free"], positive=True)
    keff = parts.d("keff", anisotropy.effective_energy_density(hk_eff, ms_nom))
    e_b = parts.d("e_b", thermal.barrier_energy(keff, vol))
    delta_nom = parts.d("delta_nom", thermal.thermal_stability(e_b, P["tnom"]))
    tsc = parts.d("tsc", 1 / (gamma0 * hk_eff))
    sgn = parts.d("sgn0", sp.Piecewise((1, P["state0"] >= 0), (-1, True)))
    # at the device temperature
    temp = device_temperature(parts)
    ms_ratio = parts.d("ms_ratio", temperature.magnetisation_ratio(temp, P["tnom"], P["t_curie"]), positive=True)
    ms_t = parts.d("ms_t", ms_nom * ms_ratio, positive=True)
    ku_t = parts.d("ku_t", temperature.callen_callen(ku, ms_ratio, P["aniso_exp"]))
    hk_t = parts.d("hk_t", anisotropy.anisotropy_field(ku_t, ms_t))
    hk_eff_t = parts.d("hk_eff_t", anisotropy.effective_anisotropy_field(hk_t, ms_t, nx, P["demag_nz"]))
    keff_t = parts.d("keff_t", anisotropy.effective_energy_density(hk_eff_t, ms_t))
    e_b_t = parts.d("e_b_t", thermal.barrier_energy(keff_t, vol))
    delta_t = parts.d("delta_t", thermal.thermal_stability(e_b_t, temp))
    strength = parts.d(NOISE_STRENGTH, thermal.thermal_field_strength(P["alpha"], ms_t, vol, temp), positive=True)
    rest = parts.d("rest_on", sp.Piecewise((1, P["thermal_rest"] >= 0.5), (0, True)))
    theta_th = parts.d("theta_th", thermal.thermal_rest_angle(delta_t), positive=True)
    P["ms"] = ms_t
    parts.nominal.update({ms_t: ms_nom, ku_t: ku, hk_t: hk, hk_eff_t: hk_eff, keff_t: keff, e_b_t: e_b,
                          delta_t: delta_nom})
    return dict(ku=ku, hk=hk, nx=nx, hk_eff=hk_eff, vol=vol, keff=keff, e_b=e_b, delta_nom=delta_nom,
                tsc=tsc, sgn0=sgn, ms_nom=ms_nom, temp=temp, ms_ratio=ms_ratio, ms_t=ms_t, ku_t=ku_t,
                hk_t=hk_t, hk_eff_t=hk_eff_t, keff_t=keff_t, e_b_t=e_b_t, delta_t=delta_t,
                noise_strength=strength, rest_on=rest, theta_th=theta_th)


def macrospin_states(parts: Parts, fl: dict, h_dl, h_fl, p, extra_torques=(), axial: bool = False):
    """Cartesian macrospin states (m_x, m_y, m_z): non-singular at both poles; |m| = 1 kept by
    the sphere-restoring term at rate 1/tsc.  ``extra_torques`` adds further (h_dl, h_fl, p)
    torques (the torque terms of the explicit LLG are linear in them, so they add).

    Rest state (instance parameter thermal_rest = 1): the free layer starts at rest.  ``axial``
    says the kind's torques act along z (p = z), so with no in-plane field the layer is axially
    symmetric: it is then held at its thermal rest angle by the thermal cone drift and integrated
    in the frame that co-rotates with its precession (physics/macrospin.py), so that rest is a
    fixed point and a write does not depend on when it comes.  With an in-plane field (or a
    non-axial torque) the rest state is the static equilibrium in that field.  thermal_rest = 0:
    plain LLG in the laboratory frame from tilt0/phi0.
    Returns (state symbols, states)."""
    from compactgen.model.ir import State

    P = parts.P
    m = [sp.Symbol(n, real=True) for n in ("mx", "my", "mz")]
    n = (fl["nx"], fl["nx"], P["demag_nz"])
    heff = anisotropy.effective_field(m, fl.get("hk_t", fl["hk"]), P["ms"], n, (P["hx"], P["hy"], P["hz"]))
    rest = fl["rest_on"]
    thermal_on = sp.Integer(0)
    if "thermal_field" in P:
        heff, thermal_on = thermal_field_inputs(parts, fl, heff)
    hx_ = parts.loc(FIELD_LOCALS[0], heff[0])
    hy_ = parts.loc(FIELD_LOCALS[1], heff[1])
    hz_ = parts.loc(FIELD_LOCALS[2], heff[2])
    no_inplane = sp.Piecewise((1, sp.Eq(P["hx"] ** 2 + P["hy"] ** 2, 0)), (0, True))
    # the co-rotating frame and its thermal cone drift stand in for the thermal field: with the
    # field itself on, the layer moves in the laboratory frame
    sym = parts.d("axisym", rest * no_inplane * (1 - thermal_on)) if axial else sp.Integer(0)
    az = parts.d("c_azimuthal", 1 - sym) if axial else 1
    rhs = macrospin.llg_explicit(m, (hx_, hy_, hz_), P["alpha"], h_dl, h_fl, p, azimuthal=az)
    for dl, fl_, pp in extra_torques:
        rhs = rhs + macrospin.llg_explicit(m, (0, 0, 0), P["alpha"], dl, fl_, pp, azimuthal=az)
    s_th2 = sp.sin(fl["theta_th"]) ** 2
    if axial:
        # drift rate whose fixed point is the thermal rest angle (zero field along z), regularised
        # inside a tenth of that angle
        eps2 = parts.d("cone_eps2", s_th2 / 100)
        pull = parts.d("cone_pull", macrospin.damping_pull_rate(P["alpha"], fl["hk_eff_t"]))
        rate = parts.d("cone_rate", sym * pull * (s_th2 + eps2))
        rhs = rhs + macrospin.thermal_cone_drift(m, rate, eps2)
    rhs = rhs + macrospin.sphere_restoring(m, 1 / fl["tsc"])
    # the rest state: the drift's fixed point (with hz, one fixed-point step from the zero-field
    # one), or the static equilibrium in the in-plane field
    h_ip = sp.sqrt(P["hx"] ** 2 + P["hy"] ** 2)
    s_eq, _ = anisotropy.tilted_rest_state(fl["hk_eff_t"], h_ip, fl["sgn0"] * P["hz"])
    if axial:
        s2_rest = macrospin.cone_rest_sin2(fl["hk_eff_t"], fl["sgn0"] * P["hz"], s_th2, eps2)
        # (with the thermal field on, the rest state is still the start: the thermal angle)
        at_cone = sym > 0 if thermal_on == 0 else rest * no_inplane > 0
        s_eq = sp.Piecewise((sp.sqrt(s2_rest), at_cone), (s_eq, True))
    s_rest = parts.d("sin_rest", s_eq)
    h_ip_safe = sp.sqrt(P["hx"] ** 2 + P["hy"] ** 2 + sp.Float(1e-30))  # finite where there is no field
    ux = parts.d("ux_rest", sp.Piecewise((1, sp.Eq(h_ip, 0)), (P["hx"] / h_ip_safe, True)))
    uy = parts.d("uy_rest", P["hy"] / h_ip_safe)
    init = [sp.Piecewise((s_rest * ux, rest > 0), (sp.sin(P["tilt0"]) * sp.cos(P["phi0"]), True)),
            sp.Piecewise((s_rest * uy, rest > 0), (sp.sin(P["tilt0"]) * sp.sin(P["phi0"]), True)),
            fl["sgn0"] * sp.Piecewise((sp.sqrt(1 - s_rest**2), rest > 0), (sp.cos(P["tilt0"]), True))]
    descs = ["free-layer m_x", "free-layer m_y", "free-layer m_z (+1 = parallel to the reference layer)"]
    states = [State(str(s), s, r, i, dsc) for s, r, i, dsc in zip(m, rhs, init, descs)]
    return m, states


def thermal_field_inputs(parts: Parts, fl: dict, heff):
    """Brown's thermal field as three noise inputs added to the effective field: H_th,i =
    on sqrt(D/dt_n) n_i with n_i unit-rms Gaussian samples every noise step dt_n (ngspice: noise
    sources on nodes nth_x, nth_y, nth_z), D the strength at the device temperature
    (physics/thermal.thermal_field_strength, the derived ``hth_strength``).  Returns (field with
    the noise added, the on switch)."""
    from compactgen.model.ir import NoiseInput

    P = parts.P
    on = parts.d("thermal_on", sp.Piecewise((1, P["thermal_field"] >= 0.5), (0, True)))
    n = (fl["nx"], fl["nx"], P["demag_nz"])
    period = 1 / macrospin.kittel_frequency(0, fl["hk"], fl["ms_nom"], n)
    step = parts.d("noise_dt", sp.Piecewise((P["noise_step"], P["noise_step"] > 0),
                                            (period / NOISE_STEPS_PER_PERIOD, True)), positive=True)
    rms = parts.d("hth_rms", on * thermal.thermal_field_rms(fl["noise_strength"], step))
    out = []
    for comp, h in zip("xyz", heff):
        sym = sp.Symbol(f"nth_{comp}", real=True)
        parts.noise.append(NoiseInput(f"nth_{comp}", sym, f"thermal-field noise, {comp} component (unit rms)"))
        out.append(h + rms * sym)
    return out, on


def mtj_conductance(parts: Parts, area, v, cos_theta):
    """Junction conductance with TMR(T): the card's tmr0 holds at tnom; the spin polarisation of
    Julliere's formula follows Shang's P(T).  After this call ``parts.P["tmr0"]`` is TMR(T)."""
    P = parts.P
    if {"pol_decay", "tnom", "dtemp"} <= set(P):
        p_nom = parts.d("pol_nom", tunnelling.julliere_polarisation(P["tmr0"]), positive=True)
        bound = (1 - p_nom) / P["tnom"] ** sp.Rational(3, 2)
        parts.constraints.append(Constraint(
            bound - P["pol_decay"],
            "{pol_decay} must be below (1 - P)/tnom^1.5 = {bound} for {tmr0} at {tnom} (P = sqrt(tmr0/(2 + tmr0)), "
            "else the spin polarisation would exceed 1 at low temperature); lower pol_decay, or leave it out of "
            "the card to have it computed", "1/K^1.5", shown=(("bound", bound),)))
        temp = device_temperature(parts)
        pol_t = parts.d("pol_t", p_nom * temperature.polarisation_ratio(temp, P["tnom"], P["pol_decay"]))
        P["tmr0"] = parts.d("tmr_t", tunnelling.julliere_tmr(pol_t, pol_t))
    return parts.loc("g_mtj", tunnelling.mtj_conductance(P["ra"], area, P["tmr0"], P["v_half"], v, cos_theta),
                     node_scale=area / P["ra"])


def pillar_free_layer(kind, values: dict[str, float], varied, options: dict[str, str] | None = None):
    """The start every pillar-based kind shares: parameter table with the card values, a Parts
    accumulator, the disk area, process variation of ``varied``, then the free layer.  With
    [options] thermal_field on, the table gains the thermal field's instance parameters.
    Returns (table, P, parts, area, free-layer dict)."""
    from compactgen.model.params import ParamTable
    from compactgen.model.variation import apply_variation

    table = kind.table_with(values)
    if thermal_enabled(options):
        table = ParamTable(list(table) + thermal_specs())
    P = table.symbols()
    parts = Parts(P)
    area = parts.d("area_fl", geometry.disk_area(P["diameter"]), positive=True)
    apply_variation(parts, varied, area)
    return table, P, parts, area, free_layer(parts, area)


__all__ = ["Parts", "pillar_free_layer", "free_layer", "macrospin_states", "mtj_conductance", "const_values"]
