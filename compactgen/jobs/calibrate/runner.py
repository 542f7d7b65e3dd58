"""Fit a device card to measured data: which parameters are free, in which order, and the result.

What each measurement type pins down on an stt-mtj card (``DEFAULT_FREE`` below):

- resistance-bias (R-V, I-V, TMR-V): ra, tmr0, v_half.
- resistance-field (R-H): the plateaus give ra and tmr0 at the read bias; the switching
  fields give H_c = H_k,eff [1 - ...(Delta, tau0, sweep rate)], so ki (through H_k,eff) and
  the loop offset.  On their own, loops cannot separate H_k,eff, Delta and tau0.
- switching: the thermally activated points give Delta (hence ms together with H_k,eff),
  I_c0 (alpha/eta), tau0 and the exponent n; the precessional points give I_c0 and
  tau_prec = (1+alpha^2)/(alpha gamma0 H_k,eff), which separates alpha from eta.
Rules applied when the user does not choose: ms, attempt_time and activation_exponent are
free only with thermally activated switching data; alpha only with precessional switching
data (otherwise I_c0 fixes only alpha/eta and eta is fitted); offset_field only with loops.
Never fitted: diameter (taken from the data files, which must agree), t_free, kv, the
demagnetising factor (recomputed from the diameter), fields, limits; tnom becomes the data
temperature (the model has no temperature dependence of Ms, K, TMR: one temperature per fit).

A dw-mtj card takes wall-velocity files; ``calibrate.dw_fit`` decides what they determine.
"""
from __future__ import annotations

import math

import numpy as np

from compactgen.devices.common import shared_defaults
from compactgen.errors import DataError, InputError
from compactgen.jobs.calibrate.data import Dataset
from compactgen.jobs.calibrate.fit import Block, FitOutcome, fit
from compactgen.jobs.calibrate.models import LOG_PARAMS, NUISANCE_SPECS, STT_FITTABLE, stt_blocks, stt_functions
from compactgen.jobs.calibrate.result import CardFit


def _agree(datasets: list[Dataset], what: str, get, rel: float, unit: str) -> float | None:
    vals = [(ds, get(ds)) for ds in datasets]
    if not vals:
        return None
    ref_ds, ref = vals[0]
    for ds, v in vals[1:]:
        if abs(v - ref) > rel * abs(ref):
            raise DataError(f"{ds.path}: {what} {v:.6g} {unit} differs from {ref:.6g} {unit} in {ref_ds.path}; "
                            f"the card describes one device at one temperature: fit files of one {what} together")
    return ref


def prepare_values(card, datasets: list[Dataset]) -> tuple[dict[str, float], list[str]]:
    """Card values with the device geometry and temperature of the data; notes on what changed."""
    notes = []
    values = dict(card.values)
    diam = _agree(datasets, "diameter", lambda ds: math.sqrt(4 * ds.area() / math.pi), 0.005, "m")
    if diam is not None and abs(diam - values["diameter"]) > 1e-6 * values["diameter"]:
        notes.append(f"diameter set from the data: {diam * 1e9:.4g} nm (card: {values['diameter'] * 1e9:.4g} nm)")
        values["diameter"] = diam
        values = card.device.derive_defaults(values, card.options, card.given)  # demag_nz from the new diameter
    temp_sets = [ds for ds in datasets if ds.kind in ("resistance-field", "switching") or "temperature" in ds.meta]
    temp = _agree(temp_sets, "temperature", lambda ds: float(ds.meta_si("temperature")), 0.003, "K")
    if temp is not None:
        if abs(temp - values["tnom"]) > 1e-9:
            notes.append(f"tnom set to the data temperature {temp:.2f} K (card: {values['tnom']:.2f} K)")
        values["tnom"] = temp
        values = shared_defaults(card.device.table(), values, card.given)  # pol_decay follows tnom unless given
    for n, s in NUISANCE_SPECS.items():
        values.setdefault(n, s.default)
    return values, notes


