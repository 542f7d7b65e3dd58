"""Verification harness: every bench on the reference, in ngspice and in VACASK; compare.

Each simulator metric is compared with the reference metric within the metric's tolerance;
expectations (a final state, no switching) are checked on every run on its own.  A missing
simulator is a failure, never a silent skip.
"""
from __future__ import annotations

import os
import sys
import tempfile
import warnings
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from compactgen.targets import render
from compactgen.harness.benches import Bench, Dc, Pulse, Pwl
from compactgen.errors import OutOfCalibratedRange, SimulationError, SimulatorMissing
from compactgen.model.ir import ModelIR
from compactgen.model.constants import ZERO_CELSIUS
from compactgen.targets.printing.base import format_number
from compactgen.harness.reference import ReferenceModel, Trace

#: every simulator path a bench runs in besides the reference: ngspice with the B-source library,
#: ngspice with the compiled model (OSDI), VACASK with the compiled model
SIMULATORS = ("ngspice", "ngspice-osdi", "vacask")
SIMULATOR_TEXT = {"ngspice": "ngspice, B-source library", "ngspice-osdi": "ngspice, compiled model (OSDI)",
                  "vacask": "VACASK, compiled model"}
RELTOL = 1e-6  # simulator reltol used by every bench (see the tolerance reasons in benches.py)
REFERENCE_RTOL = 1e-9  # the reference solver's relative tolerance in bench transients


@dataclass
class Row:
    bench: str
    metric: str
    unit: str
    reference: float
    values: dict[str, float]
    error: float  # largest |sim - ref| / (atol + rtol |ref|): <= 1 passes
    tolerance: str
    reason: str
    passed: bool
    note: str = ""


@dataclass
class BenchRun:
    bench: Bench
    traces: dict[str, Trace]
    rows: list[Row]


@dataclass
class SuiteResult:
    model: str
    runs: list[BenchRun] = field(default_factory=list)
    simulators: tuple[str, ...] = SIMULATORS
    #: benches that cannot be run physically on this device: (name, title, reason)
    not_applicable: list[tuple[str, str, str]] = field(default_factory=list)
    #: findings about the device measured while setting benches up: (name, finding)
    findings: list[tuple[str, str]] = field(default_factory=list)

    @property
    def rows(self) -> list[Row]:
        return [r for run in self.runs for r in run.rows]

    @property
    def passed(self) -> bool:
        """Every metric of every bench that applies passed (and at least one bench ran)."""
        return bool(self.rows) and all(r.passed for r in self.rows)

    @property
    def exit_status(self) -> int:
        """0: every bench passed; 4: every bench that applies passed, some do not apply to this
        device (each with its reason); 1: a bench failed."""
        if not self.passed:
            return 1
        return 4 if self.not_applicable else 0

    def table(self) -> str:
        head = ["bench", "metric", "reference"] + list(self.simulators) + ["error/tol", "tolerance", "verdict"]
        lines = [head]
        for r in self.rows:
            lines.append([r.bench, r.metric, _num(r.reference, r.unit)]
                         + [_num(r.values.get(s, float("nan")), r.unit) for s in self.simulators]
                         + [f"{r.error:.3f}", r.tolerance, "pass" if r.passed else "FAIL" + (f" ({r.note})" if r.note else "")])
        widths = [max(len(str(row[i])) for row in lines) for i in range(len(head))]
        out = ["  ".join(str(c).ljust(w) for c, w in zip(row, widths)).rstrip() for row in lines]
        out.insert(1, "  ".join("-" * w for w in widths))
        n_fail = sum(not r.passed for r in self.rows)
        for name, title, reason in self.not_applicable:
            out.append(f"{name}: not applicable -- {reason}")
        for name, finding in self.findings:
            out.append(f"{name}: finding -- {finding}")
        na = f", {len(self.not_applicable)} benches not applicable" if self.not_applicable else ""
        out.append(f"{len(self.rows) - n_fail} passed, {n_fail} failed{na}")
        return "\n".join(out)


def _num(x: float, unit: str) -> str:
    if x is None or not np.isfinite(x):
        return "nan"
    return f"{x:.6g} {unit}" if unit not in ("1", "") else f"{x:.6g}"


def default_simulators(say=None) -> tuple[str, ...]:
    """Every simulator path; without COMPACTGEN_REQUIRE_SIMULATORS=1, ngspice's compiled-model path
    is left out (saying why) where the installed ngspice cannot load compiled models."""
    from compactgen.sim.tools import available, require_simulators

    if require_simulators() or not available("ngspice") or available("ngspice-osdi"):
        return SIMULATORS
    if say:
        from compactgen.errors import SimulatorMissing
        from compactgen.sim.tools import ngspice_osdi

        try:
            ngspice_osdi()
        except SimulatorMissing as exc:
            say(f"ngspice-osdi left out: {exc}")
    return tuple(s for s in SIMULATORS if s != "ngspice-osdi")


