"""compactgen's on-disk caches: one root, one subfolder per cache.

The root is ``$COMPACTGEN_CACHE``, or ``~/.cache/compactgen``.  Subfolders: ``osdi`` (compiled
Verilog-A, sim/vacask.py), ``render`` (the printed ngspice expressions of a model,
render.ngspice_context), ``units`` (unit conversions learnt from pint, units.py), ``numbers``
(results of slow library calls: the CODATA values of scipy.constants, constants.py; the
cylinder demagnetising factor, physics/geometry.py; the write-error-rate table,
thermal_report.py), ``sympy`` (slow symbolic derivations: the pinning field,
physics/domain_wall.py).

A cache only ever saves time: an entry is written under a temporary name and moved into place
(os.replace), so a reader sees a whole file or none; an entry that cannot be read or does not
hold what its reader expects counts as missing and is computed again; a cache folder that cannot
be written leaves the result uncached.  Deleting the root (or a subfolder) at any time is safe.
"""
from __future__ import annotations

import contextlib
import functools
import hashlib
import json
import os
import tempfile
from pathlib import Path

CACHE_ENV = "COMPACTGEN_CACHE"
#: most entries a folder used through ``remembered`` keeps (least recently used ones go first)
MAX_ENTRIES = 256

_PACKAGE = Path(__file__).resolve().parent


def cache_root() -> Path:
    """``$COMPACTGEN_CACHE``, or ``~/.cache/compactgen``."""
    root = os.environ.get(CACHE_ENV)
    return Path(root) if root else Path.home() / ".cache" / "compactgen"


def cache_dir(name: str) -> Path:
    """The subfolder ``name`` of the cache root (not created here)."""
    return cache_root() / name


@functools.lru_cache(maxsize=None)
def source_digest(*relative: str) -> str:
    """sha256 of compactgen's version and of the source files ``relative`` (paths inside the
    package, e.g. "render.py"): part of every key, so that an entry written by other code (a
    development checkout between releases included) is never read."""
    from compactgen import __version__

    h = hashlib.sha256(f"compactgen {__version__}".encode())
    for rel in relative:
        h.update(b"\0" + rel.encode() + b"\0")
        h.update((_PACKAGE / rel).read_bytes())
    return h.hexdigest()


def _canonical(doc) -> str:
    return json.dumps(doc, sort_keys=True, allow_nan=False, separators=(",", ":"))


def read_json(path: Path):
    """The document ``write_json`` stored at ``path``, or None when it is missing, unreadable,
    not JSON, or not the whole document that was written (its sha256 seal does not match)."""
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
        if not isinstance(doc, dict):
            return None
        seal = doc.pop("sha256", None)
        if seal != hashlib.sha256(_canonical(doc).encode()).hexdigest():
            return None
        return doc
    except (OSError, ValueError, TypeError):
        return None


def write_json(path: Path, doc: dict) -> bool:
    """Write the JSON object ``doc`` to ``path`` with a sha256 seal of its content, atomically
    (temporary file in the same folder, then os.replace).  Returns False, leaving nothing
    behind, when the folder cannot be written."""
    tmp = None
    try:
        text = _canonical({**doc, "sha256": hashlib.sha256(_canonical(doc).encode()).hexdigest()})
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        os.replace(tmp, path)
        return True
    except (OSError, ValueError, TypeError):
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
        return False


def remembered(folder: str, key: str, compute, valid, stem: str = ""):
    """``compute()`` (a JSON-ready result) once per ``key``: stored in ``folder`` of the cache
    root as ``<stem>-<hash of key>.json`` together with the whole key, and read back when the
    key matches and ``valid(result)`` holds; otherwise computed again (and stored again)."""
    path = cache_dir(folder) / f"{stem + '-' if stem else ''}{hashlib.sha256(key.encode()).hexdigest()[:40]}.json"
    doc = read_json(path)
    if isinstance(doc, dict) and doc.get("key") == key and "value" in doc:
        value = doc["value"]
        try:
            ok = bool(valid(value))
        except Exception:  # a damaged entry may hold anything
            ok = False
        if ok:
            with contextlib.suppress(OSError):
                os.utime(path)  # recently used: pruned last
            return value
    value = compute()
    if write_json(path, {"key": key, "value": value}):
        prune(path.parent)
    return value


def prune(folder: Path, keep: int = MAX_ENTRIES) -> None:
    """Remove the least recently used entries of a cache folder beyond ``keep``."""
    try:
        entries = []
        for p in folder.glob("*.json"):
            with contextlib.suppress(OSError):
                entries.append((p.stat().st_mtime, p))
    except OSError:
        return
    if len(entries) <= keep:
        return
    for _, p in sorted(entries)[: len(entries) - keep]:
        with contextlib.suppress(OSError):
            p.unlink()


@functools.lru_cache(maxsize=None)
def package_version(name: str) -> str:
    """The installed version of a distribution ("none" if it is not installed), without importing it."""
    from importlib import metadata

    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "none"
