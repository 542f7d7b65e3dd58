"""Release bundles: a frozen card, the model files, the datasheet, the bench curves, reports
and a manifest with a sha256 of every file.

A bundle is written into a hidden staging folder beside its final place and renamed into
place only when every file is written, so an interrupted release leaves no bundle; an
existing version is never overwritten.  The release manifest (``release.json``; bundles made
before it was renamed hold it as ``manifest.json``, the name `compactgen build` uses for its
own, other manifest) seals itself: ``manifest_sha256`` is the sha256 of the manifest written
without that key, so an edited manifest is caught too.  That proves integrity against
accidental change only (whoever can write a bundle can re-seal it); the bundle digest (sha256
of the release manifest file), recorded outside the bundle, covers the rest.
"""
from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
import os
import re
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from compactgen import __version__
from compactgen.model import bignum
from compactgen.errors import ReleaseError
from compactgen.jobs.release.curves import CurveTable, read_csv
from compactgen.jobs.release.semver import Version, parse_version

FORMAT = "compactgen-release/1"  # the "format" of a release manifest (build.BUILD_FORMAT: a build's)
MANIFEST = "release.json"
#: the release manifest's name in bundles made before it was renamed (read, never written)
OLD_MANIFEST = "manifest.json"
SEAL = "manifest_sha256"
#: manifest keys that differ between two releases of the same card (kept out of golden files)
VOLATILE = ("created", SEAL)
_HEX64 = re.compile(r"^[0-9a-f]{64}$")


class ReleaseRefused(ReleaseError):
    """The model fails its benches, or changed beyond tolerance without an accepted reason."""

    exit_status = 1


# ---- the bundle as read back -------------------------------------------------------------------
@dataclass
class Bundle:
    manifest: dict
    root: Path | None = None  # on disk
    files: dict[str, bytes] | None = None  # in memory (a release being made)

    @property
    def name(self) -> str:
        return self.manifest["name"]

    @property
    def version(self) -> Version:
        return parse_version(self.manifest["version"], where=f"{self.where}: manifest version")

    @property
    def label(self) -> str:
        return f"{self.manifest['name']} {self.manifest['version']}"

    @property
    def where(self) -> str:
        return str(self.root) if self.root else f"{self.manifest.get('name')}-{self.manifest.get('version')}"

    def read(self, rel: str) -> bytes:
        if self.files is not None:
            return self.files[rel]
        return (self.root / rel).read_bytes()

    def curves(self, bench: str) -> CurveTable:
        rel = self.manifest["benches"][bench]["curves"]
        return read_csv(self.read(rel).decode("utf-8"), f"{self.where}/{rel}")


@dataclass
class BundleCheck:
    root: Path
    changed: list[str] = field(default_factory=list)
    missing: list[str] = field(default_factory=list)
    unexpected: list[str] = field(default_factory=list)
    manifest_problem: str = ""
    n_files: int = 0
    digest: str = ""  # sha256 of the release manifest file as found
    manifest_name: str = MANIFEST  # OLD_MANIFEST in an older bundle

    @property
    def ok(self) -> bool:
        return not (self.changed or self.missing or self.unexpected or self.manifest_problem)

    def text(self) -> str:
        if self.ok:
            return (f"{self.root}: intact ({self.n_files} files and the manifest match their sha256)\n"
                    f"  bundle digest: {self.digest} (sha256 of {self.manifest_name})")
        lines = [f"{self.root}: NOT INTACT"]
        if self.manifest_problem:
            lines.append(f"  {self.manifest_name}: {self.manifest_problem}")
        lines += [f"  changed:    {p}" for p in self.changed]
        lines += [f"  missing:    {p}" for p in self.missing]
        lines += [f"  unexpected: {p} (not listed in the manifest)" for p in self.unexpected]
        return "\n".join(lines)


#: what the bundle's own hashes prove, said wherever a bundle is checked
INTEGRITY_ONLY = ("This proves integrity against accidental change only (a damaged or edited file): whoever can "
                  "write the bundle can also re-hash and re-seal it. To detect deliberate changes, compare the "
                  "bundle digest with one recorded outside the bundle at release time (--digest), or with the "
                  "record a later release keeps of it (--against).")