def default_free(fn, datasets: list[Dataset], blocks: list[Block], values: dict[str, float]) -> tuple[list[str], list[str]]:
    """Free parameters implied by the data, and a note for every parameter fixed (held at its card
    value) and why."""
    kinds = {ds.kind for ds in datasets}
    used = set().union(*(b.uses for b in blocks))
    notes = []
    thermal = precessional = False
    ic0 = fn.i_c0(*fn.args(values))
    for b in blocks:
        if b.info.get("what") == "switching":
            cur = np.abs(b.info["current"](values))
            thermal |= bool(np.any(cur < 0.95 * ic0))
            precessional |= bool(np.any(cur > 1.05 * ic0))
    free = [n for n in (*STT_FITTABLE, *NUISANCE_SPECS) if n in used]
    rules = {
        "ms": (thermal, "ms fixed: without thermally activated switching data Delta and H_k,eff cannot be separated"),
        "attempt_time": (thermal, "attempt_time fixed at its start value: no thermally activated switching data"),
        "activation_exponent": (thermal, "activation_exponent fixed: no thermally activated switching data"),
        "alpha": (precessional, "alpha fixed: without precessional switching data only alpha/eta is determined "
                                "(eta is fitted)"),
        "v_half": ("resistance-bias" in kinds, "v_half fixed: no resistance-versus-bias data"),
    }
    out = []
    for n in free:
        ok, why = rules.get(n, (True, ""))
        if ok:
            out.append(n)
        else:
            notes.append(why)
    for n in STT_FITTABLE:
        if n not in used:
            notes.append(f"{n} fixed: none of the data depends on it")
    return out, notes


#: measurement types each card kind can be fitted to
ACCEPTS = {"stt-mtj": ("resistance-bias", "resistance-field", "switching"), "dw-mtj": ("wall-velocity",)}


def check_data_kinds(card, datasets: list[Dataset]) -> None:
    """A card kind the fit knows and data files of types that kind accepts (one-line errors)."""
    if card.kind not in ACCEPTS:
        raise InputError(f"fitting a card of kind {card.kind!r} is not wired yet (supported: {', '.join(ACCEPTS)})")
    if not datasets:
        raise InputError("no data files to fit")
    for ds in datasets:
        if ds.kind not in ACCEPTS[card.kind]:
            raise DataError(f"{ds.path}: {ds.kind} data cannot be fitted to a card of kind {card.kind} (it accepts "
                            f"{', '.join(ACCEPTS[card.kind])})")


def fit_card(card, datasets: list[Dataset], free: list[str] | None = None, fix: list[str] = (),
             progress=None, fn=None) -> CardFit:
    """Fit ``card`` (kind stt-mtj or dw-mtj) to ``datasets``; ``free``/``fix`` override the default choice.
    ``fn``: the card's ``stt_functions`` when the caller has them already (they hold no parameter
    values, so one set serves every device of a wafer; building them is most of a small fit's time)."""
    check_data_kinds(card, datasets)
    if card.kind == "dw-mtj":
        from compactgen.jobs.calibrate.dw_fit import fit_dw_card

        return fit_dw_card(card, datasets, free=free, fix=fix, progress=progress)
    start, notes = prepare_values(card, datasets)
    work = card.with_values({k: start[k] for k in card.values})
    fn = fn or stt_functions(work)
    blocks = stt_blocks(fn, datasets)
    specs = {s.name: s for s in card.device.table()}
    specs.update(NUISANCE_SPECS)
    auto_free, keep_notes = default_free(fn, datasets, blocks, start)
    chosen = list(auto_free) if free is None else list(free)
    for n in list(chosen) + list(fix):
        if n not in specs:
            raise InputError(f"unknown parameter {n!r}; fittable: {', '.join([*STT_FITTABLE, *NUISANCE_SPECS])}")
        if n not in (*STT_FITTABLE, *NUISANCE_SPECS):
            raise InputError(f"{n} cannot be fitted (fittable: {', '.join([*STT_FITTABLE, *NUISANCE_SPECS])})")
    chosen = [n for n in chosen if n not in set(fix)]
    if free is None:
        notes += keep_notes
    notes += [f"{n} fixed by request" for n in fix]
    stages = []
    values = dict(start)
    # stage 1: resistances alone (cheap, and the switching model needs sensible R for voltage pulses)
    r_blocks = [b for b in blocks if set(b.uses) <= {"ra", "tmr0", "v_half"}]
    r_free = [n for n in chosen if n in ("ra", "tmr0", "v_half")]
    if r_blocks and r_free and len(r_blocks) < len(blocks) and sum(len(b) for b in r_blocks) > len(r_free):
        o = fit(specs, values, r_free, r_blocks, log_params=LOG_PARAMS, progress=progress)
        values = dict(o.values)
        stages.append({"name": "resistances", "free": r_free, "nfev": o.nfev, "seconds": o.seconds})
    outcome = fit(specs, values, chosen, blocks, log_params=LOG_PARAMS, progress=progress)
    stages.append({"name": "joint", "free": chosen, "nfev": outcome.nfev, "seconds": outcome.seconds})
    final = dict(outcome.values)
    figs = _figures(fn, start, final, outcome)
    outcome.warnings.extend(_validity_warnings(fn, blocks, final))
    notes.extend(_range_notes(datasets, blocks, final))
    return CardFit(card, datasets, outcome, specs, start, final, chosen, notes, figs, blocks, stages)


