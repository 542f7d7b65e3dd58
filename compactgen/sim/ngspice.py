"""Run ngspice decks through the shared library (PySpice) in child processes, or in batch mode.

A hung ngspice cannot be interrupted inside its own process, so every shared-library run happens
in a worker process (one libngspice each) that the caller can kill after a timeout.  Workers are
kept in a small pool and reused across calls; a worker whose run failed stays usable, a worker
that was killed is replaced.

Decks are plain SPICE text: a title line, elements, ``.options`` and dot analyses (``.tran``,
``.dc``, ``.op``), no ``.control`` block.  Compiled Verilog-A models (OSDI) a deck uses are passed
beside it as ``{module name: .osdi path}``: a fresh worker loads each with ngspice's ``osdi``
command before its first deck (a batch run lists them in its ``.spiceinit``); a worker that holds
another file for the same module name, or has run decks without the model, is not used for it.  Results map the vector names of the last plot, as the
shared library spells them (``time``, ``a``, ``x1.mz``, ``vm1#branch``, ``v-sweep``), to arrays.

Workers are started with multiprocessing's "forkserver" (or "spawn") method, which imports the
main script again in the child: a script that calls these functions at top level must guard
that code with ``if __name__ == "__main__":``.
"""
from __future__ import annotations

import atexit
import logging
import multiprocessing
import os
import re
import tempfile
import threading
from collections import deque
from collections.abc import Iterable, Mapping
from concurrent.futures import ThreadPoolExecutor
from multiprocessing.connection import Connection
from pathlib import Path
from time import monotonic

import numpy as np

from compactgen.errors import SimulationError
from compactgen.sim.rawfile import read_raw
from compactgen.sim.tools import TAIL_LINES, check_not_stopping, exit_text, exit_with_parent, format_tail, ngspice_command, ngspice_shared, register_child, run_tool, unregister_child

__all__ = ["NgspiceWorker", "run_ngspice", "run_ngspice_batch", "run_ngspice_many"]

_START_METHOD = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"

_SUFFIXES = {"t": 1e12, "g": 1e9, "meg": 1e6, "k": 1e3, "mil": 25.4e-6, "m": 1e-3, "u": 1e-6,
             "n": 1e-9, "p": 1e-12, "f": 1e-15}
_NUMBER = re.compile(r"([+-]?(?:\d+\.?\d*|\.\d+)(?:e[+-]?\d+)?)(meg|mil|[tgkmunpf])?[a-z]*",
                     re.IGNORECASE)