def manifest_path(root: str | Path) -> Path:
    """The release manifest of the bundle ``root``: release.json, or in a bundle made before
    the rename manifest.json (ReleaseError if it has neither)."""
    root = Path(root)
    for name in (MANIFEST, OLD_MANIFEST):
        if (root / name).is_file():
            return root / name
    raise ReleaseError(f"{root}: no {MANIFEST} (nor the {OLD_MANIFEST} of older bundles); not a release bundle "
                       "made by `compactgen release`")


def bundle_digest(root: str | Path) -> str:
    """The digest that identifies a bundle: the sha256 of its release manifest file (which holds
    the sha256 of every other file), the same as `sha256sum release.json` prints."""
    return sha256(manifest_path(root).read_bytes())


def sha256(data: bytes | str) -> str:
    return hashlib.sha256(data.encode("utf-8") if isinstance(data, str) else data).hexdigest()


def manifest_text(manifest: dict) -> str:
    return json.dumps(manifest, indent=2, sort_keys=True, allow_nan=False) + "\n"


def seal(manifest: dict) -> dict:
    """Set the manifest's own hash (over the manifest without it)."""
    body = {k: v for k, v in manifest.items() if k != SEAL}
    manifest[SEAL] = sha256(manifest_text(body))
    return manifest


def _read_manifest(root: Path) -> dict:
    if not root.is_dir():
        raise ReleaseError(f"{root}: no such release folder")
    path = manifest_path(root)
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise ReleaseError(f"{path}: not valid JSON ({exc}); the manifest was damaged") from None
    if not isinstance(manifest, dict) or manifest.get("format") != FORMAT:
        raise ReleaseError(f"{path}: format {manifest.get('format') if isinstance(manifest, dict) else None!r}, "
                           f"expected {FORMAT!r}; not a bundle this compactgen reads")
    return manifest


def check_bundle(root: str | Path) -> BundleCheck:
    """Re-hash every file of a bundle and the manifest itself."""
    root = Path(root)
    manifest = _read_manifest(root)
    check = BundleCheck(root, digest=bundle_digest(root), manifest_name=manifest_path(root).name)
    listed = manifest.get("files")
    if not isinstance(listed, dict):
        check.manifest_problem = "has no table of file hashes"
        return check
    body = {k: v for k, v in manifest.items() if k != SEAL}
    if manifest.get(SEAL) != sha256(manifest_text(body)):
        check.manifest_problem = f"its content does not match its own {SEAL} (edited after the release)"
    for rel, digest in sorted(listed.items()):
        p = root / rel
        if not p.is_file():
            check.missing.append(rel)
        elif sha256(p.read_bytes()) != digest:
            check.changed.append(rel)
    check.n_files = len(listed)
    present = {p.relative_to(root).as_posix() for p in root.rglob("*") if p.is_file()}
    check.unexpected = sorted(present - set(listed) - {check.manifest_name})
    return check


def load_bundle(root: str | Path, check: bool = True) -> Bundle:
    """A bundle from disk; with ``check`` it must be intact (else ReleaseError naming the files)."""
    root = Path(root)
    if check:
        result = check_bundle(root)
        if not result.ok:
            raise ReleaseError(f"{result.text()}\nA release bundle must stay as released; compare against an "
                               "intact copy (`compactgen check-release DIR` re-hashes one)")
    return Bundle(_read_manifest(root), root=root)


# ---- making one ------------------------------------------------------------------------------
def json_safe(obj):
    """Plain JSON values: NaN/inf become None, dates and other objects their text."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, (bool, int, str)) or obj is None:
        return obj
    if isinstance(obj, dict):
        return {str(k): json_safe(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [json_safe(v) for v in obj]
    if hasattr(obj, "item"):  # numpy scalar
        return json_safe(obj.item())
    return str(obj)


def created_stamp() -> str:
    """UTC time of the release; SOURCE_DATE_EPOCH (reproducible-builds.org convention) fixes it."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    when = (dt.datetime.fromtimestamp(int(epoch), dt.timezone.utc) if epoch and epoch.isdigit()
            else dt.datetime.now(dt.timezone.utc))
    return when.replace(microsecond=0).isoformat().replace("+00:00", "Z")


