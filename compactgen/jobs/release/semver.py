"""Semantic version strings: validation with a precise complaint, and precedence.

Rules from the Semantic Versioning 2.0.0 specification (T. Preston-Werner, semver.org, 2013):
MAJOR.MINOR.PATCH, non-negative integers without leading zeros (item 2); an optional
pre-release after "-" and optional build metadata after "+", each a dot-separated list of
non-empty identifiers made of [0-9A-Za-z-], numeric pre-release identifiers without leading
zeros (items 9 and 10); precedence as in item 11, build metadata ignored.
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from functools import total_ordering

from compactgen.errors import InputError

_IDENT = re.compile(r"^[0-9A-Za-z-]+$")
_NUMBER = re.compile(r"^(0|[1-9][0-9]*)$")
HINT = "a semantic version MAJOR.MINOR.PATCH such as 1.0.0, 1.1.0 or 2.0.0-rc.1 (semver.org)"


@total_ordering
@dataclass(frozen=True)
class Version:
    major: int
    minor: int
    patch: int
    prerelease: tuple[str, ...] = ()
    build: tuple[str, ...] = ()

    def __str__(self) -> str:
        text = f"{self.major}.{self.minor}.{self.patch}"
        if self.prerelease:
            text += "-" + ".".join(self.prerelease)
        if self.build:
            text += "+" + ".".join(self.build)
        return text

    def _key(self):
        # a version without pre-release ranks above every pre-release of the same core (item 11.3);
        # numeric identifiers rank below alphanumeric ones and compare as numbers (item 11.4)
        pre = tuple((0, int(p), "") if p.isdigit() else (1, 0, p) for p in self.prerelease)
        return (self.major, self.minor, self.patch, 0 if self.prerelease else 1, pre)

    def __eq__(self, other) -> bool:
        return isinstance(other, Version) and self._key() == other._key()

    def __hash__(self) -> int:
        return hash(self._key())

    def __lt__(self, other: "Version") -> bool:
        return self._key() < other._key()


def parse_version(text: str, where: str = "release VERSION") -> Version:
    """The Version of ``text``, or InputError saying exactly what is wrong with it."""
    def bad(why: str) -> InputError:
        return InputError(f"{where} {text!r}: {why}; expected {HINT}")

    if not isinstance(text, str) or not text:
        raise bad("empty")
    if text != text.strip():
        raise bad("has spaces around it")
    if text[0] in "vV":
        raise bad("starts with a letter (write 1.2.3, not v1.2.3)")
    core, plus, build = text.partition("+")
    core, dash, pre = core.partition("-")
    parts = core.split(".")
    if len(parts) != 3:
        raise bad(f"has {len(parts)} dot-separated number(s) before any '-' or '+', not 3")
    for label, part in zip(("MAJOR", "MINOR", "PATCH"), parts):
        if not part.isdigit() or not part.isascii():
            raise bad(f"{label} {part!r} is not a non-negative integer")
        if not _NUMBER.match(part):
            raise bad(f"{label} {part!r} has a leading zero")
    pre_ids = tuple(pre.split(".")) if dash else ()
    for p in pre_ids:
        if not p or not _IDENT.match(p):
            raise bad(f"pre-release identifier {p!r} must be non-empty letters, digits and '-'")
        if p.isdigit() and not _NUMBER.match(p):
            raise bad(f"numeric pre-release identifier {p!r} has a leading zero")
    build_ids = tuple(build.split(".")) if plus else ()
    for b in build_ids:
        if not b or not _IDENT.match(b):
            raise bad(f"build identifier {b!r} must be non-empty letters, digits and '-'")
    return Version(int(parts[0]), int(parts[1]), int(parts[2]), pre_ids, build_ids)