def parse_simulators(text: str, say=None) -> tuple[str, ...]:
    """``"ngspice,vacask"`` -> ("ngspice", "vacask"); ``all``: default_simulators(); an unknown
    name is bad input (exit 2)."""
    from compactgen.errors import InputError

    if text.strip() == "none":  # the reference solver alone (a quick look; not a verification)
        return ()
    if text.strip() == "all":
        return default_simulators(say)
    sims = tuple(s.strip() for s in text.split(",") if s.strip())
    if not sims:
        raise InputError(f"--sim {text!r}: no simulator named; expected some of {', '.join(SIMULATORS)}, "
                         "all, or none")
    for s in sims:
        if s not in SIMULATORS:
            raise InputError(f"--sim: unknown simulator {s!r}; expected some of {', '.join(SIMULATORS)}, "
                             "all, or none")
    return sims


# ---- deck rendering ---------------------------------------------------------------------------
def _drives(ir: ModelIR, bench: Bench) -> list[dict]:
    out = []
    for t in ir.terminals:
        w = bench.drives.get(t.name, Dc(0.0))
        if isinstance(w, Pulse):
            out.append(dict(term=t.name, pulse=True, pwl=False, v0=format_number(w.v0), v1=format_number(w.v1),
                            delay=format_number(w.delay), rise=format_number(w.rise), fall=format_number(w.fall),
                            width=format_number(w.width), period=format_number(w.period)))
        elif isinstance(w, Pwl):
            out.append(dict(term=t.name, pulse=False, pwl=True,
                            points=[(format_number(a), format_number(b)) for a, b in w.points]))
        else:
            out.append(dict(term=t.name, pulse=False, pwl=False, level=format_number(w.level)))
    return out


def _context(ir: ModelIR, bench: Bench) -> dict:
    # a bench may set model parameters too: ngspice takes every subcircuit parameter on the
    # instance line; VACASK takes model parameters only on the model line
    model_kind = {s.name: s.kind == "model" for s in ir.params}
    ctx = dict(bench=bench.name, title=bench.title, module=ir.name, drives=_drives(ir, bench),
               nodes=" ".join(f"n_{t.name}" for t in ir.terminals),
               instance=[(k, format_number(v)) for k, v in bench.instance.items()],
               instance_only=[(k, format_number(v)) for k, v in bench.instance.items() if not model_kind.get(k)],
               model_params=[(k, format_number(v)) for k, v in bench.instance.items() if model_kind.get(k)],
               analysis=bench.analysis, reltol=format_number(RELTOL),
               temp_c=None if bench.temperature is None else format_number(bench.temperature - ZERO_CELSIUS))
    if bench.analysis == "dc":
        term, a, b, step = bench.sweep
        # a stop a millionth of a step beyond the last point: simulators accumulate the sweep value
        # and drop a last point that lands a rounding error past the stop
        ctx["sweep"] = dict(term=term, start=format_number(a), stop=format_number(b + 1e-6 * step),
                            step=format_number(step))
    else:
        ctx.update(t_step=format_number(bench.t_step), t_stop=format_number(bench.t_stop),
                   max_step=format_number(bench.max_step))
    return ctx


def ngspice_deck(ir: ModelIR, bench: Bench, lib_path: str) -> str:
    env = render.environment()
    env.loader.searchpath.append(str(render.TEMPLATE_DIR.parent / "ngspice_decks"))
    section = "tt" if "corner" in ir.params else ""  # a library with process-variation sections
    return env.get_template("bench.cir.j2").render(lib_path=lib_path, lib_section=section, **_context(ir, bench))


def vacask_netlist(ir: ModelIR, bench: Bench, osdi_name: str) -> str:
    return render.environment().get_template("vacask/bench.sim.j2").render(osdi=osdi_name, **_context(ir, bench))


# ---- trace extraction ----------------------------------------------------------------------
def _trace(ir: ModelIR, bench: Bench, data, current, inner) -> Trace:
    """A Trace from a simulator's vectors: terminal voltages n_<port>, currents of the sources
    v_<port> (named by ``current``), states and internal nodes of the device (named by ``inner``)."""
    terms = [t.name for t in ir.terminals]
    t = data["time"] if bench.analysis == "tran" else np.zeros(0)
    tr = Trace(t=np.asarray(t),
               voltages={n: np.asarray(data[f"n_{n}"]) for n in terms},
               currents={n: -np.asarray(data[current(n)]) for n in terms},
               states={s.name: np.asarray(data[inner(s.name)]) for s in ir.states})
    tr.voltages.update({n.name: np.asarray(data[inner(n.name)]) for n in ir.nodes})
    return tr


