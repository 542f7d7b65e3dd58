"""The sweep runner: local process pool by default, a Dask cluster when given its address."""
from __future__ import annotations

import numpy as np
import pytest

from compactgen.statistics.ensemble import simulator_ensembles
from compactgen.model.evaluate import figures
from compactgen.statistics.stochastic import sample_initial_angles
from compactgen.sim.tasks import chunks, run_tasks

from helpers import example_card


def _square(x):
    return x * x


def _fails(x):
    if x == 3:
        raise ValueError("task 3 is broken")
    return x


def test_chunks_and_order():
    assert chunks(list(range(7)), 3) == [[0, 1, 2], [3, 4, 5], [6]]
    with pytest.raises(ValueError):
        chunks([1], 0)
    assert run_tasks(_square, range(9), workers=2) == [x * x for x in range(9)]
    assert run_tasks(_square, [], workers=2) == []


def test_failing_task_raises():
    with pytest.raises(ValueError, match="task 3 is broken"):
        run_tasks(_fails, range(6), workers=2)


def test_unreachable_scheduler_is_a_clear_error(monkeypatch):
    from compactgen.errors import CompactgenError

    monkeypatch.setenv("COMPACTGEN_SCHEDULER_TIMEOUT", "2")
    with pytest.raises(CompactgenError, match="cannot reach the Dask scheduler"):
        run_tasks(_square, [1, 2], scheduler="tcp://127.0.0.1:9")


@pytest.mark.simulator
@pytest.mark.slow
def test_dask_cluster_runs_simulator_chunks(vacask):
    """A local Dask cluster of two worker processes runs the chunks of a VACASK ensemble (each
    worker compiles and runs its own simulator) and returns what the local pool returns."""
    distributed = pytest.importorskip("distributed")
    ir = example_card().ir()
    figs = figures(ir, temperature=300.15)
    tilt, phi = sample_initial_angles(figs["delta"], 40, np.random.default_rng(3))
    args = (ir, tilt, phi, 2.0 * figs["i_c0"], -1.0, 300.15, 3e-9)
    local = simulator_ensembles(*args, simulators=("vacask",), chunk=10, max_step=4e-12)["vacask"]
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  host="127.0.0.1") as cluster:
        seen = []
        on_dask = simulator_ensembles(*args, simulators=("vacask",), chunk=10, max_step=4e-12,
                                      scheduler=cluster.scheduler_address, progress=seen.append)["vacask"]
    assert any("Dask" in s for s in seen)
    assert np.array_equal(np.isnan(local), np.isnan(on_dask))
    assert np.allclose(local[~np.isnan(local)], on_dask[~np.isnan(on_dask)], rtol=0, atol=0)
