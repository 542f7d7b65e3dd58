"""Stochastic switching in the compact models: many seeded instances in one netlist.

openvaf-r has no random functions and ngspice's transient noise is not reproducible
(TOOLCHAIN 2.10, 3.6), so the randomness comes from Python: every instance gets its own
initial state (``tilt0``, ``phi0``) drawn from the Boltzmann cone-angle density with a seeded
generator (stochastic.sample_initial_angles), and then follows the model's deterministic
dynamics.  This reproduces the precessional write-error rate of PHYSICS 4.2b exactly; it leaves
out the thermal field *during* the pulse, which the stochastic reference ensemble keeps (it
speeds up switching near I_c0 -- the demo report shows the difference).

Each instance is driven by its own current source (a step of ``current``), so the drive is the
one the closed forms assume.  Instances are cut into chunks, one netlist per chunk, and the
chunks run through sweep.run_tasks (local process pool, or a Dask cluster).
"""
from __future__ import annotations

import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from compactgen.targets import render
from compactgen.harness.benches import Pulse, crossing_time
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.model.ir import ModelIR
from compactgen.targets.printing.base import format_number
from compactgen.sim.tasks import chunks, run_tasks

#: thermal-field runs: tolerances for statistics, not single trajectories (with the same seed the
#: trrandom noise path is the same, and benchmarks/bench_noise_step.py measured what these cost in
#: accuracy against reltol 1e-4, trtol 1)
THERMAL_OPTIONS = "reltol=1e-3 trtol=7"
#: ensemble simulator settings: trapezoidal, reltol 1e-4 and a 2 ps step cap keep switching times
#: within ~1 % (TOOLCHAIN 7) at a quarter of the cost of the verification benches
ENSEMBLE_RELTOL = 1e-4
RISE = 10e-12


@dataclass
class EnsembleRun:
    """Equator-crossing times of every instance of one drive condition, per engine."""

    current: float
    state0: float
    temperature: float
    t_cross: dict[str, np.ndarray] = field(default_factory=dict)

    def switched_by(self, engine: str, t) -> np.ndarray:
        tc = self.t_cross[engine]
        tc = np.where(np.isnan(tc), np.inf, tc)
        t = np.atleast_1d(np.asarray(t, float))
        return (tc[None, :] <= t[:, None]).mean(axis=1)


def _lib_line(lib_path: str, ir: ModelIR, section: str = "tt") -> str:
    return f".lib {lib_path} {section}" if "corner" in ir.params else f".include {lib_path}"


def ngspice_ensemble_deck(ir: ModelIR, lib_path: str, instances: list[dict], current: float, t_stop: float,
                          temperature: float, max_step: float, title: str = "", section: str = "tt",
                          seed: int | None = None, extra_options: str = "") -> str:
    """``seed``: ``.options seed=N`` (repeats the library's agauss() draws and the thermal field's
    trrandom samples); ``extra_options``: a further .options line (later settings win)."""
    env = render.environment()
    env.loader.searchpath.append(str(render.TEMPLATE_DIR.parent / "ngspice_decks"))
    save = render.spice_wrap(".save " + " ".join(f"v(x{k['i']}.mz)" for k in instances))
    return env.get_template("ensemble.cir.j2").render(
        title=title or ir.name, lib_line=_lib_line(lib_path, ir, section), instances=instances, module=ir.name,
        current=format_number(current), delay=format_number(0.0), rise=format_number(RISE),
        width=format_number(10 * t_stop), period=format_number(100 * t_stop), reltol=format_number(ENSEMBLE_RELTOL),
        temp_c=format_number(temperature - ZERO_CELSIUS), save_line=save, t_step=format_number(max_step),
        t_stop=format_number(t_stop), max_step=format_number(max_step), **({} if seed is None else {"seed": int(seed)}),
        **({"extra_options": extra_options} if extra_options else {}))


def vacask_ensemble_netlist(ir: ModelIR, osdi_name: str, instances: list[dict], current: float, t_stop: float,
                            temperature: float, max_step: float, models: list[dict] | None = None,
                            title: str = "") -> str:
    models = models or [dict(name="dut_m", params=[])]
    for k in instances:
        k.setdefault("model", models[0]["name"])
    return render.environment().get_template("vacask/ensemble.sim.j2").render(
        title=title or ir.name, osdi=osdi_name, models=models, module=ir.name, instances=instances,
        current=format_number(current), delay=format_number(0.0), rise=format_number(RISE),
        width=format_number(10 * t_stop), period=format_number(100 * t_stop), reltol=format_number(ENSEMBLE_RELTOL),
        temp_c=format_number(temperature - ZERO_CELSIUS), t_step=format_number(max_step),
        t_stop=format_number(t_stop), max_step=format_number(max_step))


