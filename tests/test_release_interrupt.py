"""A release stopped part-way leaves no hidden staging folder and no process behind; worker
processes end with their parent however it ends; staging folders of killed releases are swept."""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from compactgen.jobs.release.bundle import Staging

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "pmtj35_demo.toml"


def _session_processes(sid: int) -> list[str]:
    """Processes of session ``sid`` that still run (zombies, already ended and waiting for init to
    collect their exit status, do not count)."""
    ps = subprocess.run(["ps", "-eo", "pid=,sid=,stat=,args="], capture_output=True, text=True, check=True).stdout
    out = []
    for line in ps.splitlines():
        parts = line.split(None, 3)
        if len(parts) >= 3 and parts[1] == str(sid) and not parts[2].startswith("Z"):
            out.append(line.strip())
    return out


def _wait_until(condition, limit: float = 120.0, step: float = 0.2) -> bool:
    """Poll ``condition`` until it holds or ``limit`` seconds passed (a guard against hanging,
    not a timing requirement)."""
    end = time.monotonic() + limit
    while time.monotonic() < end:
        if condition():
            return True
        time.sleep(step)
    return condition()


def _kill_session(sid: int) -> None:
    """Clean-up after a failed assertion: end what the test started (by process id)."""
    for line in _session_processes(sid):
        try:
            os.kill(int(line.split()[0]), signal.SIGKILL)
        except ProcessLookupError:
            pass


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_pool_workers_end_with_their_parent_even_when_it_is_killed():
    code = ("import time\nfrom compactgen.sim.tasks import run_tasks\nif __name__ == '__main__':\n"
            "    run_tasks(time.sleep, [600, 600], workers=2)\n")
    proc = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, start_new_session=True,
                            stderr=subprocess.DEVNULL)
    try:
        # the parent, the forkserver and two pool workers (and the resource tracker)
        assert _wait_until(lambda: len(_session_processes(proc.pid)) >= 4)
        proc.send_signal(signal.SIGKILL)  # no handler runs: the workers must notice by themselves
        proc.wait()
        assert _wait_until(lambda: not _session_processes(proc.pid)), _session_processes(proc.pid)
    finally:
        proc.kill()
        proc.wait()
        _kill_session(proc.pid)


def test_staging_folders_of_dead_processes_are_swept_and_said(tmp_path):
    dead = tmp_path / f".old-1.0.0.partial-{_dead_pid()}-abcd1234"
    dead.mkdir()
    (dead / "old.va").write_text("half-written")
    legacy = tmp_path / ".dev-1.2.0.partial-x1y2z3"  # before staging folders named their process
    legacy.mkdir()
    live = tmp_path / f".other-2.0.0.partial-{os.getpid()}-efgh5678"  # a release still running
    live.mkdir()
    said = []
    with Staging(tmp_path, "dev-1.2.0", said.append) as stage:
        assert stage.path.name.startswith(f".dev-1.2.0.partial-{os.getpid()}-")
        stage.write("a.txt", b"x")
        stage.publish()
    assert not dead.exists() and not legacy.exists() and live.exists()
    assert (tmp_path / "dev-1.2.0" / "a.txt").read_bytes() == b"x"
    assert len(said) == 2 and any(str(dead) in s and "no longer runs" in s for s in said)


def test_staging_is_removed_on_any_exception(tmp_path):
    out = tmp_path / "releases"
    with pytest.raises(KeyboardInterrupt):
        with Staging(out, "dev-1.0.0") as stage:
            stage.write("model.va", b"module")
            raise KeyboardInterrupt
    assert list(out.iterdir()) == []
    (out / "keep").write_text("x")
    with pytest.raises(RuntimeError):
        with Staging(out, "dev-1.0.0") as stage:
            stage.write("model.va", b"module")
            raise RuntimeError("crash")
    assert [p.name for p in out.iterdir()] == ["keep"]


@pytest.mark.simulator
@pytest.mark.slow
@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT])
def test_release_stopped_mid_way_leaves_no_staging_and_no_process(tmp_path, sig):
    from conftest import needs

    needs("ngspice", "vacask", "openvaf", "ld")
    out = tmp_path / "releases"
    log = tmp_path / "stderr.txt"
    with open(log, "w") as err:
        proc = subprocess.Popen([sys.executable, "-m", "compactgen", "release", str(EXAMPLE), "1.0.0",
                                 "-o", str(out)], cwd=ROOT, stdout=subprocess.DEVNULL, stderr=err,
                                start_new_session=True)
    try:
        assert _wait_until(lambda: out.exists() and any(p.name.startswith(".") for p in out.iterdir())), \
            "the release never staged its bundle"
        # the bench suite is running in the simulators: worker processes exist
        assert _wait_until(lambda: "ngspice:" in log.read_text() and len(_session_processes(proc.pid)) >= 3)
        proc.send_signal(sig)
        assert proc.wait(timeout=300) == 128 + sig
        last = log.read_text().strip().splitlines()[-1]
        assert ("terminated by SIGTERM" if sig == signal.SIGTERM else "interrupted") in last
        assert not out.exists() or not list(out.iterdir())  # no staging folder, no bundle
        assert _wait_until(lambda: not _session_processes(proc.pid)), _session_processes(proc.pid)
    finally:
        proc.kill()
        proc.wait()
        _kill_session(proc.pid)
