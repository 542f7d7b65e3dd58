"""Small shared helpers for the tests (not fixtures)."""
from __future__ import annotations

from pathlib import Path

from compactgen.model.card import Card, load_card, parse_card, starter_card

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"


def example_card(name: str = "pmtj35_demo") -> Card:
    return load_card(EXAMPLES / f"{name}.toml")


def card_with(kind: str, name: str, **params: str) -> Card:
    """A starter card of ``kind`` with some [parameters] lines replaced (values as card strings)."""
    lines = starter_card(kind, name).splitlines()
    out = []
    seen = set()
    for line in lines:
        key = line.split("=")[0].strip().lstrip("# ").strip()
        if key in params and "=" in line:
            out.append(f"{key} = {params[key]}")
            seen.add(key)
        else:
            out.append(line)
    missing = set(params) - seen
    assert not missing, f"no such card keys: {missing}"
    return parse_card("\n".join(out) + "\n", f"<{name}>")