class NgspiceWorker:
    """A child process that owns one libngspice and runs decks on it, one at a time."""

    def __init__(self) -> None:
        check_not_stopping("ngspice worker")
        library = ngspice_shared()
        context = multiprocessing.get_context(_START_METHOD)
        self._conn, child_conn = context.Pipe()
        # only this process holds the write end: the child sees EOF on it when we are gone,
        # however we ended (even SIGKILL), and exits then, busy or not
        alive_r, self._alive = context.Pipe(duplex=False)
        self._process = context.Process(target=_serve, args=(child_conn, library, alive_r), daemon=True,
                                        name="compactgen-ngspice")
        self._process.start()
        child_conn.close()
        alive_r.close()
        register_child(self._process)
        #: compiled models this worker's ngspice has loaded: module name -> .osdi path
        self.osdi: dict[str, str] = {}

        #: decks this worker has run
        self.runs = 0

    def can_load(self, osdi: Mapping[str, str | Path]) -> bool:
        """False when this worker holds another file for one of the module names in ``osdi``, or
        would have to load a compiled model after it has run a deck: libngspice 46 crashes
        (SIGSEGV) running a deck with a model loaded after an earlier circuit was removed, so
        compiled models are loaded into fresh workers only."""
        if any(self.osdi.get(m, str(p)) != str(p) for m, p in osdi.items()):
            return False
        return self.runs == 0 or all(m in self.osdi for m in osdi)

    @property
    def pid(self) -> int | None:
        """Process id of the child."""
        return self._process.pid

    @property
    def alive(self) -> bool:
        """True while the child process runs."""
        return self._process.is_alive()

    def run(self, deck: str, timeout: float = 300.0,
            osdi: Mapping[str, str | Path] | None = None) -> dict[str, np.ndarray]:
        """Run ``deck`` and return the vectors of its last plot.

        ``osdi`` maps module names to the compiled models the deck uses (loaded first).
        Raises SimulationError with the last lines of ngspice output when the run fails, yields
        no vectors, stops before the ``.tran`` end time, or takes longer than ``timeout``
        seconds (the child is then killed).
        """
        deck = _prepare_deck(deck)
        osdi = _osdi_files(osdi)
        if not self.alive:
            raise SimulationError(f"ngspice worker process {self.pid} is not running "
                                  f"(exit code {self._process.exitcode})")
        if not self.can_load(osdi):
            raise SimulationError(f"ngspice worker process {self.pid} cannot load {sorted(osdi)} (another "
                                  "file of the same name, or decks already run); run the deck in a new worker")
        load = [p for m, p in osdi.items() if m not in self.osdi]
        try:
            self._conn.send((deck, load))
            kind, payload, tail = self._wait(deck, timeout)
        except BaseException:
            self.close()  # the child may still be busy with this deck: never reuse it
            raise
        self.osdi.update(osdi)
        self.runs += 1
        if kind == "failed":
            raise _failure(deck, payload, tail)
        _check_vectors(deck, payload, tail)
        return payload

    def _wait(self, deck: str, timeout: float) -> tuple[str, object, deque[str]]:
        """Collect output lines until the child sends its verdict on ``deck``."""
        tail: deque[str] = deque(maxlen=TAIL_LINES)
        deadline = monotonic() + timeout
        while True:
            remaining = deadline - monotonic()
            if remaining <= 0 or not self._conn.poll(remaining):
                raise _failure(deck, f"no result within the timeout of {timeout:g} s; the ngspice "
                                     f"worker process was killed", tail)
            try:
                kind, payload = self._conn.recv()
            except (EOFError, OSError):
                self._process.join()
                raise _failure(deck, f"the ngspice worker process died (exit code "
                                     f"{self._process.exitcode})", tail) from None
            if kind == "line":
                tail.append(payload)
            else:
                return kind, payload, tail

    def close(self) -> None:
        """Stop the child process (killing it if it is busy)."""
        self._conn.close()
        self._alive.close()
        if self._process.is_alive():
            self._process.kill()
        self._process.join()
        unregister_child(self._process)

    def __enter__(self) -> NgspiceWorker:
        return self

    def __exit__(self, *exc_info: object) -> None:
        self.close()


def _serve(conn: Connection, library: str, alive: Connection) -> None:
    """Child process: receive decks from ``conn``, run them, send output lines and results."""
    exit_with_parent(alive)
    logging.getLogger("PySpice").setLevel(logging.CRITICAL)  # we report ngspice output ourselves
    from PySpice.Spice.NgSpice.Shared import NgSpiceCommandError, NgSpiceShared

    class StreamingNgSpice(NgSpiceShared):
        """Sends every ngspice output line to the parent as it is printed."""

        recent: list[str] = []  # lines since the last command (to judge an `osdi` load)

        def send_char(self, message: str, ngspice_id: int) -> int:
            _, _, text = message.partition(" ")
            if not message.endswith("\r"):  # "\r" lines are progress updates
                conn.send(("line", text))
                self.recent.append(text)
            return 0

    NgSpiceShared.LIBRARY_PATH = library
    ng = StreamingNgSpice.new_instance()
    # one OpenMP thread per worker: Debian's start-up script asks for more, and parallel workers
    # on a small machine then run many times slower (OMP_NUM_THREADS does not override it)
    ng.exec_command(f"set num_threads={THREADS}")
    loaded = False
    while True:
        try:
            deck, osdi = conn.recv()
        except EOFError:
            return
        if any(not _load_osdi(ng, path, conn) for path in osdi):
            continue
        if loaded:
            ng.destroy()
            try:
                ng.remove_circuit()
            except NgSpiceCommandError:
                pass  # the previous deck did not parse, so no circuit is loaded
        try:
            ng.load_circuit(deck)
            loaded = True
            ng.run()
        except NameError as exc:  # PySpice's NgSpiceCommandError and NgSpiceCircuitError
            conn.send(("failed", f"ngspice reported an error ({exc})"))
            continue
        plot = ng.last_plot
        vectors = {} if plot == "const" else ng.plot(None, plot)
        conn.send(("ok", {name: np.array(vector._data) for name, vector in vectors.items()}))


def _load_osdi(ng, path: str, conn: Connection) -> bool:
    """Load a compiled model into the worker's ngspice; False (after telling the parent) if not."""
    ng.recent.clear()
    try:
        ng.exec_command(f"osdi {path}")
    except NameError as exc:  # PySpice's NgSpiceCommandError
        ng.recent.append(str(exc))
    failed = [line for line in ng.recent if "rror" in line or "no such command" in line]
    if failed:
        conn.send(("failed", f"ngspice could not load the compiled model {path}: {failed[0].strip()}"
                             + (" (this ngspice is built without OSDI)" if "no such command" in failed[0] else "")))
        return False
    return True


