"""Forward models: what each measurement type predicts from a parameter dictionary.

The stt-mtj models are built from the card's own ModelIR (the same sympy expressions the
Verilog-A, the ngspice subcircuit and the reference solver print): the junction conductance
``g_mtj(v, m_z)``, the effective anisotropy field ``hk_eff``, the thermal stability factor
``delta_nom`` (evaluated at the data temperature, which becomes the fitted card's tnom), the
critical current ``i_c0`` and the precessional time scale ``tau_prec``.  What the compact
model does not contain (the statistics of switching) comes from physics blocks:
``coercivity`` (Sharrock-type switching field), ``thermal.activated_switching_time`` and
``switching_probability``, ``switching.switching_integral`` (precessional regime).

Switching probability, per pulse (PHYSICS 4.2, 4.3), with i = |I|/I_c0:
  i < 1: P = 1 - exp(-t/tau),  tau = tau0 exp[Delta (1 - i)^n]  (n = ``activation_exponent``)
  i > 1: P = exp(-Delta theta_min^2),  t = tau_prec * switching_integral(i, theta_min)
Neither form holds close to i = 1; data there are fitted but flagged in the report.
Voltage pulses use the current of the starting state, I = V g(V, m_z0) (the change of
current while the layer turns is neglected).

The dw-mtj wall-velocity model (``wall_block``) is the steady state of the card's own wall
equations, from its ModelIR through ``calibrate.wall``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import sympy as sp

from compactgen.model.constants import MU0
from compactgen.errors import DataError
from compactgen.model.params import ParamSpec
from compactgen.physics import coercivity, switching, switching_probability, thermal
from compactgen.jobs.calibrate.data import Dataset
from compactgen.jobs.calibrate.fit import Block

#: parameters of the data that the compact model does not carry (reported, kept in [provenance])
NUISANCE_SPECS: dict[str, ParamSpec] = {
    "attempt_time": ParamSpec(
        "attempt_time", "s", 1e-9, 1e-13, 1e-5, "attempt time tau0 of thermally activated switching",
        source="tau0 ~ 1 ns by convention (common practice, no source); Brown's prefactor gives ~0.1 ns: W. F. Brown, Phys. Rev. 130, 1677 (1963)", card_unit="ns"),
    "activation_exponent": ParamSpec(
        "activation_exponent", "1", 2.0, 0.5, 4.0, "exponent n of tau = tau0 exp[Delta (1 - I/I_c0)^n]",
        source="n = 1: R. H. Koch, J. A. Katine, J. Z. Sun, PRL 92, 088302 (2004); n = 2: T. Taniguchi, "
               "H. Imamura, arXiv:1010.5845"),
    "offset_field": ParamSpec(
        "offset_field", "A/m", 0.0, -2e6, 2e6, "offset (stray) field that shifts the R-H loop along +z",
        card_unit="mT"),
}


def nuisance_from(card) -> dict[str, float]:
    """Nuisance values stored in a card's [provenance.nuisance] table (a truth card, a fitted card)."""
    from compactgen.model.units import to_si

    table = (card.provenance or {}).get("nuisance", {})
    out = {}
    for k, v in table.items():
        if k in NUISANCE_SPECS:
            out[k] = to_si(v, NUISANCE_SPECS[k].unit, where=f"{card.path}: [provenance.nuisance] {k}")
    return out


#: card parameters of stt-mtj the fit may free, and the measurement types that inform each
STT_FITTABLE = ("ra", "tmr0", "v_half", "ki", "ms", "alpha", "eta")
LOG_PARAMS = ("ra", "attempt_time")


# ---------------------------------------------------------------------------------------------
@dataclass
class SttFunctions:
    """Lambdified IR expressions of one stt-mtj card (parameter order = ``names``)."""

    names: list[str]
    g: object  # (params..., v, mz) -> conductance [S]
    hk_eff: object
    delta: object
    i_c0: object
    tau_p: object
    hc_ramp: object  # (params..., tau0, rate)
    hc_hold: object  # (params..., tau0, hold)
    spread_ramp: object  # (params..., tau0, rate): standard deviation of the switching field
    spread_hold: object  # (params..., tau0, hold)
    p_act: object  # (params..., tau0, n, t, i)
    integral: object  # (i, theta)
    p_prec: object  # (params..., theta)

    def args(self, values: dict[str, float]) -> list[float]:
        return [values[n] for n in self.names]


