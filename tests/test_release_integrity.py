"""What `check-release` proves, and checking a bundle against a digest recorded elsewhere.

The bundles here are real releases of the demo card whose bench suite runs on the reference
solver only (the simulators are left out to keep this cheap: integrity does not depend on them)."""
from __future__ import annotations

import hashlib
import json
import shutil
import stat
from pathlib import Path

import pytest

from compactgen.harness import verify
from compactgen.cli import main
from compactgen.jobs.release.bundle import MANIFEST, SEAL, check_bundle, manifest_text, seal

EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "pmtj35_demo.toml"


def _reference_only(monkeypatch):
    real = verify.run_suite
    monkeypatch.setattr(verify, "run_suite", lambda ir, benches, simulators=(), **kw: real(ir, benches, (), **kw))


@pytest.fixture(scope="module")
def bundles(tmp_path_factory):
    mp = pytest.MonkeyPatch()
    _reference_only(mp)
    root = tmp_path_factory.mktemp("integrity")
    printed = {}
    try:
        for version, extra in (("1.0.0", []), ("1.1.0", ["--against", str(root / "rel" / "pmtj35_demo-1.0.0")])):
            out = _run_main(["release", str(EXAMPLE), version, "-o", str(root / "rel"), *extra])
            printed[version] = out
    finally:
        mp.undo()
    return dict(root=root, v1=root / "rel" / "pmtj35_demo-1.0.0", v2=root / "rel" / "pmtj35_demo-1.1.0",
                printed=printed)


def _run_main(args: list[str]) -> tuple[int, str]:
    import contextlib
    import io

    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        code = main(args)
    return code, out.getvalue()


def _file_digest(bundle: Path) -> str:
    return hashlib.sha256((bundle / MANIFEST).read_bytes()).hexdigest()


def _resealed_copy(src: Path, dst: Path) -> Path:
    """A copy with a model file edited and the manifest re-hashed and re-sealed: deliberate tampering."""
    shutil.copytree(src, dst)
    for p in [dst, *dst.rglob("*")]:
        p.chmod(p.stat().st_mode | stat.S_IWUSR)
    lib = dst / "pmtj35_demo.lib"
    lib.write_text(lib.read_text() + "* quietly changed\n")
    m = json.loads((dst / MANIFEST).read_text())
    m["files"]["pmtj35_demo.lib"] = hashlib.sha256(lib.read_bytes()).hexdigest()
    m.pop(SEAL)
    (dst / MANIFEST).write_text(manifest_text(seal(m)))
    return dst


def test_release_prints_the_bundle_digest_to_record(bundles):
    for version, bundle in (("1.0.0", bundles["v1"]), ("1.1.0", bundles["v2"])):
        code, out = bundles["printed"][version]
        assert code == 0
        assert f"bundle digest: {_file_digest(bundle)}" in out and "Record this digest outside the bundle" in out


def test_check_release_says_what_it_proves(bundles):
    code, out = _run_main(["check-release", str(bundles["v1"])])
    assert code == 0 and "intact" in out and _file_digest(bundles["v1"]) in out
    assert "integrity against accidental change only" in out and "re-seal" in out


def test_resealed_bundle_passes_the_self_check_but_not_the_recorded_digest(bundles, tmp_path):
    forged = _resealed_copy(bundles["v1"], tmp_path / "pmtj35_demo-1.0.0")
    assert check_bundle(forged).ok  # the bundle's own hashes cannot tell: the documented limit
    recorded = _file_digest(bundles["v1"])
    code, out = _run_main(["check-release", str(forged), "--digest", recorded])
    assert code == 1 and "DIGEST DIFFERS" in out
    code, out = _run_main(["check-release", str(bundles["v1"]), "--digest", recorded.upper()])
    assert code == 0 and "digest matches the one recorded at release" in out


def test_later_release_keeps_a_record_of_the_previous_one(bundles, tmp_path):
    rec = json.loads((bundles["v2"] / MANIFEST).read_text())["comparison"]
    assert rec["against"] == "pmtj35_demo 1.0.0" and rec["against_digest"] == _file_digest(bundles["v1"])
    code, out = _run_main(["check-release", str(bundles["v2"]), "--against", str(bundles["v1"])])
    assert code == 0 and "matches the record" in out
    forged = _resealed_copy(bundles["v1"], tmp_path / "pmtj35_demo-1.0.0")
    code, out = _run_main(["check-release", str(bundles["v2"]), "--against", str(forged)])
    assert code == 1 and "DIFFERS from the record" in out


@pytest.mark.parametrize("args, fragment", [
    (["--against", "{v2}"], "released without --against"),
    (["--digest", "abc"], "expected 64 hexadecimal digits"),
    (["{v2}", "--digest", "0" * 64], "check one bundle"),
])
def test_bad_check_release_requests_exit_2(bundles, args, fragment):
    import contextlib
    import io

    err = io.StringIO()
    args = [a.format(v2=bundles["v2"]) for a in args]
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(["check-release", str(bundles["v1"]), *args])
    assert code == 2 and fragment in err.getvalue()
