"""`compactgen build`: a card becomes NAME.va, NAME.lib, NAME.md and manifest.json (the build
manifest, format BUILD_FORMAT; a release bundle's manifest is release.json, another schema).

Output is byte-identical for the same card (no dates), and written so that a failure leaves
nothing half-written: every file is produced in memory first, then written to temporary
names and moved into place.
"""
from __future__ import annotations

import hashlib
import json
import math
import os
import shutil
import tempfile
from pathlib import Path

import sympy as sp

from . import __version__, bignum, render
from .card import Card
from .errors import InputError
from .ir import ModelIR
from .printing.base import format_number
from .reference import figures as eval_figures


BUILD_MANIFEST = "manifest.json"
#: the "format" field of a build manifest (release.bundle.FORMAT: a release manifest's)
BUILD_FORMAT = "compactgen-build/1"


def datasheet(card: Card, ir: ModelIR, figs: dict[str, float], ngspice_ctx: dict | None = None) -> str:
    """The Markdown datasheet.  ``ngspice_ctx`` is render.ngspice_context(ir) when the caller has it
    already (its node table is listed)."""
    def lat(e):
        names = {x: r"\mathit{" + x.name.replace("_", r"\_") + "}" for x in sp.sympify(e).free_symbols}
        return sp.latex(e, mul_symbol="dot", symbol_names=names)

    from .devices.variation import CORNERS, is_draw
    from .reference import reference_numbers
    from .sim import options as simopt
    from .units import from_si

    ngspice_ctx = ngspice_ctx or render.ngspice_context(ir)
    specs = {s.name: s for s in ir.params}
    calibrated = []
    for name in ir.limits:
        s = specs[name]
        calibrated.append(f"{s.desc}: {s.card_text()} (`{name}`)")
    tnom = specs["tnom"].default if "tnom" in specs else None
    tnom_text = f"{from_si(tnom, 'K', 'degC'):g} degC" if tnom is not None else ""
    tdep = ir.temperature_dependent() | {ir.temperature}
    fig_rows = []
    for f in ir.figures:
        cond = []
        if tnom is not None and sp.sympify(f.expr).free_symbols & tdep:
            cond.append(f"T = tnom = {tnom_text}")
        if f.condition:
            cond.append(f.condition)
        fig_rows.append(dict(name=f.name, value=_fmt(figs[f.name], f.unit), desc=_cell(f.desc),
                             condition=_cell("; ".join(cond)) or "—", source=_cell(f.source) or "—"))
    prm = []
    for s in ir.params:
        stderr = card.uncertainty.get(s.name)
        desc = s.desc if not s.computed or s.name in card.given else f"{s.desc}; computed {s.computed}"
        prm.append(dict(name=s.name, value=s.card_text(), range=s.range_text(s.card_unit), kind=s.kind,
                        desc=_cell(desc), source=_cell(s.source), stderr=s.card_text(stderr) if stderr else ""))
    # simulator settings: the step cap from the card's own precession period
    from .devices.stt_mtj import corotating

    corot = card.kind == "stt-mtj" and corotating(card.values)
    n_pp = simopt.POINTS_PER_PERIOD_COROTATING if corot else simopt.POINTS_PER_PERIOD
    if "f_fmr" in figs and figs["f_fmr"] > 0:
        period = 1.0 / figs["f_fmr"]
        step = dict(value=period / n_pp, period=_si_time(period), f_fmr=f"{figs['f_fmr']:.4g} Hz",
                    n=n_pp, n25=_si_time(period / 25), corotating=corot)
        step["text"] = _si_time(step["value"])
    else:
        step = dict(value=1e-12, text="1 ps", period="", f_fmr="", n=0, n25="")
    step["spice"] = f"{step['value'] * 1e12:.3g}p"
    tsc = reference_numbers(ir, temperature=tnom or 300.15)[ir.time_scale]
    options = [dict(name=k, value=v, why=why.format(state_charge=f"{tsc:.1e}")) for k, v, why in simopt.DECK_OPTIONS]
    draws = [s.name for s in ir.params if is_draw(s.name)]
    inst = [s for s in ir.params if s.kind == "instance" and not is_draw(s.name)]
    ctx = dict(
        name=ir.name, title=ir.title, kind=ir.kind, version=__version__, digest=ir.digest(),
        param_digest=render.param_digest(ir), description=card.description,
        calibrated=calibrated, terminals=ir.terminals, conventions=ir.conventions,
        instance_line=render.usage_instance(ir),
        vacask_instance=" ".join(f"{s.name}={format_number(s.default)}" for s in inst),
        instance_params=[dict(name=s.name, default=format_number(s.default), desc=_cell(s.desc)) for s in inst],
        step=step, options=options, options_line=" ".join(f"{o['name']}={o['value']}" for o in options),
        vacask_options=simopt.VACASK_OPTIONS, vacask_why=simopt.VACASK_WHY, harness_options=simopt.HARNESS_OPTIONS,
        measured=simopt.STEP_CAP_MEASURED_COROTATING if corot else simopt.STEP_CAP_MEASURED,
        figures=fig_rows, params=prm, outputs=ir.outputs, nodes=ir.nodes, tnom=tnom_text,
        ngspice_nodes=[{k: _cell(v) for k, v in r.items()} for r in ngspice_ctx["node_table"]],
        monitors=ngspice_ctx["monitors"], limits=render.range_limits(ir), range_output=ir.range_output(),
        draws=draws, corners=[dict(name=k, z=f"{z:+g}") for k, z in CORNERS.items()],
        derived=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.derived],
        locals=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.locals],
    )
    ctx["states"] = [dict(name=s.name, unit=s.unit, desc=s.desc, latex=lat(s.symbol), rhs=lat(s.rhs)) for s in ir.states]
    from .thermal_report import thermal_context

    ctx["thermal"] = thermal_context(ir)
    return render.environment().get_template("datasheet/model.md.j2").render(**ctx)