def expand_ir(ir, override: dict | None = None):
    """Parameter names and symbols of a ModelIR (table order), and its derived quantities and locals
    written out in parameters (locals also in states and voltage probes); ``override`` replaces the
    named locals by given expressions (e.g. a data column).  Returns (names, symbols, derived, locals)."""
    override = override or {}
    P = ir.params.symbols()
    names = ir.params.names()
    # the data temperature becomes the card's tnom, so temperature-dependent quantities are
    # evaluated at T = tnom
    full: dict = {ir.temperature: P["tnom"]} if "tnom" in P else {}
    for s, e in ir.derived:
        full[s] = sp.sympify(e).xreplace(full)
    loc: dict = {}
    for s, e in ir.locals:
        loc[s] = override[str(s)] if str(s) in override else sp.sympify(e).xreplace(full).xreplace(loc)
    return names, [P[n] for n in names], full, loc


def stt_functions(card) -> SttFunctions:
    ir = card.ir()
    names, psyms, full, loc = expand_ir(ir)
    figs = {f.name: sp.sympify(f.expr).xreplace(full) for f in ir.figures}
    by_name = {str(s): s for s in list(full) + list(loc) if s != ir.temperature}
    const = ir.constants
    v = next(iter(ir.voltages))
    mz = sp.Symbol("mz", real=True)
    g = loc[by_name["g_mtj"]]
    hk_eff = full[by_name["hk_eff"]]
    delta = full[by_name["delta_nom"]]
    tau0, rate, hold, t, i, theta, nexp = sp.symbols("tau0 rate hold t_pulse i_ratio theta n_exp", positive=True)

    def lam(extra, expr):
        return sp.lambdify([*psyms, *extra], sp.sympify(expr).xreplace(const), modules=["numpy", "scipy"])

    return SttFunctions(
        names=names,
        g=lam([v, mz], g),
        hk_eff=lam([], hk_eff),
        delta=lam([], delta),
        i_c0=lam([], figs["i_c0"]),
        tau_p=lam([], figs["tau_prec"]),
        hc_ramp=lam([tau0, rate], coercivity.ramp_switching_field(hk_eff, delta, tau0, rate)),
        hc_hold=lam([tau0, hold], coercivity.sharrock_switching_field(hk_eff, delta, tau0, hold)),
        spread_ramp=lam([tau0, rate], coercivity.switching_field_spread(
            hk_eff, delta, coercivity.ramp_switching_field(hk_eff, delta, tau0, rate))),
        spread_hold=lam([tau0, hold], coercivity.switching_field_spread(
            hk_eff, delta, coercivity.sharrock_switching_field(hk_eff, delta, tau0, hold))),
        p_act=lam([tau0, nexp, t, i], switching_probability.activated_switching_probability(
            t, thermal.activated_switching_time(tau0, delta, i, nexp))),
        integral=sp.lambdify([i, theta], switching.switching_integral(i, theta), modules="numpy"),
        p_prec=lam([theta], switching_probability.precessional_switching_probability(delta, theta)),
    )


def theta_min(fn: SttFunctions, i: np.ndarray, target: np.ndarray) -> np.ndarray:
    """Start angle from which the macrospin reaches the equator in ``target`` (units of tau_prec):
    switching_integral(i, theta) = target, solved by bisection in ln(theta) (the integral falls
    monotonically from +inf at theta -> 0 to 0 at theta = pi/2)."""
    lo = np.full(i.shape, math.log(1e-7))
    hi = np.full(i.shape, math.log(math.pi / 2))
    for _ in range(56):
        mid = 0.5 * (lo + hi)
        too_slow = fn.integral(i, np.exp(mid)) > target  # start angle too small
        lo = np.where(too_slow, mid, lo)
        hi = np.where(too_slow, hi, mid)
    return np.exp(0.5 * (lo + hi))


def switching_probability_of(fn: SttFunctions, values: dict[str, float], current: np.ndarray,
                             width: np.ndarray) -> np.ndarray:
    """Probability that a pulse of |current| and ``width`` switches (both regimes)."""
    a = fn.args(values)
    ic0 = fn.i_c0(*a)
    i = np.abs(current) / ic0
    out = np.empty(i.shape)
    low = i < 1.0
    if np.any(low):
        out[low] = fn.p_act(*a, values["attempt_time"], values["activation_exponent"], width[low], i[low])
    high = ~low
    if np.any(high):
        ih = np.maximum(i[high], 1.0 + 1e-9)
        th = theta_min(fn, ih, width[high] / fn.tau_p(*a))
        out[high] = fn.p_prec(*a, th)
    return out