def _crossings(t: np.ndarray, columns: list[np.ndarray], state0: float) -> np.ndarray:
    direction = 1 if state0 < 0 else -1
    return np.array([crossing_time(t, np.asarray(c), 0.0, -1.0, direction) for c in columns])


def ensemble_task(task: dict) -> np.ndarray:
    """Run one chunk of instances in one simulator; return their equator-crossing times [s].
    Module level and self-contained, so a Dask worker on another machine can run it."""
    from compactgen.sim import compile_va_cached, run_ngspice_batch, run_vacask

    ir_name = task["name"]
    inst = task["instances"]
    if task["sim"] == "ngspice":
        with tempfile.TemporaryDirectory(prefix="compactgen-ens-") as tmp:
            lib = Path(tmp) / f"{ir_name}.lib"
            lib.write_text(task["lib_text"])
            deck = task["deck"].replace("@LIB@", str(lib))
            data = run_ngspice_batch(deck, timeout=task.get("timeout", 3600.0))
        cols = [data[f"x{k['i']}.mz"] for k in inst]
        return _crossings(np.asarray(data["time"]), cols, task["state0"])
    osdi = compile_va_cached(task["va_text"], ir_name)
    plots = run_vacask(task["netlist"], {f"{ir_name}.osdi": osdi}, timeout=task.get("timeout", 3600.0))
    d = plots["tr1"].data
    cols = [d[f"x{k['i']}:mz"] for k in inst]
    return _crossings(np.asarray(d["time"]), cols, task["state0"])


def simulator_ensembles(ir: ModelIR, tilt: np.ndarray, phi: np.ndarray, current: float, state0: float,
                        temperature: float, t_stop: float, simulators=("ngspice", "vacask"), chunk: int = 100,
                        max_step: float = 2e-12, extra: dict[str, float] | None = None,
                        scheduler: str | None = None, workers: int | None = None, progress=None) -> dict[str, np.ndarray]:
    """Crossing times of len(tilt) instances (initial angles tilt, phi) in each simulator."""
    extra = dict(extra or {})
    lib_text = render.ngspice(ir)
    va_text = render.verilog_a(ir)
    tasks = []
    idx = np.arange(len(tilt))
    for part in chunks(list(idx), chunk):
        inst = [dict(i=int(j) + 1, params=[("state0", format_number(state0)), ("thermal_rest", "0.0"),
                                           ("tilt0", format_number(tilt[j])),
                                           ("phi0", format_number(phi[j]))]
                     + [(k, format_number(v)) for k, v in extra.items()]) for j in part]
        for sim in simulators:
            if sim == "ngspice":
                with tempfile.TemporaryDirectory() as tmp:
                    p = Path(tmp) / f"{ir.name}.lib"
                    p.write_text(lib_text)
                    deck = ngspice_ensemble_deck(ir, str(p), inst, current, t_stop, temperature, max_step)
                deck = deck.replace(str(p), "@LIB@")
                tasks.append(dict(sim=sim, name=ir.name, lib_text=lib_text, deck=deck, instances=inst,
                                  state0=state0))
            elif sim == "vacask":
                net = vacask_ensemble_netlist(ir, f"{ir.name}.osdi", [dict(k) for k in inst], current, t_stop,
                                              temperature, max_step)
                tasks.append(dict(sim=sim, name=ir.name, va_text=va_text, netlist=net, instances=inst,
                                  state0=state0))
            else:
                raise ValueError(f"unknown simulator {sim!r}")
    results = run_tasks(ensemble_task, tasks, scheduler=scheduler, workers=workers, progress=progress,
                        what=f"ensemble chunks ({len(tilt)} instances x {len(simulators)} simulators)")
    out = {s: [] for s in simulators}
    for task, res in zip(tasks, results):
        out[task["sim"]].append(res)
    return {s: np.concatenate(v) for s, v in out.items()}


def current_step(current: float) -> Pulse:
    """The drive every engine sees: a step to ``current`` at t = 0 with a RISE-long ramp."""
    return Pulse(0.0, current, 0.0, RISE, RISE, 1.0)


# ---- the thermal field in the simulator ---------------------------------------------------------
@dataclass
class ThermalRun:
    """Instances with Brown's thermal field in ngspice (B-source library, instance parameter
    thermal_field): first-passage times of m_z through ``level`` (away from the initial state;
    NaN: not within the run) and m_z at ``sample_times`` per instance."""

    t_cross: np.ndarray
    sample_times: np.ndarray
    samples: np.ndarray  # (instances, len(sample_times))
    seeds: list[int]
    noise_step: float
    info: dict = field(default_factory=dict)


