"""Time `compactgen build` of each example card in a fresh process, with a cold and a warm cache,
side by side, against the goal of 2 s per card.

Scenarios, each a new `python3 -m compactgen build CARD -o DIR` process with its own cache root
(COMPACTGEN_CACHE, compactgen/cache.py):
  cold      an empty cache (the first build on a machine, or after the cache was cleared)
  warm      the same card again
  edit ra   the card with ra changed by a few per cent: an electrical value, which leaves the
            ngspice node scales alone (the render cache still holds the expressions)
  edit ms   the card with ms changed: it changes the node scales, so the ngspice expressions
            are printed again (the render cache misses; units and constants still hit)
Each figure is the median over ``--repeat`` runs (every edit run uses a value of its own, so it
never finds its own earlier entry); wall time is what the engineer waits, CPU time (user + system
of the child process) shows how much of it is the machine being busy with other work.  The outputs
of the cold and warm builds are compared file by file.

``--baseline REF`` also times the code of a git ref (e.g. main) exported to a temporary folder
(run from there, so its own compactgen is imported): the before/after figures in one run.

    python3 benchmarks/bench_build.py [--repeat 3] [--baseline main] [--cards examples/pmtj35_demo.toml ...]

No test asserts a time: benchmarks live here.
"""
from __future__ import annotations

import argparse
import filecmp
import os
import re
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
GOAL = 2.0  # [s] per card
CARDS = ("pmtj35_demo.toml", "sot50_demo.toml", "dwtrack_demo.toml")


def timed_build(code_root: Path, card: Path, out: Path, cache: Path) -> tuple[float, float]:
    """(wall, CPU) seconds of one `python3 -m compactgen build` in a fresh process."""
    env = dict(os.environ, COMPACTGEN_CACHE=str(cache), PYTHONDONTWRITEBYTECODE="1")
    env.pop("PYTHONPATH", None)  # `-m` from code_root imports code_root's compactgen
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "compactgen", "build", str(card), "-o", str(out)],
                          cwd=code_root, env=env, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode != 0:
        raise SystemExit(f"build of {card} failed ({proc.returncode}):\n{proc.stderr}")
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def edited(card: Path, name: str, factor: float, folder: Path) -> Path:
    """A copy of ``card`` with parameter ``name`` (a "number unit" string) times ``factor``."""
    text = card.read_text()
    pattern = re.compile(rf'^({name}\s*=\s*")([-+0-9.eE]+)(\s[^"]*")', re.MULTILINE)
    m = pattern.search(text)
    if m is None:
        raise SystemExit(f"{card}: no line `{name} = \"<number> <unit>\"` to edit")
    new = pattern.sub(lambda m: f"{m.group(1)}{float(m.group(2)) * factor!r}{m.group(3)}", text, count=1)
    path = folder / f"{card.stem}_{name}_{factor!r}.toml"
    path.write_text(new)
    return path


def same_files(a: Path, b: Path) -> bool:
    names = sorted(p.name for p in a.iterdir())
    if names != sorted(p.name for p in b.iterdir()):
        return False
    _, mismatch, errors = filecmp.cmpfiles(a, b, names, shallow=False)
    return not mismatch and not errors


def measure(code_root: Path, cards: list[Path], repeat: int, tmp: Path, scenarios: tuple[str, ...]) -> dict:
    """{(card, scenario): [(wall, cpu), ...]} and whether cold and warm outputs matched."""
    out: dict = {}
    identical = {}
    for card in cards:
        for r in range(repeat):
            cache = tmp / f"cache-{card.stem}-{r}"
            cold_dir, warm_dir = tmp / f"cold-{card.stem}-{r}", tmp / f"warm-{card.stem}-{r}"
            out.setdefault((card, "cold"), []).append(timed_build(code_root, card, cold_dir, cache))
            if "warm" in scenarios:
                out.setdefault((card, "warm"), []).append(timed_build(code_root, card, warm_dir, cache))
                identical[card] = identical.get(card, True) and same_files(cold_dir, warm_dir)
            for scen, name in (("edit ra", "ra"), ("edit ms", "ms")):
                if scen in scenarios:
                    variant = edited(card, name, 1.0 + 0.01 * (r + 1), tmp)
                    out.setdefault((card, scen), []).append(
                        timed_build(code_root, variant, tmp / f"{scen.replace(' ', '-')}-{card.stem}-{r}", cache))
    return {"times": out, "identical": identical}


def report(label: str, result: dict, cards: list[Path], scenarios: tuple[str, ...]) -> None:
    print(f"\n{label}: median wall s (CPU s) per build, and wall / {GOAL:g} s goal")
    head = f"{'card':22s}" + "".join(f"{s:>24s}" for s in scenarios)
    print(head)
    for card in cards:
        row = f"{card.stem:22s}"
        for scen in scenarios:
            runs = result["times"].get((card, scen))
            if not runs:
                row += f"{'-':>24s}"
                continue
            wall = statistics.median(w for w, _ in runs)
            cpu = statistics.median(c for _, c in runs)
            row += f"{f'{wall:5.2f} ({cpu:4.2f})  x{wall / GOAL:4.2f}':>24s}"
        print(row)
    if result["identical"]:
        same = all(result["identical"].values())
        print(f"cold and warm outputs identical, file by file: {'yes' if same else 'NO'}"
              + ("" if same else f" ({[c.stem for c, ok in result['identical'].items() if not ok]})"))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--cards", nargs="*", default=[str(ROOT / "examples" / c) for c in CARDS])
    ap.add_argument("--baseline", help="also time this git ref (e.g. main), exported to a temporary folder")
    ap.add_argument("--scenarios", default="cold,warm,edit ra,edit ms",
                    help="comma separated, from: cold, warm, edit ra, edit ms")
    args = ap.parse_args()
    cards = [Path(c).resolve() for c in args.cards]
    scenarios = tuple(s.strip() for s in args.scenarios.split(","))
    print(f"python {sys.version.split()[0]}, {os.cpu_count()} CPUs, load average "
          + " ".join(f"{x:.2f}" for x in os.getloadavg()))
    with tempfile.TemporaryDirectory(prefix="bench_build-") as tmp_name:
        tmp = Path(tmp_name)
        if args.baseline:
            base = tmp / "baseline"
            base.mkdir()
            archive = subprocess.run(["git", "-C", str(ROOT), "archive", args.baseline], check=True,
                                     capture_output=True).stdout
            subprocess.run(["tar", "-x", "-C", str(base)], input=archive, check=True)
            (tmp / "b").mkdir()
            report(f"baseline {args.baseline}", measure(base, cards, args.repeat, tmp / "b", scenarios), cards,
                   scenarios)
        (tmp / "w").mkdir()
        report(f"this checkout ({ROOT.name})", measure(ROOT, cards, args.repeat, tmp / "w", scenarios), cards,
               scenarios)
    print(f"load average at the end: {' '.join(f'{x:.2f}' for x in os.getloadavg())}")


if __name__ == "__main__":
    main()
