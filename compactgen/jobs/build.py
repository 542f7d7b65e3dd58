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


from compactgen import __version__
from compactgen.model import bignum
from compactgen.targets import render
from compactgen.model.card import Card
from compactgen.errors import InputError
from compactgen.model.evaluate import figures as eval_figures
from compactgen.targets.datasheet import datasheet

BUILD_MANIFEST = "manifest.json"
#: the "format" field of a build manifest (release.bundle.FORMAT: a release manifest's)
BUILD_FORMAT = "compactgen-build/1"


def _manifest_figure(x: float):
    """A key figure in manifest.json: a number, or {"log10": ...} beyond the double range."""
    if bignum.is_overflow(x):
        return {"log10": float(f"{x.log10:.12g}")}
    return float(f"{x:.12g}") if math.isfinite(x) else None


def compiled_model(name: str, va_text: str) -> tuple[bytes | None, dict]:
    """The .osdi of ``va_text`` (openvaf-r, generic CPU, through the compile cache) and its
    manifest entry; (None, entry saying why) when openvaf-r is not installed."""
    from compactgen.errors import SimulatorMissing
    from compactgen.sim.vacask import TARGET_CPU, openvaf_version, compile_va_cached
    from compactgen.sim.tools import openvaf_command

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
    dig = render.digests(ir)
    manifest = {
        "format": BUILD_FORMAT,
        "generator": f"compactgen {__version__}",
        "kind": ir.kind,
        "name": ir.name,
        "card_sha256": card.sha256(),
        "model_digest": dig["digest"],
        "parameter_digest": dig["param_digest"],
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
