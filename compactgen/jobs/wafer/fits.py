"""One fit per device, spread over local processes or a Dask cluster (sim.tasks.run_tasks).

Each device is fitted by the ordinary `compactgen fit` path with the parameters its data
determine: for stt-mtj (calibrate.runner.fit_card) R-V and R-H loops give ra, tmr0, v_half, ki
(through H_k,eff at the card's ms) and the loop offset (calibrate.runner.default_free says why the
rest stays fixed); for dw-mtj (calibrate.dw_fit.fit_dw_card) wall velocities versus current
density and field give dmi, theta_sh and alpha (dw_fit.default_free).
The card's lambdified expressions hold no parameter values, so each worker builds them once
and reuses them for every device (the fast path: ~0.1 s of sympy per device otherwise).
A device whose fit raises or does not converge is returned with its reason, never dropped.
"""
from __future__ import annotations

import math
import os
from dataclasses import dataclass, field

import numpy as np

#: figures of each stt-mtj fit kept per device (kinds.KINDS[kind].figures for every kind)
FIGURES = ("r_p", "r_ap", "mu0_hk_eff", "delta")

_FN_CACHE: dict = {}


@dataclass
class DeviceFit:
    id: str
    ok: bool
    reason: str = ""
    values: dict[str, float] = field(default_factory=dict)  # fitted parameters (SI)
    stderr: dict[str, float] = field(default_factory=dict)
    figures: dict[str, float] = field(default_factory=dict)  # zero-bias R_P, R_AP, ...
    figure_se: dict[str, float] = field(default_factory=dict)
    p_min: float = math.nan  # lowest goodness-of-fit p-value over the fit's blocks
    worst_block: str = ""
    rv_rms: float = math.nan  # relative rms residual of the R-V curve
    nfev: int = 0
    seconds: float = 0.0
    warnings: list[str] = field(default_factory=list)


def _functions(card):
    key = (card.kind, tuple(sorted(card.options.items())), card.sha256())
    if key not in _FN_CACHE:
        _FN_CACHE.clear()
        if card.kind == "dw-mtj":
            from compactgen.jobs.calibrate.wall import wall_functions

            _FN_CACHE[key] = wall_functions(card.ir())
        else:
            from compactgen.jobs.calibrate.models import stt_functions

            _FN_CACHE[key] = stt_functions(card)
    return _FN_CACHE[key]


def fit_one(card, dev_id: str, datasets, fn=None) -> DeviceFit:
    """Fit one device; every exception becomes a failed DeviceFit with its reason."""
    import time

    from compactgen.jobs.calibrate.dw_fit import fit_dw_card
    from compactgen.jobs.calibrate.runner import fit_card
    from compactgen.jobs.wafer.kinds import KINDS

    t0 = time.perf_counter()
    figures = tuple(KINDS[card.kind].figures)
    try:
        if card.kind == "dw-mtj":
            cf = fit_dw_card(card, datasets, fn=fn or _functions(card))
        else:
            cf = fit_card(card, datasets, fn=fn or _functions(card))
    except Exception as exc:  # noqa: BLE001 - reported per device, the wafer goes on
        msg = str(exc).replace("\n", " ")
        return DeviceFit(dev_id, False, f"fit failed: {type(exc).__name__}: {msg}",
                         seconds=time.perf_counter() - t0)
    o = cf.outcome
    res = DeviceFit(dev_id, bool(o.success), "" if o.success else f"fit did not converge: {o.message}",
                    values={n: float(cf.values[n]) for n in cf.free},
                    stderr={n: float(o.stderr.get(n, math.nan)) for n in cf.free},
                    figures={n: float(cf.figures[n][1]) for n in figures if n in cf.figures},
                    figure_se={n: float(cf.figures[n][2]) for n in figures if n in cf.figures},
                    nfev=int(cf.nfev), seconds=time.perf_counter() - t0, warnings=list(o.warnings))
    if "v_half" in KINDS[card.kind].fitted:  # fixed or fitted, always reported
        res.values["v_half"] = float(cf.values["v_half"])
    ps = [(s.p_value, s.name) for s in o.stats if math.isfinite(s.p_value)]
    if ps:
        res.p_min, res.worst_block = min(ps)
    for s in o.stats:
        if "R vs bias" in s.name:
            res.rv_rms = float(s.rms)
    bad = [n for n, v in res.values.items() if not math.isfinite(v)]
    if res.ok and bad:
        res.ok, res.reason = False, f"fit gave no finite value for {', '.join(bad)}"
    return res


def fit_chunk(task: dict) -> list[DeviceFit]:
    """A chunk of devices (module level and self-contained, for process pools and Dask workers)."""
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    card = task["card"]
    fn = _functions(card)
    return [fit_one(card, dev_id, dss, fn) for dev_id, dss in task["devices"]]


def fit_devices(card, datasets: dict[str, list], scheduler: str | None = None, workers: int | None = None,
                chunk: int | None = None, progress=None) -> list[DeviceFit]:
    """Fit every device that has data; results in the order of ``datasets``."""
    from compactgen.sim.tasks import chunks, run_tasks

    items = [(d, dss) for d, dss in datasets.items() if dss]
    if not items:
        return []
    n_workers = workers or os.cpu_count() or 1
    size = chunk or max(4, min(40, math.ceil(len(items) / (4 * n_workers))))
    tasks = [dict(card=card, devices=part) for part in chunks(items, size)]
    if len(tasks) == 1 or (workers == 1 and scheduler is None):
        out = []
        for k, t in enumerate(tasks):
            out.extend(fit_chunk(t))
            if progress:
                progress(f"device fits: {min((k + 1) * size, len(items))}/{len(items)} done (this process)")
        return out
    n_items = [len(t["devices"]) for t in tasks]
    done = [0]

    def relay(msg: str) -> None:
        if progress:
            done[0] = min(done[0] + 1, len(tasks))
            progress(f"device fits: {sum(n_items[:done[0]])}/{len(items)} done ({msg.split('(', 1)[-1].rstrip(')')})")

    results = run_tasks(fit_chunk, tasks, scheduler=scheduler, workers=workers, progress=relay,
                        what="device-fit chunks")
    return [r for chunk_res in results for r in chunk_res]


def rp_estimate(datasets) -> float:
    """R_P of a device straight from its data (no fit): the median parallel-state resistance of
    the R-V rows at the three smallest |bias|, else the low plateau of its R-H loops.  NaN when
    neither is there.  Used for the electrical diameter offset before the fits."""
    for ds in datasets:
        if ds.kind == "resistance-bias" and "resistance" in ds.columns and "state" in ds.columns:
            v, r, st = ds.columns["voltage"], ds.columns["resistance"], ds.columns["state"]
            p = st == "P"
            if p.any():
                av = np.abs(v[p])
                near = np.sort(np.unique(av))[:3]
                return float(np.median(r[p][np.isin(av, near)]))
    for ds in datasets:
        if ds.kind == "resistance-field":
            r = ds.columns["resistance"]
            lo, hi = np.percentile(r, [5, 95])
            return float(np.median(r[r < 0.5 * (lo + hi)]))
    return math.nan
