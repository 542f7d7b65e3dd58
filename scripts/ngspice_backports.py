#!/usr/bin/env python3
"""Add the backports suite of this machine's own Debian release for the ngspice packages only.

Debian 12's own ngspice (39) is built without OSDI, so it cannot load a compiled Verilog-A model;
the backports suite of the same release carries an ngspice built with it.  This script reads the
machine's existing apt sources, finds the entry for the release's main suite, and writes

* ``/etc/apt/sources.list.d/compactgen-backports.sources``: the same URIs and keyring, suite
  ``<codename>-backports``, component ``main``;
* ``/etc/apt/preferences.d/compactgen-ngspice``: the ngspice packages from backports, every other
  package never from there (only when this script added the suite; a backports suite that the
  machine already had is left to its owner's pins).

No host name is written here: everything comes from the machine's own sources.  Run again, it
changes nothing and says so.  Standard library only (it runs before the project is installed).
Usage: ``ngspice_backports.py [--root DIR] [--dry-run]``; prints one line per action, exits 1 with
a reason when no Debian source can be found.
"""
from __future__ import annotations

import argparse
import re
import sys
from dataclasses import dataclass
from pathlib import Path

#: the packages taken from backports (the executable, the shared library PySpice loads, headers)
NGSPICE_PACKAGES = ("ngspice", "libngspice0", "libngspice0-dev")
SOURCE_FILE = "etc/apt/sources.list.d/compactgen-backports.sources"
PIN_FILE = "etc/apt/preferences.d/compactgen-ngspice"


@dataclass(frozen=True)
class Source:
    """One apt source entry, reduced to what a backports entry needs."""
    uris: tuple[str, ...]
    suites: tuple[str, ...]
    components: tuple[str, ...]
    signed_by: str | None
    origin: str


def codename(root: Path) -> str:
    """The release's code name from os-release (``VERSION_CODENAME``)."""
    for name in ("etc/os-release", "usr/lib/os-release"):
        path = root / name
        if path.is_file():
            for line in path.read_text().splitlines():
                key, _, value = line.partition("=")
                if key.strip() == "VERSION_CODENAME" and value.strip().strip('"'):
                    return value.strip().strip('"')
    raise SystemExit("ngspice_backports: no VERSION_CODENAME in /etc/os-release; "
                     "is this a Debian machine?")


def parse_deb822(text: str, origin: str) -> list[Source]:
    """Entries of a deb822 ``.sources`` file (paragraphs separated by blank lines)."""
    sources = []
    for paragraph in re.split(r"\n\s*\n", text):
        fields: dict[str, str] = {}
        key = None
        for line in paragraph.splitlines():
            if line.startswith("#") or not line.strip():
                continue
            if line[0] in " \t" and key is not None:
                fields[key] += "\n" + line.strip()
                continue
            key, _, value = line.partition(":")
            key = key.strip().lower()
            fields[key] = value.strip()
        if "deb" not in fields.get("types", "").split():
            continue
        if fields.get("enabled", "yes").lower() == "no":
            continue
        sources.append(Source(tuple(fields.get("uris", "").split()),
                              tuple(fields.get("suites", "").split()),
                              tuple(fields.get("components", "").split()),
                              fields.get("signed-by") or None, origin))
    return sources


def parse_one_line(text: str, origin: str) -> list[Source]:
    """Entries of a one-line-style ``.list`` file (``deb [options] URI suite components``)."""
    sources = []
    for line in text.splitlines():
        line = line.split("#", 1)[0].strip()
        if not line.startswith("deb "):
            continue
        signed_by = None
        match = re.match(r"deb\s+\[([^\]]*)\]\s+(.*)", line)
        if match:
            options, rest = match.groups()
            for option in options.split():
                name, _, value = option.partition("=")
                if name == "signed-by":
                    signed_by = value
        else:
            rest = line[len("deb "):]
        words = rest.split()
        if len(words) < 2:
            continue
        sources.append(Source((words[0],), (words[1],), tuple(words[2:]), signed_by, origin))
    return sources


