"""`compactgen build`: a card becomes NAME.va, NAME.lib, NAME.md and manifest.json.

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


def datasheet(card: Card, ir: ModelIR, figs: dict[str, float]) -> str:
    def lat(e):
        names = {x: r"\mathit{" + x.name.replace("_", r"\_") + "}" for x in sp.sympify(e).free_symbols}
        return sp.latex(e, mul_symbol="dot", symbol_names=names)

    specs = {s.name: s for s in ir.params}
    calibrated = []
    for name in ir.limits:
        s = specs[name]
        calibrated.append(f"{s.desc}: {s.card_text()} (`{name}`)")
    fig_rows = []
    for f in ir.figures:
        fig_rows.append(dict(name=f.name, value=_fmt(figs[f.name], f.unit), desc=_cell(f.desc),
                             source=_cell(f.source) or "—"))
    prm = []
    for s in ir.params:
        stderr = card.uncertainty.get(s.name)
        desc = s.desc if not s.computed or s.name in card.given else f"{s.desc}; computed {s.computed}"
        prm.append(dict(name=s.name, value=s.card_text(), range=s.range_text(s.card_unit), kind=s.kind,
                        desc=_cell(desc), source=_cell(s.source), stderr=s.card_text(stderr) if stderr else ""))
    ctx = dict(
        name=ir.name, title=ir.title, kind=ir.kind, version=__version__, digest=ir.digest(),
        param_digest=render.param_digest(ir), description=card.description,
        calibrated=calibrated, terminals=ir.terminals, conventions=ir.conventions,
        instance_params=[dict(name=s.name, default=format_number(s.default)) for s in ir.params
                         if s.kind == "instance"],
        step_cap=f'{(min(2e-12, 1 / (25 * figs["f_fmr"])) if "f_fmr" in figs else 2e-12):.3g}',
        figures=fig_rows, params=prm, states=ir.states, outputs=ir.outputs, nodes=ir.nodes,
        derived=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.derived],
        locals=[dict(lhs=lat(k), rhs=lat(e)) for k, e in ir.locals],
    )
    ctx["states"] = [dict(name=s.name, unit=s.unit, desc=s.desc, latex=lat(s.symbol), rhs=lat(s.rhs)) for s in ir.states]
    from .thermal_report import thermal_context

    ctx["thermal"] = thermal_context(ir)
    return render.environment().get_template("datasheet/model.md.j2").render(**ctx)


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


def build_files(card: Card) -> dict[str, str]:
    """Every output file of a build, as text (nothing is written)."""
    ir = card.ir()
    figs = eval_figures(ir)
    files = {
        f"{ir.name}.va": render.verilog_a(ir),
        f"{ir.name}.lib": render.ngspice(ir),
        f"{ir.name}.md": datasheet(card, ir, figs),
    }
    manifest = {
        "generator": f"compactgen {__version__}",
        "kind": ir.kind,
        "name": ir.name,
        "card_sha256": card.sha256(),
        "model_digest": ir.digest(),
        "parameter_digest": render.param_digest(ir),
        "figures": {k: _manifest_figure(v) for k, v in figs.items()},
        "files": {k: hashlib.sha256(v.encode()).hexdigest() for k, v in sorted(files.items())},
    }
    files["manifest.json"] = json.dumps(manifest, indent=2, sort_keys=True, allow_nan=False) + "\n"
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