# ---------------------------------------------------------------------------------------------
@dataclass
class LoopSummary:
    """An R-H file reduced to what the model predicts: plateau resistances and switching fields."""

    r_p: float
    r_p_se: float
    r_ap: float
    r_ap_se: float
    h_up: list[float]  # AP -> P switching field of each rising branch [A/m]
    h_down: list[float]  # P -> AP switching field of each falling branch
    step: float  # field step [A/m]
    threshold: float
    n_p: int
    n_ap: int
    notes: list[str] = field(default_factory=list)


def reduce_loops(ds: Dataset) -> LoopSummary:
    h = ds.columns["field"]
    r = ds.columns["resistance"]
    lo, hi = np.percentile(r, [5, 95])
    if not hi > lo * 1.001:
        raise DataError(f"{ds.path}: the resistance does not switch between two levels (5th/95th percentile "
                        f"{lo:.6g}/{hi:.6g} ohm); no loop to fit")
    thr = 0.5 * (lo + hi)
    ap = r > thr
    loops = ds.columns.get("loop")
    groups = [np.arange(len(h))] if loops is None else [np.nonzero(loops == k)[0] for k in np.unique(loops)]
    h_up, h_down, steps = [], [], []
    for idx in groups:
        hh, aa = h[idx], ap[idx]
        d = np.diff(hh)
        steps.extend(np.abs(d[d != 0]).tolist())
        sign = np.sign(d)
        # branches: runs of equal sweep direction
        start = 0
        for k in range(1, len(d) + 1):
            if k == len(d) or (sign[k] != sign[start] and sign[k] != 0):
                seg = slice(start, k + 1)
                hs, as_ = hh[seg], aa[seg]
                flips = np.nonzero(as_[1:] != as_[:-1])[0]
                if len(flips) > 1:
                    raise DataError(
                        f"{ds.where(int(idx[start + flips[0] + 1]), 'resistance')}: the state switches {len(flips)} "
                        f"times while the field {'rises' if sign[start] > 0 else 'falls'} monotonically (lines "
                        f"{ds.lines[idx[start]]} to {ds.lines[idx[k]]}); a loop branch switches once, so the rows "
                        "are out of order (a file sorted by field merges both branches), or the device shows "
                        "telegraph noise, which this fit does not model")
                if len(hs) > 2 and as_[0] != as_[-1]:
                    last_old = np.nonzero(as_ == as_[0])[0].max()
                    h_sw = 0.5 * (hs[last_old] + hs[min(last_old + 1, len(hs) - 1)])
                    rising = sign[start] > 0
                    to_p = bool(as_[0]) and not as_[-1]
                    if rising != to_p:
                        row = int(idx[start + last_old])
                        raise DataError(
                            f"{ds.where(row, 'field')}: the loop switches to {'P' if to_p else 'AP'} while the field "
                            f"{'rises' if rising else 'falls'}; the field column must be positive along the reference "
                            "layer (a positive field favours the parallel state): flip its sign")
                    (h_up if rising else h_down).append(float(h_sw))
                start = k
    if not h_up or not h_down:
        raise DataError(f"{ds.path}: no complete loop (need a rising branch that switches AP->P and a falling "
                        "branch that switches P->AP)")
    step = float(np.median(steps)) if steps else 0.0
    rp, rap = r[~ap], r[ap]
    se = lambda x: float(np.std(x, ddof=1) / math.sqrt(len(x))) if len(x) > 1 else float("nan")  # noqa: E731
    return LoopSummary(float(np.mean(rp)), se(rp), float(np.mean(rap)), se(rap), h_up, h_down, step, float(thr),
                       int(len(rp)), int(len(rap)))


# ---------------------------------------------------------------------------------------------
def _temperature(ds: Dataset) -> float:
    return float(ds.meta_si("temperature"))


def _signed_current_sign(ds: Dataset) -> float:
    return 1.0 if ds.meta_si("polarity") == "top-to-bottom" else -1.0