def _osdi_files(osdi: Mapping[str, str | Path] | None) -> dict[str, str]:
    """Module name -> absolute path of each compiled model; a missing file is an error."""
    out = {}
    for module, path in (osdi or {}).items():
        path = Path(path).resolve()
        if not path.is_file():
            raise SimulationError(f"compiled model {path} (module {module}) not found")
        out[module] = str(path)
    return out


#: OpenMP threads of every ngspice the project runs (set in the worker and in .spiceinit for
#: batch runs); parallel runs use one each
THREADS = 1
SPICEINIT = f"* written by compactgen: one OpenMP thread per ngspice run\nset num_threads={THREADS}\n"

_pool: list[NgspiceWorker] = []
_pool_lock = threading.Lock()


#: idle workers kept beyond this many are stopped, oldest first
MAX_IDLE = 4


def _release(worker: NgspiceWorker) -> None:
    """Return a worker to the pool if it still runs (stopping the oldest beyond MAX_IDLE)."""
    if worker.alive:
        with _pool_lock:
            _pool.append(worker)
            surplus = _pool[:-MAX_IDLE] if len(_pool) > MAX_IDLE else []
            del _pool[:len(surplus)]
        for old in surplus:
            old.close()


def _close_pool() -> None:
    """Stop every idle worker (at interpreter exit)."""
    with _pool_lock:
        while _pool:
            _pool.pop().close()


def _forget_pool() -> None:
    """In a forked child, drop the parent's workers without touching them."""
    _pool.clear()


atexit.register(_close_pool)
os.register_at_fork(after_in_child=_forget_pool)


def _acquire_for(osdi: Mapping[str, str]) -> NgspiceWorker:
    """An idle pooled worker that can run decks with ``osdi``, or a new one."""
    with _pool_lock:
        for worker in reversed(_pool):
            if worker.alive and worker.can_load(osdi):
                _pool.remove(worker)
                return worker
    return NgspiceWorker()


def run_ngspice(deck: str, timeout: float = 300.0,
                osdi: Mapping[str, str | Path] | None = None) -> dict[str, np.ndarray]:
    """Run one deck in a pooled ngspice worker; return the vectors of its last plot."""
    osdi = _osdi_files(osdi)
    worker = _acquire_for(osdi)
    try:
        return worker.run(deck, timeout, osdi)
    finally:
        _release(worker)


def run_ngspice_many(decks: Iterable[str], timeout: float = 300.0, workers: int | None = None,
                     osdi: Mapping[str, str | Path] | None = None) -> list[dict[str, np.ndarray]]:
    """Run decks in parallel worker processes; results come back in the order of ``decks``.

    ``workers`` defaults to the number of CPUs.  ``timeout`` applies to each deck.  The first
    failing deck (in order) raises SimulationError naming its position; decks not yet started
    are then skipped.  ``osdi``: the compiled models every deck uses (module name -> path).
    """
    decks = [_prepare_deck(deck) for deck in decks]
    osdi = _osdi_files(osdi)
    if not decks:
        return []
    count = max(1, min(len(decks), workers or os.cpu_count() or 1))
    idle = [_acquire_for(osdi) for _ in range(count)]
    lock = threading.Lock()

    def run_one(deck: str) -> dict[str, np.ndarray]:
        with lock:
            worker = idle.pop()
        try:
            if not worker.alive or not worker.can_load(osdi):  # killed after a timeout
                worker.close()
                worker = NgspiceWorker()
            return worker.run(deck, timeout, osdi)
        finally:
            with lock:
                idle.append(worker)

    try:
        with ThreadPoolExecutor(max_workers=count, thread_name_prefix="ngspice") as executor:
            futures = [executor.submit(run_one, deck) for deck in decks]
            results = []
            for index, future in enumerate(futures):
                try:
                    results.append(future.result())
                except SimulationError as exc:
                    executor.shutdown(wait=True, cancel_futures=True)
                    raise SimulationError(f"deck {index + 1} of {len(decks)}: {exc}") from exc
            return results
    finally:
        for worker in idle:
            _release(worker)