def chunk_seeds(seed: int, count: int) -> list[int]:
    """``count`` ngspice seeds (positive 31-bit integers) derived from one seed (numpy SeedSequence)."""
    states = np.random.SeedSequence(int(seed)).generate_state(count, dtype=np.uint32)
    return [int(x % (2**31 - 2)) + 1 for x in states]


def thermal_task(task: dict) -> dict:
    """Run one chunk of thermal-field instances in ngspice (batch); return first-passage times
    and sampled m_z.  Module level and self-contained (Dask-ready)."""
    from compactgen.sim import run_ngspice_batch

    inst = task["instances"]
    with tempfile.TemporaryDirectory(prefix="compactgen-thermal-") as tmp:
        lib = Path(tmp) / f"{task['name']}.lib"
        lib.write_text(task["lib_text"])
        data = run_ngspice_batch(task["deck"].replace("@LIB@", str(lib)), timeout=task.get("timeout", 3600.0))
    t = np.asarray(data["time"])
    cols = [np.asarray(data[f"x{k['i']}.mz"]) for k in inst]
    direction = 1 if task["state0"] < 0 else -1
    t_cross = np.array([crossing_time(t, c, task["level"], -1.0, direction) for c in cols])
    st = np.asarray(task["sample_times"], float)
    samples = np.array([np.interp(st, t, c) for c in cols]) if st.size else np.zeros((len(cols), 0))
    return dict(t_cross=t_cross, samples=samples, points=len(t))


def thermal_ensemble(ir: ModelIR, tilt: np.ndarray, phi: np.ndarray, current: float, state0: float,
                     temperature: float, t_stop: float, *, seed: int, chunk: int = 10, level: float = 0.0,
                     sample_times=(), noise: int = 1, noise_step: float = 0.0, extra: dict[str, float] | None = None,
                     options: str = THERMAL_OPTIONS, scheduler: str | None = None, workers: int | None = None, progress=None) -> ThermalRun:
    """len(tilt) instances with the thermal field on (``noise`` = the instance parameter
    thermal_field: 1 trrandom, repeatable; 2 trnoise), each from its drawn initial angles
    (tilt, phi) about ``state0``, under a step of ``current`` (RISE-long ramp at t = 0).  Each
    chunk is one netlist with its own ``.options seed`` (chunk_seeds(seed)), so with noise = 1
    the whole run repeats for the same seed and chunk size."""
    from compactgen.model.evaluate import reference_numbers

    if not ir.noise:
        raise ValueError(f"{ir.name}: the model has no thermal field; build it from a card with "
                         f'[options] thermal_field = "noise-sources"')
    if noise not in (1, 2):
        raise ValueError(f"noise must be 1 (trrandom) or 2 (trnoise), not {noise!r}")
    if len(tilt) != len(phi) or not len(tilt):
        raise ValueError(f"tilt and phi must be equally long and not empty ({len(tilt)}, {len(phi)})")
    if not t_stop > 0:
        raise ValueError(f"t_stop must be positive, got {t_stop!r}")
    extra = dict(extra or {})
    if noise_step:
        extra["noise_step"] = noise_step
    num = reference_numbers(ir, {"noise_step": noise_step}, temperature)
    step = float(num[next(k for k, _ in ir.derived if str(k) == render.NOISE_STEP)])
    lib_text = render.ngspice(ir)
    parts = chunks(list(range(len(tilt))), chunk)
    seeds = chunk_seeds(seed, len(parts))
    tasks = []
    for part, s in zip(parts, seeds):
        inst = [dict(i=int(j) + 1, params=[("state0", format_number(state0)), ("thermal_rest", "0.0"),
                                           ("tilt0", format_number(tilt[j])), ("phi0", format_number(phi[j])),
                                           ("thermal_field", format_number(noise))]
                     + [(k, format_number(v)) for k, v in extra.items()]) for j in part]
        deck = ngspice_ensemble_deck(ir, "@LIB@", inst, current, t_stop, temperature, step, seed=s,
                                     extra_options=options)
        tasks.append(dict(name=ir.name, lib_text=lib_text, deck=deck, instances=inst, state0=state0, level=level,
                          sample_times=list(np.asarray(sample_times, float))))
    results = run_tasks(thermal_task, tasks, scheduler=scheduler, workers=workers, progress=progress,
                        what=f"thermal-field chunks ({len(tilt)} instances, ngspice)")
    return ThermalRun(t_cross=np.concatenate([r["t_cross"] for r in results]),
                      sample_times=np.asarray(sample_times, float),
                      samples=np.concatenate([r["samples"] for r in results]), seeds=seeds, noise_step=step,
                      info=dict(points=[r["points"] for r in results], noise=noise))