def data_hashes(provenance: dict, prefix: str = "") -> dict[str, str]:
    """Every sha256 found in a card's [provenance] table, by its key path."""
    out: dict[str, str] = {}
    for k, v in provenance.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(data_hashes(v, key + "."))
        elif isinstance(v, (list, tuple)):
            for i, x in enumerate(v):
                if isinstance(x, dict):
                    out.update(data_hashes(x, f"{key}[{i}]."))
                elif isinstance(x, str) and _HEX64.match(x.lower()):
                    out[f"{key}[{i}]"] = x.lower()
        elif isinstance(v, str) and _HEX64.match(v.lower()):
            out[key] = v.lower()
    return out


def stimulus_record(bench) -> dict:
    from compactgen.harness.benches import Dc, Pulse, Pwl

    drives = {}
    for term, w in sorted(bench.drives.items()):
        if isinstance(w, Pulse):
            drives[term] = {"pulse": {k: getattr(w, k) for k in ("v0", "v1", "delay", "rise", "fall", "width")}}
        elif isinstance(w, Pwl):
            drives[term] = {"pwl": [list(p) for p in w.points]}
        elif isinstance(w, Dc):
            drives[term] = {"dc": w.level}
        else:
            raise TypeError(f"bench {bench.name}: no release record for a {type(w).__name__} stimulus")
    rec = {"analysis": bench.analysis, "drives": drives, "instance": dict(sorted(bench.instance.items()))}
    if getattr(bench, "temperature", None) is not None:
        rec["temperature"] = bench.temperature
    if bench.analysis == "dc":
        rec["sweep"] = list(bench.sweep)
    else:
        rec.update(t_stop=bench.t_stop, t_step=bench.t_step, max_step=bench.max_step)
    return rec


def interface_record(ir) -> dict:
    """What a designer's netlist depends on: names, port order, parameters, outputs and the range
    output (probes and .meas read them by name), library sections (process corners), conventions."""
    from compactgen.targets.render import _sections

    r = ir.range_output()
    return {
        "module": ir.name,
        "kind": ir.kind,
        "ports": [t.name for t in ir.terminals],
        "port_meaning": {t.name: t.desc for t in ir.terminals},
        "parameters": [{"name": s.name, "unit": s.unit, "kind": s.kind, "default": s.default} for s in ir.params],
        "outputs": [{"name": o.name, "unit": o.unit} for o in ir.outputs],
        "range_output": {"name": r.name, "unit": r.unit, "description": r.desc} if r is not None else None,
        "lib_sections": [s["name"] for s in _sections(ir)],
        "conventions": list(ir.conventions),
    }


def parameter_record(card, ir) -> dict:
    out = {}
    for s in ir.params:
        v = card.values[s.name]
        origin = "card" if s.name in card.given else ("computed" if s.computed else "kind default")
        rec = {"value": v, "unit": s.unit, "text": s.card_text(v), "kind": s.kind, "origin": origin}
        if s.computed:
            rec["computed"] = s.computed
        if s.name in card.uncertainty:
            rec["stderr"] = card.uncertainty[s.name]
            rec["stderr_text"] = s.card_text(card.uncertainty[s.name])
        out[s.name] = rec
    return out


def bench_record(suite) -> dict:
    out = {}
    for run in suite.runs:
        b = run.bench
        metrics = {}
        for r in run.rows:
            m = {"unit": r.unit, "reference": r.reference, "tolerance": r.tolerance, "passed": r.passed}
            m.update({s: r.values.get(s, float("nan")) for s in suite.simulators})
            metrics[r.metric] = m
        out[b.name] = {"title": b.title, "stimulus": stimulus_record(b), "plot": list(b.plot),
                       "curves": f"curves/{b.name}.csv", "metrics": metrics}
    return out


