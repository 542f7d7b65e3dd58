"""Fit a dw-mtj card to domain-wall velocity data: which parameters are free, and the result.

The forward model is the steady state of the card's own wall equations (``calibrate.wall``:
the ModelIR's state right-hand sides with the data's current density and field, pinning off).
What wall-velocity files pin down (PHYSICS 6.3):

- versus current density: the saturation speed v_D = (pi/2) gamma_e D/Ms gives dmi (Ms fixed);
  the current of half saturation, J_1/2 = 2 e alpha t_F D/(hbar theta_SH Delta), gives
  theta_sh/alpha.  Alone, these curves cannot separate theta_sh from alpha (theta_sh is fitted,
  alpha fixed).
- versus perpendicular field: below the Walker field v = gamma0 Delta H_z/alpha, so alpha
  (with Delta from the card's ms, ki, kv, a_ex); above it the breakdown field adds dmi.
Default free parameters: dmi and theta_sh; alpha as well when a file has field-driven points.
Never fitted by default: ms, t_free, ki, kv, a_ex (the velocities fix the wall width and the DMI
field only in combination with them: measure them separately), xi_sot, the in-plane fields, the
geometry, the read-out, h_dep and pin_pitch (pinning is off in the flow regime), the limits.
"""
from __future__ import annotations

import numpy as np

from compactgen.model.constants import MU0
from compactgen.errors import InputError
from compactgen.jobs.calibrate.data import Dataset
from compactgen.jobs.calibrate.fit import fit
from compactgen.jobs.calibrate.result import CardFit
from compactgen.jobs.calibrate.wall import wall_block, wall_functions

#: dw-mtj parameters the fit may free (``--free``); the default set is chosen from the data
DW_FITTABLE = ("dmi", "theta_sh", "alpha", "a_ex", "ki", "ms", "xi_sot")
#: key figures of the card reported before and after the fit (IR figures)
DW_FIGURES = ("wall_width", "h_dmi", "v_dmi", "j_half", "j_dep")


def _has_field(ds: Dataset) -> bool:
    return "field" in ds.columns and bool(np.any(ds.columns["field"] != 0))


def default_free(datasets: list[Dataset]) -> tuple[list[str], list[str]]:
    """Free parameters implied by the data, and a note for every parameter fixed and why."""
    field = any(_has_field(ds) for ds in datasets)
    free = ["dmi", "theta_sh"] + (["alpha"] if field else [])
    notes = []
    if not field:
        notes.append("alpha fixed: without field-driven velocities the current sweeps fix only theta_sh/alpha "
                     "(theta_sh is fitted)")
    notes.append("ms, ki, kv, a_ex, t_free fixed: the velocities fix the wall width and the DMI field only together "
                 "with them; measure them separately")
    notes.append("xi_sot fixed: the field-like torque hardly changes the steady speed of a Neel wall")
    notes.append("h_dep and pin_pitch fixed: the velocity model is the flow regime (pinning off)")
    return free, notes


def fit_dw_card(card, datasets: list[Dataset], free: list[str] | None = None, fix: list[str] = (),
                progress=None, fn=None) -> CardFit:
    """Fit a dw-mtj ``card`` to wall-velocity ``datasets``; ``free``/``fix`` override the default.
    ``fn``: the card's ``wall.wall_functions`` made once (they hold no values) and reused across
    devices (wafer-stats); built here otherwise."""
    specs = {s.name: s for s in card.device.table()}
    # the data describe typical devices: the model is evaluated at the typical process point (corner 0,
    # no Monte Carlo draws; devices/variation.py); the card keeps its own corner and draws
    process = {n: 0.0 for n in card.values if n == "corner" or n.startswith(("draw_global_", "draw_mismatch_"))}
    start = dict(card.values, **process)
    auto, keep_notes = default_free(datasets)
    chosen = list(auto) if free is None else list(free)
    for n in list(chosen) + list(fix):
        if n not in specs:
            raise InputError(f"unknown parameter {n!r}; fittable: {', '.join(DW_FITTABLE)}")
        if n not in DW_FITTABLE:
            raise InputError(f"{n} cannot be fitted to wall velocities (fittable: {', '.join(DW_FITTABLE)})")
    chosen = [n for n in chosen if n not in set(fix)]
    if not chosen:
        raise InputError("nothing left to fit (every parameter is fixed)")
    notes = list(keep_notes) if free is None else []
    notes += [f"{n} fixed by request" for n in fix]
    fn = fn or wall_functions(card.ir())
    blocks = [wall_block(fn, ds) for ds in datasets]
    if any(card.values[n] != 0.0 for n in process):
        notes.append("fitted at the typical process point (corner 0, no Monte Carlo draws); the card's corner and "
                     "draws are kept as given")
    if start["hz"] != 0.0:
        notes.append("the perpendicular field of each point is the data's (0 without a field column); the card's "
                     "hz is kept as given")
    outcome = fit(specs, start, chosen, blocks, progress=progress)
    final = dict(outcome.values, **{n: card.values[n] for n in process})
    stages = [{"name": "wall velocities", "free": chosen, "nfev": outcome.nfev, "seconds": outcome.seconds}]
    figs = {}
    for name in DW_FIGURES:
        f, unit, desc = fn.figures[name]
        val, se = outcome.propagate(lambda v, f=f: np.asarray(f(*fn.args(v)), float))
        figs[name] = (float(f(*fn.args(start))), float(val), float(se), unit, desc)
    outcome.warnings.extend(_pinning_warnings(blocks, final))
    notes.extend(_range_notes(blocks, final))
    return CardFit(card, datasets, outcome, specs, start, final, chosen, notes, figs, blocks, stages,
                   fittable=DW_FITTABLE)


def _pinning_warnings(blocks, values: dict[str, float]) -> list[str]:
    """Points the card's own pinning would hold: a rigid Neel wall depins when
    |H_z|/H_dep + |J|/J_dep >= 1 (PHYSICS 6.4); the flow-regime model fits them as moving."""
    h_dep = values["h_dep"]
    if not h_dep > 0:
        return []
    out = []
    for b in blocks:
        fn = b.info["model"]
        j_dep = float(fn.figures["j_dep"][0](*fn.args(values)))
        j, hz = b.info["current_density"], b.info["field"]
        drive = np.abs(hz) / h_dep + (np.abs(j) / j_dep if j_dep > 0 else 0.0)
        n = int(np.sum(drive < 1.0))
        if n:
            out.append(f"{b.name}: {n} point(s) lie below the card's depinning threshold (h_dep = "
                       f"{h_dep * MU0 * 1e3:.3g} mT, J_dep = {j_dep:.3g} A/m^2), where the card's wall stays pinned; "
                       "the velocity model (flow regime, pinning off) fits them as moving: leave them out or lower "
                       "h_dep")
    return out


def _range_notes(blocks, values: dict[str, float]) -> list[str]:
    """The card's j_max (kept as given) against the current densities in the data."""
    j = max((float(np.max(np.abs(b.info["current_density"]))) for b in blocks), default=0.0)
    if j > values["j_max"] * 1.0001:
        return [f"the data reach |J| = {j:.3g} A/m^2, beyond the card's j_max = {values['j_max']:.3g} A/m^2 (kept as "
                "given): raise j_max if the model should be trusted there"]
    if j > 0 and values["j_max"] > 2 * j:
        return [f"the card's j_max = {values['j_max']:.3g} A/m^2 exceeds twice the largest current density in the "
                f"data ({j:.3g} A/m^2); kept as given - narrow it if the model should warn sooner"]
    return []