def run_ngspice_batch(deck: str, timeout: float = 300.0,
                      osdi: Mapping[str, str | Path] | None = None) -> dict[str, np.ndarray]:
    """Run a deck with ``ngspice -b -r out.raw`` in a temporary directory (compiled models in
    ``osdi`` are loaded by its ``.spiceinit``, with the thread count).

    Returns the last plot with the shared library's names (``v(a)`` becomes ``a``, ``i(vm1)``
    becomes ``vm1#branch``).  Success is judged by the raw file having data (and reaching the
    ``.tran`` end time), not by the exit status.
    """
    deck = _prepare_deck(deck)
    osdi = _osdi_files(osdi)
    command = ngspice_command()
    with tempfile.TemporaryDirectory(prefix="compactgen-ngspice-") as tmp:
        work = Path(tmp)
        (work / "deck.cir").write_text(deck)
        (work / ".spiceinit").write_text(SPICEINIT + "".join(f"osdi {p}\n" for p in osdi.values()))
        returncode, log = run_tool([command, "-b", "-r", "out.raw", "deck.cir"], cwd=work,
                                   timeout=timeout, what=f"ngspice deck {_title(deck)!r}")
        tail = log.split("Total elapsed time")[0].splitlines()  # drop the resource-usage trailer
        raw = work / "out.raw"
        if not raw.exists():
            raise _failure(deck, f"{command} wrote no raw file ({exit_text(returncode)})", tail)
        try:
            plot = read_raw(raw)[-1]
        except SimulationError as exc:
            raise _failure(deck, f"{exc} ({exit_text(returncode)})", tail) from exc
    data = {_shared_name(name): values for name, values in plot.data.items()}
    _check_vectors(deck, data, tail)
    return data


def _shared_name(raw_name: str) -> str:
    """Map a raw-file vector name to the name the shared library gives it."""
    match = re.fullmatch(r"([vi])\((.+)\)", raw_name)
    if match is None:
        return raw_name
    kind, inner = match.groups()
    return inner if kind == "v" else f"{inner}#branch"


def _prepare_deck(deck: str) -> str:
    """Check that ``deck`` has no .control block and make sure it ends with ``.end``."""
    if not deck.strip():
        raise SimulationError("ngspice deck is empty; expected a title line, elements and "
                              "dot analyses")
    lines = [line.rstrip() for line in deck.strip().splitlines()]
    if any(line.strip().lower().startswith(".control") for line in lines):
        raise SimulationError(f"ngspice deck {_title(deck)!r} has a .control block; the drivers "
                              "take dot analyses (.tran, .dc, .op) and .options only")
    if lines[-1].strip().lower() != ".end":
        lines.append(".end")
    return "\n".join(lines) + "\n"


def _title(deck: str) -> str:
    """The title line of a deck."""
    return deck.strip().splitlines()[0].strip() if deck.strip() else ""


def _failure(deck: str, reason: str, tail: Iterable[str]) -> SimulationError:
    """A SimulationError naming the deck, the reason, and ngspice's last output lines."""
    return SimulationError(f"ngspice deck {_title(deck)!r}: {reason}\n"
                           f"last lines of ngspice output:\n{format_tail(tail)}")


def _check_vectors(deck: str, data: dict[str, np.ndarray], tail: Iterable[str]) -> None:
    """Raise SimulationError if a run gave no data or its transient stopped short."""
    if not data or not any(len(values) for values in data.values()):
        raise _failure(deck, "the run produced no vectors", tail)
    stop = _tran_stop(deck)
    if stop is None:
        return
    if "time" not in data:
        raise _failure(deck, f"the deck has .tran but the last plot has no time vector "
                             f"(vectors: {sorted(data)})", tail)
    end = float(data["time"][-1])
    if end < stop * (1 - 1e-9):
        raise _failure(deck, f"the transient stopped at {end:.6g} s before its end time "
                             f"{stop:.6g} s", tail)


def _tran_stop(deck: str) -> float | None:
    """The stop time of the deck's ``.tran`` line, or None if there is none.

    A stop time written as a brace expression cannot be evaluated here; the end-time check is
    then skipped and only the other checks apply.
    """
    joined = re.sub(r"\n\s*\+", " ", deck)
    for line in joined.splitlines():
        fields = line.split()
        if fields and fields[0].lower() == ".tran" and len(fields) >= 3:
            return _spice_number(fields[2])
    return None


def _spice_number(text: str) -> float | None:
    """Value of a SPICE number with an optional scale suffix (``20n``, ``1meg``), else None."""
    match = _NUMBER.fullmatch(text)
    if match is None:
        return None
    mantissa, suffix = match.groups()
    return float(mantissa) * (_SUFFIXES[suffix.lower()] if suffix else 1.0)