def stt_blocks(fn: SttFunctions, datasets: list[Dataset]) -> list[Block]:
    """One or more likelihood blocks per dataset for an stt-mtj card."""
    blocks: list[Block] = []
    for ds in datasets:
        if ds.kind == "resistance-bias":
            blocks.append(_bias_block(fn, ds))
        elif ds.kind == "resistance-field":
            blocks.extend(_loop_blocks(fn, ds))
        elif ds.kind == "switching":
            blocks.append(_switching_block(fn, ds))
        else:
            raise DataError(f"{ds.path}: a {ds.kind} file cannot be fitted to an stt-mtj card "
                            "(it needs a domain-wall device kind)")
    return blocks


def _with(values: dict[str, float], **kw) -> dict[str, float]:
    out = dict(values)
    out.update(kw)
    return out


def _bias_block(fn: SttFunctions, ds: Dataset) -> Block:
    v = ds.columns["voltage"]
    info = {"dataset": ds, "x": v, "xlabel": "bias [V]", "xunit": "V"}
    vd = np.linspace(float(v.min()), float(v.max()), 161)
    if "tmr" in ds.columns:
        def predict(values):
            a = fn.args(values)
            return fn.g(*a, v, 1.0) / fn.g(*a, v, -1.0) - 1.0

        def curves(values):
            a = fn.args(values)
            return {"TMR": (vd, fn.g(*a, vd, 1.0) / fn.g(*a, vd, -1.0) - 1.0)}
        y = ds.columns["tmr"]
        return Block(f"{ds.name}: TMR vs bias", "gaussian", predict, y, sigma=0.01 * max(np.max(np.abs(y)), 1e-3),
                     uses=("tmr0", "v_half"), info={**info, "ylabel": "TMR [-]", "what": "tmr", "curves": curves,
                                                    "group": np.full(v.size, "TMR")})
    mz = np.where(ds.columns["state"] == "P", 1.0, -1.0)
    group = np.where(mz > 0, "P", "AP")
    if "resistance" in ds.columns:
        def predict(values):
            return 1.0 / fn.g(*fn.args(values), v, mz)

        def curves(values):
            a = fn.args(values)
            return {"P": (vd, 1.0 / fn.g(*a, vd, 1.0)), "AP": (vd, 1.0 / fn.g(*a, vd, -1.0))}
        return Block(f"{ds.name}: R vs bias", "gaussian", predict, ds.columns["resistance"], sigma=0.01, log=True,
                     uses=("ra", "tmr0", "v_half"), info={**info, "ylabel": "resistance [ohm]", "what": "resistance",
                                                          "group": group, "curves": curves})
    i = ds.columns["current"]

    def predict_i(values):
        return v * fn.g(*fn.args(values), v, mz)

    def curves_i(values):
        a = fn.args(values)
        return {"P": (vd, vd * fn.g(*a, vd, 1.0)), "AP": (vd, vd * fn.g(*a, vd, -1.0))}
    sigma_i = 0.01 * np.maximum(np.abs(i), 0.02 * float(np.max(np.abs(i))))  # relative, with a floor near 0 V
    return Block(f"{ds.name}: I vs bias", "gaussian", predict_i, i, sigma=sigma_i,
                 uses=("ra", "tmr0", "v_half"), info={**info, "ylabel": "current [A]", "what": "current",
                                                      "group": group, "curves": curves_i})


