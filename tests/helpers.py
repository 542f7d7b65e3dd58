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


def population_checks(truth: dict, pop, names: list[str]) -> list[tuple]:
    """(what, true value, (low, high)) for every mean, global sigma, mismatch sigma and global
    correlation a wafer population analysis reports, against the synthetic wafer's truth."""
    import numpy as np

    checks = []
    for n in names:
        t, st = truth["parameters"][n], pop.params[n]
        checks += [(f"sigma_global_{n}", t["sigma_global_population"], st.ci_global),
                   (f"sigma_mismatch_{n}", t["sigma_mismatch"], st.ci_mismatch), (n, t["mean"], st.ci_mean)]
    true_corr = np.array(truth["correlation"]["population"])
    for i in range(len(names)):
        for j in range(i + 1, len(names)):
            checks.append((f"correlation {names[i]}-{names[j]}", true_corr[i, j],
                           (pop.correlation_ci[0][i, j], pop.correlation_ci[1][i, j])))
    return checks