def _validity_warnings(fn, blocks: list[Block], values: dict[str, float]) -> list[str]:
    """Switching points within 10 % of I_c0, where neither regime formula holds (models docstring)."""
    out = []
    ic0 = fn.i_c0(*fn.args(values))
    for b in blocks:
        if b.info.get("what") == "switching":
            i = np.abs(b.info["current"](values)) / ic0
            near = int(np.sum((i > 0.9) & (i < 1.1)))
            if near:
                out.append(f"{b.name}: {near} point(s) lie within 10 % of the fitted I_c0 = {ic0:.4g} A, where "
                           "neither the thermally activated nor the precessional formula holds; their fit is rough")
    return out


def _range_notes(datasets: list[Dataset], blocks: list[Block], values: dict[str, float]) -> list[str]:
    """Compare the card's calibrated range (v_max, j_max, kept as given) with what the data cover."""
    notes = []
    v = [float(np.max(np.abs(ds.columns["voltage"]))) for ds in datasets if "voltage" in ds.columns]
    if v and values["v_max"] > max(v) * 1.0001:
        notes.append(f"the card's v_max = {values['v_max']:.3g} V exceeds the largest bias in the data "
                     f"({max(v):.3g} V); kept as given - narrow it if the model should warn sooner")
    area = math.pi * values["diameter"] ** 2 / 4
    j = [float(np.max(np.abs(b.info["current"](values)))) / area for b in blocks if b.info.get("what") == "switching"]
    if j and values["j_max"] > max(j) * 1.0001:
        notes.append(f"the card's j_max = {values['j_max']:.3g} A/m^2 exceeds the largest pulse current density in "
                     f"the data ({max(j):.3g} A/m^2); kept as given")
    return notes


def _figures(fn, before: dict, after: dict, outcome: FitOutcome):
    from compactgen.model.constants import MU0

    defs = {
        "r_p": (lambda v: 1.0 / fn.g(*fn.args(v), 0.0, 1.0), "ohm", "resistance, parallel, zero bias"),
        "r_ap": (lambda v: 1.0 / fn.g(*fn.args(v), 0.0, -1.0), "ohm", "resistance, antiparallel, zero bias"),
        "mu0_hk_eff": (lambda v: MU0 * fn.hk_eff(*fn.args(v)), "T", "effective anisotropy field mu0 H_k,eff"),
        "delta": (lambda v: fn.delta(*fn.args(v)), "1", "thermal stability factor at tnom"),
        "i_c0": (lambda v: fn.i_c0(*fn.args(v)), "A", "zero-temperature critical current"),
        "tau_prec": (lambda v: fn.tau_p(*fn.args(v)), "s", "precessional time scale"),
    }
    out = {}
    for name, (f, unit, desc) in defs.items():
        val, se = outcome.propagate(lambda v, f=f: np.asarray(f(v), float))
        out[name] = (float(f(before)), float(val), float(se), unit, desc)
    return out