def release_manifest(card, ir, version: Version, suite, figures: dict[str, float]) -> dict:
    """Everything but the file hashes, the comparison and the date."""
    from compactgen.targets import render

    fig_rec = {f.name: dict(bignum.to_record(figures[f.name]), unit=f.unit, desc=f.desc) for f in ir.figures}
    return json_safe({
        "format": FORMAT,
        "name": ir.name,
        "version": str(version),
        "kind": ir.kind,
        "title": ir.title,
        "generator": f"compactgen {__version__}",
        "card": {"file": f"{ir.name}.card.toml", "sha256": card.sha256(), "description": card.description,
                 "options": dict(card.options)},
        "provenance": dict(card.provenance),
        "data_sha256": data_hashes(card.provenance),
        "model_digest": ir.digest(),
        "parameter_digest": render.param_digest(ir),
        "parameters": parameter_record(card, ir),
        "interface": interface_record(ir),
        "figures": fig_rec,
        "simulators": list(suite.simulators),
        "benches": bench_record(suite),
        **({"variation": variation_record(card)} if card.variation else {}),
    })


def variation_record(card) -> dict:
    """The card's [variation] (where its sigmas came from, intervals, global correlation) with every
    sigma value; recorded only for cards that have the table (compare.compare_variation judges it)."""
    var = card.variation
    return {"origin": var.get("origin", ""), "summary": var.get("summary", ""),
            "sigmas": {k: v for k, v in card.values.items() if k.startswith(("sigma_global_", "sigma_mismatch_"))},
            "intervals": dict(var.get("intervals", {})), "correlated": list(var.get("correlated", [])),
            "correlation": [list(r) for r in var.get("correlation", [])]}


def _write_one(path: Path, content: bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(content)
    path.chmod(0o444)  # read-only: a bundle is not edited after the release


STAGING_MARK = ".partial-"


class Staging:
    """The hidden folder ``out_root/.<label>.partial-<pid>-XXXX`` a bundle is written into while
    a release runs, renamed to ``out_root/<label>`` when complete (``publish``).

    As a context manager it removes the folder on any exception, including the Terminated and
    KeyboardInterrupt the command line raises on SIGTERM/SIGHUP/SIGINT.  What a process killed
    outright (SIGKILL, power loss) leaves behind is swept by the next release into ``out_root``:
    the folder names the process id, and folders of processes that no longer run are removed."""

    def __init__(self, out_root: Path, label: str, say=None):
        self.out_root = Path(out_root)
        self.label = label
        self.out_root.mkdir(parents=True, exist_ok=True)
        for stale, why in stale_staging(self.out_root, label):
            shutil.rmtree(stale, ignore_errors=True)
            if say:
                say(f"removed {stale}: staging folder of an interrupted release ({why})")
        self.path = Path(tempfile.mkdtemp(prefix=f".{label}{STAGING_MARK}{os.getpid()}-", dir=self.out_root))
        self.written: list[str] = []

    def write(self, rel: str, content: bytes) -> None:
        _write_one(self.path / rel, content)
        self.written.append(rel)

    def publish(self) -> Path:
        target = self.out_root / self.label
        if target.exists():
            raise ReleaseError(f"{target}: appeared while the release was being written; nothing overwritten")
        self.path.chmod(0o755)  # mkdtemp makes it private
        os.rename(self.path, target)
        return target

    def discard(self) -> None:
        shutil.rmtree(self.path, ignore_errors=True)

    def __enter__(self) -> "Staging":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is not None:
            self.discard()


def stale_staging(out_root: Path, label: str) -> list[tuple[Path, str]]:
    """Staging folders in ``out_root`` left by releases that no longer run: those whose process id
    is not alive, and folders of ``label`` from before staging folders named their process."""
    out = []
    for p in sorted(out_root.glob(f".*{STAGING_MARK}*")):
        if not p.is_dir():
            continue
        owner = p.name.rsplit(STAGING_MARK, 1)[1].split("-", 1)[0]
        if owner.isdigit():
            if not _process_alive(int(owner)):
                out.append((p, f"process {owner} no longer runs"))
        elif p.name.startswith(f".{label}{STAGING_MARK}"):
            out.append((p, "an earlier release of the same version"))
    return out


def _process_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # exists, another user's
        return True
    return True