def _loop_blocks(fn: SttFunctions, ds: Dataset) -> list[Block]:
    temp = _temperature(ds)
    v_read = float(ds.meta_si("read_bias"))
    s = reduce_loops(ds)
    if "sweep_rate" in ds.meta:
        rate = abs(float(ds.meta_si("sweep_rate")))
        hc = lambda a, vals: fn.hc_ramp(*a, vals["attempt_time"], rate)  # noqa: E731
        spread = lambda a, vals: fn.spread_ramp(*a, vals["attempt_time"], rate)  # noqa: E731
        how = f"sweep rate {rate * MU0:.4g} T/s"
    else:
        hold = float(ds.meta_si("hold_time"))
        hc = lambda a, vals: fn.hc_hold(*a, vals["attempt_time"], hold)  # noqa: E731
        spread = lambda a, vals: fn.spread_hold(*a, vals["attempt_time"], hold)  # noqa: E731
        how = f"hold time {hold:.4g} s"
    up = np.r_[np.ones(len(s.h_up)), -np.ones(len(s.h_down))]  # +1: rising branch (AP -> P)
    quant = s.step / math.sqrt(12.0)  # field-step quantisation of one observed switching field

    def plateaus(values):
        a = fn.args(values)
        return 1.0 / np.array([fn.g(*a, v_read, 1.0), fn.g(*a, v_read, -1.0)])

    def fields(values):
        a = fn.args(_with(values, tnom=temp))
        return values["offset_field"] + up * hc(a, values)

    def field_sigma(values):
        """Thermal spread of one switching field (Gumbel width from the model) and the field step."""
        a = fn.args(_with(values, tnom=temp))
        sd = float(spread(a, values))
        if not (sd > 0 and math.isfinite(sd)):
            sd = float(np.std(np.r_[s.h_up, s.h_down]))
        return np.full(up.size, math.hypot(sd, quant))

    info = {"dataset": ds, "summary": s, "how": how, "v_read": v_read, "temperature": temp}
    return [
        Block(f"{ds.name}: plateaus R_P, R_AP", "gaussian", plateaus, [s.r_p, s.r_ap],
              sigma=[s.r_p_se, s.r_ap_se], estimate_scale=False, uses=("ra", "tmr0", "v_half"),
              info={**info, "what": "plateaus", "labels": ["R_P", "R_AP"], "unit": "ohm"}),
        Block(f"{ds.name}: switching fields", "gaussian", fields, np.r_[s.h_up, s.h_down],
              sigma=np.full(up.size, max(quant, 1.0)), estimate_scale=False, sigma_model=field_sigma,
              uses=("ki", "ms", "attempt_time", "offset_field"),
              info={**info, "what": "switching fields", "rising": up > 0, "unit": "A/m"}),
    ]


def _switching_block(fn: SttFunctions, ds: Dataset) -> Block:
    temp = _temperature(ds)
    sgn = _signed_current_sign(ds)
    direction = ds.columns["direction"]
    mz0 = np.where(direction == "P->AP", 1.0, -1.0)  # starting state
    width = ds.columns["pulse_width"]
    amp_col = "current" if "current" in ds.columns else "voltage"
    amp = ds.columns[amp_col] * sgn  # in the card's convention: positive writes P
    wrong = np.nonzero(np.sign(amp) != -mz0)[0]
    if wrong.size:
        r = int(wrong[0])
        raise DataError(f"{ds.where(r, amp_col)}: with '# polarity: {ds.meta_si('polarity')}' a "
                        f"{'positive' if ds.columns[amp_col][r] > 0 else 'zero or negative'} amplitude cannot write "
                        f"{direction[r]} (positive conventional current from the free-layer electrode writes P)")

    def current(values):
        if amp_col == "current":
            return amp
        return amp * fn.g(*fn.args(values), amp, mz0)

    def predict(values):
        vals = _with(values, tnom=temp)
        return switching_probability_of(fn, vals, current(values), width)

    uses = ("ki", "ms", "alpha", "eta", "attempt_time", "activation_exponent")
    if amp_col == "voltage":
        uses += ("ra", "tmr0", "v_half")
    raw = ds.columns[amp_col]
    unit = "uA" if amp_col == "current" else "V"
    shown = raw * (1e6 if amp_col == "current" else 1.0)
    group = np.array([f"{dr} {x:+.4g} {unit}" for dr, x in zip(direction, shown)])
    keys = list(dict.fromkeys(group))
    wd = np.logspace(math.log10(width.min()) - 0.3, math.log10(width.max()) + 0.3, 120)

    def curves(values):
        vals = _with(values, tnom=temp)
        cur = current(values)
        out = {}
        for key in keys:
            k = int(np.nonzero(group == key)[0][0])
            out[key] = (wd, switching_probability_of(fn, vals, np.full(wd.size, cur[k]), wd))
        return out

    return Block(f"{ds.name}: switching counts", "binomial", predict, ds.columns["switched"],
                 attempts=ds.columns["attempts"], uses=uses,
                 info={"dataset": ds, "what": "switching", "current": current, "width": width,
                       "direction": direction, "temperature": temp, "amp_col": amp_col, "x": width,
                       "xlabel": "pulse width [s]", "ylabel": "switching probability", "xscale": "log",
                       "group": group, "curves": curves})
