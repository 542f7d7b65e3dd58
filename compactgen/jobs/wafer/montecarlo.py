"""The proof: the population card's ngspice library, section ``mc``, against the measured population.

Each simulated die is one ngspice run (the library draws its global draws once per run, its
mismatch draws once per instance) holding one instance of each measured size at its electrical
diameter (drawn - offset); many such dies sample the global part well (the measured wafer has only
its few dies).  The instances start exactly on the axis (thermal_rest=0, tilt0=0), as the fits'
R_P and R_AP do (m_z = +-1).
Every die runs twice with the same ``.options seed`` (ngspice repeats its agauss() draws for the
same seed and netlist), once with every junction parallel and once antiparallel, at a 1 mV
operating point; R = V/I.  The draws each instance used are read back (``@i.xN.i<draw>[dc]``)
and the two runs must agree on them, so R_P and R_AP of an instance belong to one device.

Then per size and quantity (R_P, R_AP, TMR): the simulated standard deviation of ln q is compared
with the measured one's bootstrap interval (reported as inside/outside); since both are finite
samples, the verdict asks that their difference lie within the two intervals' half-widths added
in quadrature (each a percentile bootstrap over its dies); and the two-sample Kolmogorov-Smirnov test
(scipy.stats.ks_2samp; N. Smirnov, Ann. Math. Statist. 19, 279 (1948)) must not reject at
KS_LEVEL.  Both samples hold die clusters, so KS is applied to them as one would to independent
draws: it is a consistency check, not an exact test.
"""
from __future__ import annotations

import math
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from compactgen.targets import render
from compactgen.targets.printing.base import format_number

READ_BIAS = 1e-3  # [V]
KS_LEVEL = 0.01
QUANTITIES = ("r_p", "r_ap", "tmr")


@dataclass
class Comparison:
    quantity: str
    drawn: float
    n_measured: int
    n_simulated: int
    sd_measured: float
    sd_ci: tuple[float, float]
    sd_simulated: float
    median_measured: float
    median_simulated: float
    ks_stat: float
    ks_p: float
    sd_sim_ci: tuple[float, float] = (math.nan, math.nan)

    @property
    def sd_inside(self) -> bool:
        """The simulated sigma inside the measured one's interval."""
        return self.sd_ci[0] <= self.sd_simulated <= self.sd_ci[1]

    @property
    def sd_agrees(self) -> bool:
        """Both sigmas are finite samples: their difference within the two 95 % half-widths added in
        quadrature (the check the verdict uses; ``sd_inside`` ignores the simulation's own spread)."""
        half = math.hypot((self.sd_ci[1] - self.sd_ci[0]) / 2, (self.sd_sim_ci[1] - self.sd_sim_ci[0]) / 2)
        return abs(self.sd_simulated - self.sd_measured) <= half

    @property
    def ks_ok(self) -> bool:
        return self.ks_p >= KS_LEVEL


@dataclass
class McProof:
    rows: list[Comparison]
    simulated: dict  # quantity -> drawn -> values
    measured: dict
    dies: int
    instances: int
    seed: int
    draws_checked: int
    global_draws: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))  # (dies, k)
    global_names: list[str] = field(default_factory=list)

    @property
    def passed(self) -> bool:
        return all(r.sd_agrees and r.ks_ok for r in self.rows)


def _deck(name: str, lib: str, layout: list[float], state0: float, seed: int, draws: list[str],
          extra: str = "") -> str:
    lines = [f"wafer Monte Carlo die, state0={state0:g}", f".lib {lib} mc", f".options seed={seed}"]
    for k, d in enumerate(layout):
        lines.append(f"V{k} n{k} 0 DC {format_number(READ_BIAS)}")
        lines.append(f"X{k} n{k} 0 {name} diameter={format_number(d)} state0={state0:g}{extra}")
    saves = " ".join(f"@i.x{k}.i{dr}[dc]" for k in range(len(layout)) for dr in draws)
    lines += [render.spice_wrap(".save all " + saves) if saves else ".save all", ".op", ".end"]
    return "\n".join(lines)


def _vector(data: dict, name: str):
    """A saved device quantity: batch raw files name it i(@...), read back as '@...#branch'."""
    return data[name] if name in data else data[name + "#branch"]


