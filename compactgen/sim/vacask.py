"""Compile Verilog-A with openvaf-r, run VACASK netlists, and parse Verilog-A with admsXml.

openvaf-r quirks handled here: it exits 0 without writing the .osdi when the system linker
``ld`` is missing, it colours its diagnostics with ANSI codes, and it leaves object files next
to its output.  VACASK exits 0 after an aborted analysis unless the control block says
``abort always``, so netlists must contain it.
"""
from __future__ import annotations

import functools
import hashlib
import threading
import os
import re
import tempfile
from collections.abc import Iterable, Mapping
from pathlib import Path

from compactgen.cache import CACHE_ENV, cache_dir as _cache_subdir  # noqa: F401 (CACHE_ENV: kept importable here)
from compactgen.errors import SimulationError
from compactgen.sim.rawfile import RawPlot, read_raw
from compactgen.sim.tools import admsxml_command, available, exit_text, format_tail, openvaf_command, run_tool, vacask_command

__all__ = ["admsxml_check", "compile_va", "compile_va_cached", "run_vacask"]


#: openvaf-r's target CPU for every compiled model: "generic" code runs on any x86-64 machine a
#: designer has, and the output is byte-identical for the same source, file name and compiler
#: (measured: two builds in different folders agree; "native" code may not run elsewhere)
TARGET_CPU = "generic"


def compile_va(va_path: str | Path, osdi_path: str | Path | None = None, timeout: float = 120,
               target_cpu: str = TARGET_CPU) -> Path:
    """Compile ``va_path`` with openvaf-r to ``osdi_path`` (default: next to it, suffix .osdi).

    Any old .osdi is deleted first, and the new one must exist afterwards (openvaf-r exits 0
    when it cannot link).  The build runs in a temporary folder beside the target, so its
    object files never stay behind and the .osdi appears atomically.
    """
    va_path = Path(va_path).resolve()
    if not va_path.is_file():
        raise SimulationError(f"Verilog-A file {va_path} not found")
    osdi_path = Path(osdi_path).resolve() if osdi_path is not None else va_path.with_suffix(".osdi")
    command = openvaf_command()
    osdi_path.unlink(missing_ok=True)
    osdi_path.parent.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(prefix=".openvaf-", dir=osdi_path.parent) as tmp:
        built = Path(tmp) / osdi_path.name
        returncode, log = run_tool(
            [command, str(va_path), "-o", str(built), "--target_cpu", target_cpu],
            cwd=Path(tmp), timeout=timeout, what=f"compiling {va_path}")
        if returncode != 0:
            raise SimulationError(f"openvaf-r could not compile {va_path} "
                                  f"({exit_text(returncode)}):\n{log.strip()}")
        if not built.is_file():
            hint = ("the linker 'ld' is not on PATH: install the Debian package binutils"
                    if not available("ld") else "see its output")
            raise SimulationError(f"openvaf-r exited 0 but wrote no {osdi_path.name} for "
                                  f"{va_path}; {hint}:\n{format_tail(log)}")
        os.replace(built, osdi_path)
    return osdi_path


@functools.lru_cache(maxsize=None)
def openvaf_version(command: str) -> str:
    """The version line of the openvaf-r at ``command``."""
    returncode, log = run_tool([command, "--version"], cwd=Path(command).parent, timeout=60,
                                what="asking openvaf-r for its version")
    if returncode != 0:
        raise SimulationError(f"{command} --version failed ({exit_text(returncode)}):\n"
                              f"{format_tail(log)}")
    return log.strip()


def _default_cache_dir() -> Path:
    """``$COMPACTGEN_CACHE/osdi``, or ``~/.cache/compactgen/osdi``."""
    return _cache_subdir("osdi")


def compile_va_cached(va_text: str, module_name: str, cache_dir: str | Path | None = None) -> Path:
    """Compile self-contained Verilog-A text once and return the cached .osdi.

    The cache key is the sha256 of the text, the openvaf-r version and the target CPU; the file is
    compiled as ``<module_name>.osdi`` (openvaf-r writes the file name into it), so its bytes are
    those a build ships.  The file is built under
    a temporary name and moved into place with os.replace, so parallel processes never see a
    partial file.
    """
    if not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", module_name):
        raise ValueError(f"module name {module_name!r} is not a plain Verilog-A identifier")
    cache = Path(cache_dir) if cache_dir is not None else _default_cache_dir()
    version = openvaf_version(openvaf_command())
    digest = hashlib.sha256(f"{version}\n{TARGET_CPU}\n{va_text}".encode()).hexdigest()
    target = cache / f"{module_name}-{digest[:20]}.osdi"
    with _COMPILE_LOCKS.setdefault(str(target), threading.Lock()):  # threads compile once
        return _compile_into_cache(va_text, module_name, cache, target)


