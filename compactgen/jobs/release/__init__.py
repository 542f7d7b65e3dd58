"""Model releases: immutable versioned bundles, comparison with a previous release, verdicts.

    compactgen release CARD VERSION -o RELEASES [--against RELEASES/<name>-<prev>] [--accept "why"]
    compactgen compare OLD_BUNDLE NEW_BUNDLE [--report changes.html]
    compactgen check-release BUNDLE...

bundle.py (format, manifest, hashing, atomic publish), curves.py (bench curves as CSV),
compare.py (tolerance bands and the comparison), changes.py (Markdown/HTML report),
commands.py (the commands, make_release, the demo step), semver.py (version strings).
"""
from __future__ import annotations


def add_commands(subparsers) -> None:
    from compactgen.jobs.release.commands import add_commands as add

    add(subparsers)
