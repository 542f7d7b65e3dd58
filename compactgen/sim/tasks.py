"""One runner for work that outgrows one process: Monte Carlo, corner x temperature, ensembles.

``run_tasks(func, tasks)`` maps a module-level function over a list of tasks and returns the
results in task order.  By default the tasks run in a local process pool; given the address of
a Dask distributed scheduler (argument ``scheduler`` or environment variable
COMPACTGEN_SCHEDULER, e.g. ``tcp://10.0.0.5:8786``) they run on that cluster instead, each
worker starting its own simulator processes.  Make each task big enough (a chunk of instances,
not one) that process start-up and transfer do not dominate: ``chunks`` helps.

Tasks must be picklable and self-contained (they carry model text, not paths), so that a worker
on another machine can run them; compiled Verilog-A is cached per machine by content hash.
"""
from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Callable, Sequence

from compactgen.errors import CompactgenError

SCHEDULER_ENV = "COMPACTGEN_SCHEDULER"
TIMEOUT_ENV = "COMPACTGEN_SCHEDULER_TIMEOUT"  # seconds to wait for the scheduler (default 30)


def chunks(items: Sequence, size: int) -> list[list]:
    """``items`` cut into consecutive lists of at most ``size``."""
    if size < 1:
        raise ValueError(f"chunk size must be at least 1, got {size}")
    return [list(items[i:i + size]) for i in range(0, len(items), size)]


def run_tasks(func: Callable, tasks: Sequence, *, scheduler: str | None = None, workers: int | None = None,
              progress: Callable[[str], None] | None = None, what: str = "tasks") -> list:
    """``[func(t) for t in tasks]``, run in parallel; results in task order.

    A failing task raises its exception here (after the others were cancelled)."""
    tasks = list(tasks)
    if not tasks:
        return []
    say = progress or (lambda msg: None)
    address = scheduler if scheduler is not None else os.environ.get(SCHEDULER_ENV) or None
    if address:
        return _run_dask(func, tasks, address, say, what)
    count = max(1, min(len(tasks), workers or os.cpu_count() or 1))
    if count == 1:
        out = []
        for k, t in enumerate(tasks):
            out.append(func(t))
            say(f"{what}: {k + 1}/{len(tasks)} done")
        return out
    from compactgen.sim.tools import exit_with_parent

    method = "forkserver" if "forkserver" in multiprocessing.get_all_start_methods() else "spawn"
    context = multiprocessing.get_context(method)
    results: list = [None] * len(tasks)
    # the workers end with this process however it ends (their simulators end with them)
    alive_r, alive_w = context.Pipe(duplex=False)
    try:
        with ProcessPoolExecutor(max_workers=count, mp_context=context, initializer=exit_with_parent,
                                 initargs=(alive_r,)) as pool:
            futures = {pool.submit(func, t): k for k, t in enumerate(tasks)}
            done = 0
            try:
                for fut in as_completed(futures):
                    results[futures[fut]] = fut.result()
                    done += 1
                    say(f"{what}: {done}/{len(tasks)} done (local pool, {count} processes)")
            except BaseException:
                for f in futures:
                    f.cancel()
                for p in list(getattr(pool, "_processes", {}).values()):  # do not wait for running tasks
                    p.kill()
                raise
    finally:
        alive_r.close()
        alive_w.close()
    return results


def _run_dask(func, tasks, address: str, say, what: str) -> list:
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - dask is a declared dependency
        raise CompactgenError(f"a scheduler address ({address}) was given but dask.distributed is not "
                              f"installed: pip install 'dask[distributed]'") from exc
    try:
        client = Client(address, timeout=float(os.environ.get(TIMEOUT_ENV, "30")), set_as_default=False)
    except (OSError, TimeoutError) as exc:
        raise CompactgenError(f"cannot reach the Dask scheduler at {address!r} ({exc}); start one with "
                              f"`dask scheduler` and workers with `dask worker {address}`, or unset "
                              f"{SCHEDULER_ENV} to run locally") from exc
    try:
        futures = client.map(func, tasks, pure=False)
        n_workers = len(client.scheduler_info().get("workers", {}))
        results = []
        for k, fut in enumerate(futures):
            results.append(fut.result())
            say(f"{what}: {k + 1}/{len(tasks)} done (Dask at {address}, {n_workers} workers)")
        return results
    finally:
        client.close()