_COMPILE_LOCKS: dict[str, threading.Lock] = {}


def _compile_into_cache(va_text: str, module_name: str, cache: Path, target: Path) -> Path:
    if target.is_file():
        return target
    cache.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(prefix=f".{module_name}-", dir=cache) as tmp:
        source = Path(tmp) / f"{module_name}.va"
        source.write_text(va_text)
        try:
            built = compile_va(source)
        except SimulationError as exc:
            raise SimulationError(f"module {module_name!r} (cached build): {exc}") from exc
        os.replace(built, target)
    return target


def run_vacask(netlist: str, osdi_files: Mapping[str, str | Path] | Iterable[str | Path],
               timeout: float = 300.0) -> dict[str, RawPlot]:
    """Run a VACASK netlist with ``vacask -qp`` in a temporary folder.

    ``osdi_files`` maps the names the netlist ``load``s to compiled files (a plain list uses
    each file's own name).  Returns analysis name -> RawPlot for every ``<name>.raw`` written.
    Raises SimulationError with the last lines of the log when the netlist lacks
    ``abort always``, VACASK exits non-zero, its log says "aborted", or an analysis wrote no
    raw file.
    """
    if not re.search(r"^\s*abort\s+always\b", netlist, re.MULTILINE):
        raise SimulationError("VACASK netlist has no 'abort always' line in its control block; "
                              "without it VACASK exits 0 after an aborted analysis, so add "
                              "'abort always' after 'control'")
    files = (dict(osdi_files) if isinstance(osdi_files, Mapping)
             else {Path(path).name: path for path in osdi_files})
    for name, path in files.items():
        if not Path(path).is_file():
            raise SimulationError(f"compiled model {path} (loaded as {name!r}) not found")
    analyses = re.findall(r"^\s*analysis\s+(\S+)", netlist, re.MULTILINE)
    command = vacask_command()
    with tempfile.TemporaryDirectory(prefix="compactgen-vacask-") as tmp:
        work = Path(tmp)
        for name, path in files.items():
            (work / name).parent.mkdir(parents=True, exist_ok=True)
            (work / name).symlink_to(Path(path).resolve())
        (work / "netlist.sim").write_text(netlist)
        returncode, log = run_tool([command, "-qp", "netlist.sim"], cwd=work, timeout=timeout,
                                    what="VACASK netlist")
        if returncode != 0:
            raise SimulationError(f"VACASK failed ({exit_text(returncode)}; compiled models "
                                  f"given as {sorted(files)}):\n{format_tail(log)}")
        if "aborted" in log.lower():
            raise SimulationError(f"VACASK reports an aborted analysis:\n{format_tail(log)}")
        missing = [name for name in analyses if not (work / f"{name}.raw").is_file()]
        if missing:
            raise SimulationError(f"VACASK wrote no raw file for analyses {missing}:\n"
                                  f"{format_tail(log)}")
        return {raw.stem: _single_plot(raw) for raw in sorted(work.glob("*.raw"))}


def _single_plot(raw: Path) -> RawPlot:
    """The one plot VACASK writes per analysis file."""
    plots = read_raw(raw)
    if len(plots) != 1:
        raise SimulationError(f"raw file {raw.name}: expected one plot from VACASK, found "
                              f"{len(plots)}")
    return plots[0]


def admsxml_check(va_path: str | Path, timeout: float = 60) -> None:
    """Parse ``va_path`` with admsXml in a temporary folder; raise SimulationError on failure."""
    va_path = Path(va_path).resolve()
    if not va_path.is_file():
        raise SimulationError(f"Verilog-A file {va_path} not found")
    command = admsxml_command()
    with tempfile.TemporaryDirectory(prefix="compactgen-adms-") as tmp:
        returncode, log = run_tool([command, str(va_path)], cwd=Path(tmp), timeout=timeout,
                                    what=f"parsing {va_path}")
    if returncode != 0:
        raise SimulationError(f"admsXml could not parse {va_path} ({exit_text(returncode)}):\n"
                              f"{format_tail(log)}")