def read_sources(root: Path) -> list[Source]:
    """Every enabled binary source entry of the machine."""
    sources: list[Source] = []
    main_list = root / "etc/apt/sources.list"
    if main_list.is_file():
        sources += parse_one_line(main_list.read_text(), str(main_list))
    directory = root / "etc/apt/sources.list.d"
    if directory.is_dir():
        for path in sorted(directory.iterdir()):
            if path.name == Path(SOURCE_FILE).name:
                continue
            if path.suffix == ".sources":
                sources += parse_deb822(path.read_text(), str(path))
            elif path.suffix == ".list":
                sources += parse_one_line(path.read_text(), str(path))
    return sources


def release_source(sources: list[Source], release: str) -> Source:
    """The entry that serves the release's main suite with component ``main``."""
    for source in sources:
        if release in source.suites and "main" in source.components and source.uris:
            return source
    raise SystemExit(f"ngspice_backports: no apt source serves suite '{release}' with component "
                     f"'main'; add the Debian archive for {release} first")


def has_backports(sources: list[Source], release: str) -> bool:
    """Whether the machine already has the backports suite with component ``main``."""
    return any(f"{release}-backports" in s.suites and "main" in s.components for s in sources)


def source_text(source: Source, release: str) -> str:
    """The deb822 entry for ``<release>-backports`` with the source's URIs and keyring."""
    lines = [f"# Written by compactgen's scripts/ngspice_backports.py from {source.origin}:",
             f"# same archive, suite {release}-backports, for an ngspice built with OSDI.",
             "Types: deb",
             f"URIs: {' '.join(source.uris)}",
             f"Suites: {release}-backports",
             "Components: main"]
    if source.signed_by:
        lines.append(f"Signed-By: {source.signed_by}")
    return "\n".join(lines) + "\n"


def pin_text(release: str, restrict_others: bool) -> str:
    """apt preferences: the ngspice packages from backports; with ``restrict_others``, no others."""
    text = ("# Written by compactgen's scripts/ngspice_backports.py: the ngspice packages come\n"
            f"# from {release}-backports (built with OSDI)")
    text += "; nothing else does.\n" if restrict_others else ".\n"
    text += (f"Package: {' '.join(NGSPICE_PACKAGES)}\n"
             f"Pin: release n={release}-backports\nPin-Priority: 990\n")
    if restrict_others:
        text += f"\nPackage: *\nPin: release n={release}-backports\nPin-Priority: -1\n"
    return text


def write_if_changed(path: Path, text: str, dry_run: bool) -> bool:
    """Write ``text`` to ``path`` unless it already holds it; True when something changed."""
    if path.is_file() and path.read_text() == text:
        print(f"ngspice_backports: /{path.relative_to(path.anchor)} already in place")
        return False
    print(f"ngspice_backports: {'would write' if dry_run else 'writing'} {path}")
    if not dry_run:
        path.parent.mkdir(parents=True, exist_ok=True)
        tmp = path.with_name(path.name + ".tmp")
        tmp.write_text(text)
        tmp.replace(path)
    return True


def configure(root: Path, dry_run: bool = False) -> bool:
    """Write the source and pin files under ``root``; True when apt needs an update."""
    release = codename(root)
    sources = read_sources(root)
    ours = root / SOURCE_FILE
    changed = False
    if has_backports(sources, release):
        print(f"ngspice_backports: the machine already has {release}-backports; "
              "only pinning the ngspice packages to it")
        restrict = False
    else:
        source = release_source(sources, release)
        changed |= write_if_changed(ours, source_text(source, release), dry_run)
        restrict = True
    changed |= write_if_changed(root / PIN_FILE, pin_text(release, restrict), dry_run)
    return changed


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--root", type=Path, default=Path("/"),
                        help="file-system root to read and write (default /; tests use a copy)")
    parser.add_argument("--dry-run", action="store_true", help="say what would be written")
    args = parser.parse_args(argv)
    changed = configure(args.root, args.dry_run)
    # the exit status tells setup.sh whether apt-get update is needed: 10 = changed, 0 = same
    return 10 if changed else 0


if __name__ == "__main__":
    sys.exit(main())