def _si_time(seconds: float) -> str:
    """A time in ps or ns, three significant digits."""
    return f"{seconds * 1e12:.3g} ps" if seconds < 1e-9 else f"{seconds * 1e9:.3g} ns"


def _cell(text: str) -> str:
    """Text safe inside a Markdown table cell."""
    return text.replace("|", "\\|")


def _fmt(x: float, unit: str) -> str:
    u = "" if unit in ("1", "") else f" {unit}"
    if bignum.is_overflow(x):
        return f"{bignum.sci(x)}{u}"
    if not math.isfinite(x):
        return str(x)
    return f"{x:.6g}{u}"


def _manifest_figure(x: float):
    """A key figure in manifest.json: a number, or {"log10": ...} beyond the double range."""
    if bignum.is_overflow(x):
        return {"log10": float(f"{x.log10:.12g}")}
    return float(f"{x:.12g}") if math.isfinite(x) else None


def compiled_model(name: str, va_text: str) -> tuple[bytes | None, dict]:
    """The .osdi of ``va_text`` (openvaf-r, generic CPU, through the compile cache) and its
    manifest entry; (None, entry saying why) when openvaf-r is not installed."""
    from .errors import SimulatorMissing
    from .sim.vacask import TARGET_CPU, openvaf_version, compile_va_cached
    from .sim.tools import openvaf_command

    try:
        version = openvaf_version(openvaf_command())
    except SimulatorMissing as exc:
        return None, {"built": False, "why": str(exc).splitlines()[0]}
    data = compile_va_cached(va_text, name).read_bytes()
    return data, {"built": True, "source": f"{name}.va", "compiler": version.splitlines()[0],
                  "target_cpu": TARGET_CPU,
                  "check": "byte-identical when rebuilt from the same .va by the same compiler; "
                           "its behaviour is verified against the reference by `compactgen verify` "
                           "in ngspice (OSDI) and VACASK"}


def build_files(card: Card, compiled: bool = True) -> dict[str, str | bytes]:
    """Every output file of a build (nothing is written): text, and the compiled model NAME.osdi
    as bytes (``compiled=False``, or no openvaf-r: left out, and the manifest says why)."""
    ir = card.ir()
    figs = eval_figures(ir)
    ng = render.ngspice_context(ir)
    files: dict[str, str | bytes] = {
        f"{ir.name}.va": render.verilog_a(ir),
        f"{ir.name}.lib": render.ngspice_text(ng),
        render.osdi_library_file(ir): render.ngspice_osdi(ir),
        f"{ir.name}.md": datasheet(card, ir, figs, ng),
    }
    osdi_entry = {"built": False, "why": "not asked for"}
    if compiled:
        data, osdi_entry = compiled_model(ir.name, files[f"{ir.name}.va"])
        if data is not None:
            files[render.osdi_file(ir)] = data
    manifest = {
        "format": BUILD_FORMAT,
        "generator": f"compactgen {__version__}",
        "kind": ir.kind,
        "name": ir.name,
        "card_sha256": card.sha256(),
        "model_digest": ir.digest(),
        "parameter_digest": render.param_digest(ir),
        "figures": {k: _manifest_figure(v) for k, v in figs.items()},
        "files": {k: hashlib.sha256(v if isinstance(v, bytes) else v.encode()).hexdigest()
                  for k, v in sorted(files.items())},
        "compiled": {render.osdi_file(ir): osdi_entry},
    }
    files[BUILD_MANIFEST] = json.dumps(manifest, indent=2, sort_keys=True, allow_nan=False) + "\n"
    return files


def write_files(files: dict[str, str | bytes], out_dir: str | Path) -> list[Path]:
    """Write ``files`` into ``out_dir`` all-or-nothing: stage them in a temporary folder beside
    it, then move each into place; on failure remove what was staged and, if ``out_dir`` did
    not exist before, the folder too."""
    out = Path(out_dir)
    existed = out.exists()
    if existed and not out.is_dir():
        raise InputError(f"{out}: exists and is not a folder")
    out.mkdir(parents=True, exist_ok=True)
    stage = Path(tempfile.mkdtemp(prefix=".compactgen-", dir=out))
    written = []
    try:
        for name, content in files.items():
            p = stage / name
            p.parent.mkdir(parents=True, exist_ok=True)
            if isinstance(content, bytes):
                p.write_bytes(content)
            else:
                p.write_text(content, encoding="utf-8")
        for name in files:
            target = out / name
            target.parent.mkdir(parents=True, exist_ok=True)
            os.replace(stage / name, target)
            written.append(target)
    except BaseException:
        for p in written:
            p.unlink(missing_ok=True)
        shutil.rmtree(stage, ignore_errors=True)
        if not existed:
            shutil.rmtree(out, ignore_errors=True)
        raise
    shutil.rmtree(stage, ignore_errors=True)
    return written