def die_task(task: dict) -> dict:
    """One simulated die in both states (module level, self-contained: runs on Dask workers too)."""
    from compactgen.errors import SimulationError
    from compactgen.sim import run_ngspice_batch

    out = {}
    with tempfile.TemporaryDirectory(prefix="compactgen-wafer-mc-") as tmp:
        lib = Path(tmp) / f"{task['name']}.lib"
        lib.write_text(task["lib_text"])
        for label, s0 in (("p", 1.0), ("ap", -1.0)):
            deck = _deck(task["name"], str(lib), task["layout"], s0, task["seed"], task["draws"],
                         task.get("instance", ""))
            data = run_ngspice_batch(deck)
            n = len(task["layout"])
            r = np.array([READ_BIAS / -float(data[f"v{k}#branch"][0]) for k in range(n)])
            try:
                dr = np.array([[float(_vector(data, f"@i.x{k}.i{d}[dc]")[0]) for d in task["draws"]]
                               for k in range(n)])
            except KeyError as exc:
                raise SimulationError(f"simulated die seed {task['seed']}: ngspice did not return the draw {exc} "
                                      "(the library's draw sources I<draw>)") from None
            out[label] = (r, dr)
    if not np.array_equal(out["p"][1], out["ap"][1]):
        raise SimulationError(f"simulated die seed {task['seed']}: the parallel and antiparallel runs drew different "
                              "Monte Carlo values with the same .options seed; R_P and R_AP cannot be paired")
    return dict(r_p=out["p"][0], r_ap=out["ap"][0], draws=out["p"][1])


def run_proof(card, measured: dict, layout: list[float], offset: float, n_dies: int, seed: int = 1,
              scheduler: str | None = None, workers: int | None = None, progress=None, bootstrap: int = 300) -> McProof:
    """``measured``: quantity -> list of (drawn, die, value); ``layout``: drawn diameters of the
    instances on one simulated die."""
    from scipy.stats import ks_2samp

    from compactgen.jobs.wafer.population import size_spread
    from compactgen.sim.tasks import run_tasks

    ir = card.ir()
    lib_text = render.ngspice(ir)
    draws = [s.name for s in render.draw_params(ir)]
    eff = [d - offset for d in layout]
    # the fits' R_P and R_AP hold m_z = +-1 exactly; at rest the free layer sits in its thermal cone,
    # which lowers the TMR of the smallest demo size by ~0.9 %: the instances start on the axis
    inst = " thermal_rest=0 tilt0=0" if {"thermal_rest", "tilt0"} <= set(ir.params.names()) else ""
    tasks = [dict(name=ir.name, lib_text=lib_text, layout=eff, seed=seed * 100003 + k, draws=draws, instance=inst)
             for k in range(n_dies)]
    res = run_tasks(die_task, tasks, scheduler=scheduler, workers=workers, progress=progress,
                    what=f"Monte Carlo dies ({n_dies} dies x {len(layout)} instances x 2 states, ngspice)")
    sim = {q: {} for q in QUANTITIES}
    sim_die: dict = {}
    for die, r in enumerate(res):
        for k, d in enumerate(layout):
            sim["r_p"].setdefault(d, []).append(r["r_p"][k])
            sim["r_ap"].setdefault(d, []).append(r["r_ap"][k])
            sim["tmr"].setdefault(d, []).append(r["r_ap"][k] / r["r_p"][k] - 1.0)
            sim_die.setdefault(d, []).append(die)
    gnames = [d for d in draws if d.startswith("draw_global_")]
    gidx = [draws.index(d) for d in gnames]
    gdraws = np.array([r["draws"][0, gidx] for r in res]) if res else np.zeros((0, len(gidx)))
    meas = {q: {} for q in QUANTITIES}
    for q in QUANTITIES:
        for drawn, die, v in measured[q]:
            meas[q].setdefault(drawn, []).append((die, v))
    rows = []
    for q in QUANTITIES:
        for d in sorted(meas[q]):
            m = np.array([v for _, v in meas[q][d]])
            die = np.array([k for k, _ in meas[q][d]])
            s = np.asarray(sim[q].get(d, []))
            if len(m) < 3 or len(s) < 3:
                continue
            sd, ci = size_spread(m, die, bootstrap=bootstrap, seed=seed)
            sd_s, ci_s = size_spread(s, np.asarray(sim_die[d]), bootstrap=bootstrap, seed=seed + 1)
            ks = ks_2samp(np.log(m), np.log(s))
            rows.append(Comparison(q, d, len(m), len(s), sd, ci, sd_s, float(np.median(m)), float(np.median(s)),
                                   float(ks.statistic), float(ks.pvalue), ci_s))
    return McProof(rows, {q: {d: np.asarray(v) for d, v in sim[q].items()} for q in QUANTITIES},
                   {q: {d: np.array([v for _, v in meas[q][d]]) for d in meas[q]} for q in QUANTITIES},
                   n_dies, n_dies * len(layout), seed, len(res) * len(layout), gdraws, gnames)