def _trace_ngspice(ir: ModelIR, bench: Bench, data: dict) -> Trace:
    return _trace(ir, bench, data, lambda n: f"v_{n}#branch", lambda name: f"xdut.{name}")


def _trace_ngspice_osdi(ir: ModelIR, bench: Bench, data: dict) -> Trace:
    """A trace of the compiled device N1 inside Xdut: its internal nodes are n.xdut.n1#<name>."""
    return _trace(ir, bench, data, lambda n: f"v_{n}#branch", lambda name: f"n.xdut.n1#{name.lower()}")


def _trace_vacask(ir: ModelIR, bench: Bench, plots: dict) -> Trace:
    d = plots["tr1" if bench.analysis == "tran" else "dc1"].data
    return _trace(ir, bench, d, lambda n: f"v_{n}:flow(br)", lambda name: f"xdut:{name}")


def reference_trace(ir: ModelIR, bench: Bench) -> Trace:
    if bench.cached_reference is not None:
        return bench.cached_reference
    model = ReferenceModel(ir, bench.instance, **({} if bench.temperature is None else
                                                     {"temperature": bench.temperature}))
    if bench.analysis == "dc":
        term = bench.sweep[0]
        vs = bench.sweep_values()
        node_v = {t.name: (vs if t.name == term else np.zeros_like(vs)) for t in ir.terminals}
        return model.dc(node_v)
    grid = np.linspace(0.0, bench.t_stop, int(round(bench.t_stop / (bench.ref_grid or 0.5e-12))) + 1)
    # rtol 1e-9: a thousand times tighter than any bench tolerance, a quarter fewer steps than 1e-10
    return model.transient(bench.drives, bench.t_stop, t_eval=grid, max_step=bench.ref_max_step or None,
                           rtol=REFERENCE_RTOL, atol=1e-11, method=bench.ref_method or "DOP853")


# ---- the suite --------------------------------------------------------------------------------
def run_suite(ir: ModelIR, benches: list[Bench], simulators=None, progress=None,
              keep_dir: str | Path | None = None) -> SuiteResult:
    """Run ``benches`` on the reference and on each simulator (default: default_simulators());
    compare."""
    from compactgen.sim import compile_va_cached, run_ngspice_many, run_vacask

    say = progress or (lambda msg: None)
    simulators = default_simulators(say) if simulators is None else simulators
    result = SuiteResult(model=ir.name, simulators=tuple(simulators))
    result.not_applicable = [(b.name, b.title, b.not_applicable) for b in benches if b.not_applicable]
    result.findings = [(b.name, b.finding) for b in benches if b.finding and not b.not_applicable]
    for name, _, reason in result.not_applicable:
        say(f"{name}: not applicable -- {reason}")
    for name, finding in result.findings:
        say(f"{name}: finding -- {finding}")
    benches = [b for b in benches if not b.not_applicable]
    traces: dict[str, dict[str, Trace]] = {b.name: {} for b in benches}
    errors: dict[str, dict[str, str]] = {b.name: {} for b in benches}
    with tempfile.TemporaryDirectory(prefix="compactgen-verify-") as tmp:
        work = Path(keep_dir) if keep_dir else Path(tmp)
        work.mkdir(parents=True, exist_ok=True)
        lib = work / f"{ir.name}.lib"
        lib.write_text(render.ngspice(ir))
        osdi_lib = work / render.osdi_library_file(ir)
        osdi_lib.write_text(render.ngspice_osdi(ir))
        va_text = render.verilog_a(ir)
        (work / f"{ir.name}.va").write_text(va_text)

        def sim_ngspice(sim: str, library: Path, workers: int, osdi=None):
            decks = [ngspice_deck(ir, b, str(library)) for b in benches]
            for b, deck in zip(benches, decks):
                (work / f"bench_{b.name}{'.osdi' if osdi else ''}.cir").write_text(deck)
            say(f"{sim}: {len(decks)} benches")
            try:
                datas = run_ngspice_many(decks, timeout=600.0, workers=workers, osdi=osdi)
            except SimulationError:
                datas = []
                for deck in decks:  # find which bench failed
                    try:
                        datas.append(run_ngspice_many([deck], timeout=600.0, workers=1, osdi=osdi)[0])
                    except SimulationError as exc:
                        datas.append(exc)
            trace = _trace_ngspice_osdi if osdi else _trace_ngspice
            for b, data in zip(benches, datas):
                if isinstance(data, Exception):
                    errors[b.name][sim] = str(data).splitlines()[0]
                else:
                    try:
                        traces[b.name][sim] = trace(ir, b, data)
                    except KeyError as exc:
                        errors[b.name][sim] = f"no vector {exc} in the results"

        def sim_ngspice_bsource():
            sim_ngspice("ngspice", lib, workers=2)

        def sim_ngspice_osdi():
            from compactgen.sim.tools import ngspice_osdi

            try:
                ngspice_osdi()
                say("openvaf-r: compiling Verilog-A (ngspice)")
                osdi = compile_va_cached(va_text, ir.name)
            except (SimulationError, SimulatorMissing) as exc:
                for b in benches:
                    errors[b.name]["ngspice-osdi"] = str(exc).splitlines()[0]
                return
            sim_ngspice("ngspice-osdi", osdi_lib, workers=1, osdi={ir.name: osdi})

        def sim_vacask():
            say("openvaf-r: compiling Verilog-A")
            osdi = compile_va_cached(va_text, ir.name)
            say(f"VACASK: {len(benches)} benches")

            def one(b):
                net = vacask_netlist(ir, b, f"{ir.name}.osdi")
                (work / f"bench_{b.name}.sim").write_text(net)
                try:
                    traces[b.name]["vacask"] = _trace_vacask(ir, b, run_vacask(net, {f"{ir.name}.osdi": osdi},
                                                                               timeout=600.0))
                except SimulationError as exc:
                    errors[b.name]["vacask"] = str(exc).splitlines()[0]

            with ThreadPoolExecutor(max_workers=2) as pool:
                list(pool.map(one, benches))

        jobs = {"ngspice": sim_ngspice_bsource, "ngspice-osdi": sim_ngspice_osdi, "vacask": sim_vacask}
        with ThreadPoolExecutor(max_workers=len(simulators) or 1) as pool:
            futures = [pool.submit(jobs[s]) for s in simulators]
            say(f"reference: {len(benches)} benches")
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", OutOfCalibratedRange)
                for b in benches:
                    traces[b.name]["reference"] = reference_trace(ir, b)
            for w in caught:
                say(f"warning: {w.message}")
            for f in futures:
                f.result()
    for b in benches:
        rows = _compare(b, traces[b.name], errors[b.name], simulators)
        ordered = {k: traces[b.name][k] for k in ("reference", *simulators) if k in traces[b.name]}  # not finish order
        result.runs.append(BenchRun(b, ordered, rows))
        say(f"{b.name}: {'pass' if all(r.passed for r in rows) else 'FAIL'}")
    return result


def _compare(bench: Bench, traces: dict[str, Trace], errors: dict[str, str], simulators) -> list[Row]:
    rows = []
    ref_tr = traces["reference"]
    for m in bench.metrics:
        ref = _safe(m.func, ref_tr)
        values, err, ok, notes = {}, 0.0, True, []
        if not m.meets_expectation(ref):
            ok = False
            notes.append(f"reference {ref:.4g} misses expected {m.expect[0]:g}")
        for s in simulators:
            if s not in traces:
                ok = False
                values[s] = float("nan")
                notes.append(f"{s}: {errors.get(s, 'no result')}")
                continue
            v = _safe(m.func, traces[s])
            values[s] = v
            scale = m.atol + m.rtol * abs(ref)
            e = abs(v - ref) / scale if np.isfinite(v) and np.isfinite(ref) else (0.0 if np.isnan(v) and np.isnan(ref) else np.inf)
            err = max(err, e)
            if not m.agrees(ref, v):
                ok = False
            if not m.meets_expectation(v):
                ok = False
                notes.append(f"{s} {v:.4g} misses expected {m.expect[0]:g}")
        tol = f"{m.rtol:g} rel" if m.rtol else f"{m.atol:g} abs"
        if m.rtol and m.atol:
            tol = f"{m.rtol:g} rel + {m.atol:g}"
        rows.append(Row(bench.name, m.name, m.unit, ref, values, err, tol, m.reason, ok, "; ".join(notes)))
    return rows


def _safe(func, trace) -> float:
    try:
        return float(func(trace))
    except (KeyError, ValueError, IndexError):
        return float("nan")


def progress_printer(stream=sys.stderr):
    def say(msg: str) -> None:
        if os.environ.get("COMPACTGEN_QUIET") != "1":
            print(f"  .. {msg}", file=stream, flush=True)

    return say
