"""Random cards inside the documented ranges: does every valid card build, verify or say why?

``compactgen sample-cards`` draws device cards at random (seeded) inside the ranges the starter
cards document, writes each as a card, then builds and verifies it the way a user would.  Each
card ends in exactly one outcome:

- ``refused``: the card is refused with exit status 2 (a documented range or cross-parameter
  relation); the reason is counted by its message;
- ``crashed``: anything that is not a deliberate compactgen error (a traceback) -- a bug;
- ``timeout``: the card's build and verify took longer than the limit -- a bug;
- ``passed``: every bench that applies passed (benches that do not apply to the device are
  counted separately with their reason);
- ``failed``: a bench that applies failed (a measured difference, a missed expectation, a NaN,
  a missing event or a simulator error).

The drawn parameters are those a device engineer types for a new stack (the kind's required
parameters and a few more per kind, ``DRAWN``); the others keep their starter values.  Positive
ranges are drawn log-uniformly; signed ranges draw a sign and a log-uniform magnitude.
"""
from __future__ import annotations

import math
import multiprocessing
import os
import re
import signal
import sys
import time
import traceback
from collections import Counter
from dataclasses import dataclass, field

import numpy as np

#: parameters drawn besides each kind's required ones
DRAWN = {
    "stt-mtj": ("eta", "v_half", "xi_fl"),
    "sot-mtj": ("eta", "v_half", "hx", "xi_sot"),
    "dw-mtj": ("v_half", "a_ex", "h_dep", "pin_pitch", "xi_sot"),
}
#: drawn relations (a, b, factor): a is drawn log-uniformly from max(range of a, factor * b) upward;
#: they follow the cross-parameter checks of the device kinds (a junction on its line)
RELATIONS = {
    "sot-mtj": (("line_width", "diameter", 1.0), ("line_length", "diameter", 1.5)),
}
#: bias limit across the barrier of every drawn card [V]
CALIBRATED_V_MAX = 1.5
#: lower end of the log-uniform draw, relative to the upper end, where a range starts at 0 or
#: below (a magnitude of 1e-3 of the largest allowed value is as small as a real stack goes)
SPAN = 1e-3
#: seconds a card may take (build + verify) before it counts as a timeout
TIME_LIMIT = 300.0


@dataclass
class Outcome:
    kind: str
    index: int
    outcome: str  # refused, crashed, timeout, passed, failed
    reason: str = ""
    seconds: float = 0.0
    not_applicable: list[str] = field(default_factory=list)
    failures: list[str] = field(default_factory=list)
    values: dict = field(default_factory=dict)


def _draw_value(spec, rng: np.random.Generator) -> float:
    lo, hi = spec.lo, spec.hi
    if lo > 0:
        a, b = lo, hi
        return float(math.exp(rng.uniform(math.log(a), math.log(b))))
    top = max(abs(lo), abs(hi))
    mag = float(math.exp(rng.uniform(math.log(SPAN * top), math.log(top))))
    if lo < 0 and rng.random() < 0.5:
        return max(-mag, lo)
    return min(mag, hi)


def draw_values(kind_key: str, rng: np.random.Generator) -> dict[str, float]:
    """One set of drawn card values (SI) for ``kind_key``."""
    from compactgen.devices.base import get_kind

    kind = get_kind(kind_key)
    names = {s.name for s in kind.param_specs() if s.required and s.kind == "model"} | set(DRAWN.get(kind_key, ()))
    specs = {s.name: s for s in kind.param_specs()}
    values = {n: _draw_value(specs[n], rng) for n in specs if n in names}
    # documented geometric relations are drawn as relations (inside both ranges), so that the
    # sweep tries devices rather than counting impossible shapes
    for a, b, factor in RELATIONS.get(kind_key, ()):
        lo = max(specs[a].lo, factor * values[b])
        if lo < specs[a].hi:
            values[a] = float(math.exp(rng.uniform(math.log(lo), math.log(specs[a].hi))))
    # the calibrated range is the user's statement about their own data, not a device property: the
    # sweep states no current-density limit (the top of its range) and a bias limit below typical
    # MgO breakdown (common practice, no source), so that write benches apply wherever the device allows
    values["j_max"] = specs["j_max"].hi
    values["v_max"] = CALIBRATED_V_MAX
    if kind_key == "dw-mtj":  # the junction inside the track: start and length drawn from the track
        track = values["track_length"]
        values["mtj_length"] = float(track * rng.uniform(0.05, 0.5))
        values["mtj_start"] = float((track - values["mtj_length"]) * rng.uniform(0.1, 0.9))
    return values


def _reason_class(message: str) -> str:
    """A refusal message without its numbers: counts group the same reason."""
    text = message.split(": ", 1)[-1] if message.startswith("<") or "/" in message.split(":")[0] else message
    text = re.sub(r"[-+]?\d+(\.\d+)?(e[-+]?\d+)?", "#", text)
    return text[:110]


def run_card(kind_key: str, index: int, values: dict[str, float], sims: tuple[str, ...]) -> Outcome:
    """Write, parse, build and verify one card; never raises."""
    from compactgen.jobs.build import build_files
    from compactgen.model.card import card_text, parse_card
    from compactgen.errors import CompactgenError
    from compactgen.harness.verify import run_suite

    t0 = time.monotonic()
    out = Outcome(kind_key, index, "crashed", values=values)
    name = f"{kind_key.replace('-', '_')}_{index:03d}"
    try:
        text = card_text(kind_key, name, values, given=frozenset(values))
        card = parse_card(text, f"<{name}.toml>")
        card.ir()  # cross-parameter checks happen on composition and evaluation
        build_files(card)
    except CompactgenError as exc:
        out.outcome, out.reason = "refused", _reason_class(str(exc))
        out.seconds = time.monotonic() - t0
        return out
    except Exception as exc:  # a bug: a traceback, not a refusal
        out.reason = f"build: {type(exc).__name__}: {exc}"[:300]
        out.seconds = time.monotonic() - t0
        return out
    try:
        ir = card.ir()
        benches = card.device.benches(ir, card.values)
        result = run_suite(ir, benches, simulators=sims)
    except Exception as exc:
        tb = traceback.extract_tb(exc.__traceback__)[-1]
        out.reason = f"verify: {type(exc).__name__}: {exc} ({os.path.basename(tb.filename)}:{tb.lineno})"[:300]
        out.seconds = time.monotonic() - t0
        return out
    out.seconds = time.monotonic() - t0
    out.not_applicable = [f"{b.name}: {b.not_applicable}" for b in benches if b.not_applicable]
    out.failures = [f"{r.bench}/{r.metric}: {r.note or f'error/tol {r.error:.3g}'}" for r in result.rows if not r.passed]
    out.outcome = "passed" if result.passed else "failed"
    return out


def _child(conn, kind_key, index, values, sims):
    signal.signal(signal.SIGTERM, lambda *a: sys.exit(1))
    os.environ["COMPACTGEN_QUIET"] = "1"
    import warnings

    warnings.simplefilter("ignore")
    conn.send(run_card(kind_key, index, values, sims))
    conn.close()


def run_card_limited(kind_key: str, index: int, values: dict[str, float], sims: tuple[str, ...],
                     limit: float = TIME_LIMIT) -> Outcome:
    """``run_card`` in a child process that is stopped after ``limit`` seconds."""
    ctx = multiprocessing.get_context("forkserver" if "forkserver" in multiprocessing.get_all_start_methods()
                                      else "spawn")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(child, kind_key, index, values, sims), name="compactgen-card")
    t0 = time.monotonic()
    proc.start()
    child.close()
    try:
        if parent.poll(limit):
            try:
                return parent.recv()
            except EOFError:
                return Outcome(kind_key, index, "crashed", "the card's process died", time.monotonic() - t0,
                               values=values)
        return Outcome(kind_key, index, "timeout", f"no result within {limit:g} s", time.monotonic() - t0,
                       values=values)
    finally:
        if proc.is_alive():
            proc.terminate()
            proc.join(5)
            if proc.is_alive():
                proc.kill()
        proc.join()


def sweep(kinds: list[str], per_kind: int, seed: int, sims: tuple[str, ...], limit: float = TIME_LIMIT,
          progress=None) -> list[Outcome]:
    say = progress or (lambda msg: None)
    outcomes = []
    for k_i, kind_key in enumerate(kinds):
        rng = np.random.default_rng([seed, k_i])
        for i in range(per_kind):
            values = draw_values(kind_key, rng)
            o = run_card_limited(kind_key, i, values, sims, limit)
            outcomes.append(o)
            extra = f" ({len(o.not_applicable)} n/a)" if o.not_applicable else ""
            say(f"{kind_key} #{i}: {o.outcome}{extra} in {o.seconds:.1f} s"
                + (f" -- {o.reason or '; '.join(o.failures[:2])}" if o.outcome not in ("passed",) else ""))
    return outcomes


def table(outcomes: list[Outcome]) -> str:
    """The summary: per kind, drawn / refused / built / passed / failed / crashed / timeout,
    cards with benches not applicable, time per verified card; then the reasons."""
    kinds = list(dict.fromkeys(o.kind for o in outcomes))
    head = ["kind", "drawn", "refused", "built", "passed", "failed", "crashed", "timeout", "with n/a",
            "s/card (median, max)"]
    rows = [head]
    for k in kinds + ["all"]:
        sel = [o for o in outcomes if k == "all" or o.kind == k]
        c = Counter(o.outcome for o in sel)
        built = [o for o in sel if o.outcome != "refused" and not o.reason.startswith("build:")]
        times = [o.seconds for o in built if o.outcome in ("passed", "failed")]
        tt = f"{np.median(times):.1f}, {max(times):.1f}" if times else "-"
        rows.append([k, len(sel), c["refused"], len(built), c["passed"], c["failed"], c["crashed"], c["timeout"],
                     sum(1 for o in sel if o.not_applicable), tt])
    widths = [max(len(str(r[i])) for r in rows) for i in range(len(head))]
    lines = ["  ".join(str(v).ljust(w) for v, w in zip(r, widths)).rstrip() for r in rows]
    lines.insert(1, "  ".join("-" * w for w in widths))
    refusals = Counter(f"{o.kind}: {o.reason}" for o in outcomes if o.outcome == "refused")
    if refusals:
        lines += ["", "refusals (count: kind: reason)"] + [f"  {n}: {r}" for r, n in refusals.most_common()]
    na = Counter(f"{o.kind}: {re.sub(r'[-+]?[0-9.]+(e[-+]?[0-9]+)?', '#', x)[:120]}"
                 for o in outcomes for x in o.not_applicable)
    if na:
        lines += ["", "benches not applicable (count: kind: bench: reason)"] + [f"  {n}: {r}" for r, n in na.most_common()]
    bad = [o for o in outcomes if o.outcome in ("failed", "crashed", "timeout")]
    if bad:
        lines += ["", "failures"]
        for o in bad:
            lines.append(f"  {o.kind} #{o.index} {o.outcome}: {o.reason or '; '.join(o.failures[:3])}")
    return "\n".join(lines)


def add_commands(sub) -> None:
    p = sub.add_parser("sample-cards", help="draw random valid cards per kind, build and verify each, print a table")
    p.add_argument("kinds", nargs="*", help="device kinds (default: all)")
    p.add_argument("-n", "--per-kind", type=int, default=5, help="cards per kind (default 5)")
    p.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    p.add_argument("--sim", default="all",
                   help="simulators, comma separated (ngspice, ngspice-osdi, vacask); 'all' (default): every one this machine has; 'none': the reference solver only")
    p.add_argument("--time-limit", type=float, default=TIME_LIMIT, help="seconds per card (default 300)")
    p.set_defaults(func=cmd_sample_cards)


def cmd_sample_cards(args) -> int:
    from compactgen.model.card import all_kinds
    from compactgen.errors import InputError as CompactgenError
    from compactgen.harness.verify import parse_simulators

    kinds = args.kinds or all_kinds()
    unknown = [k for k in kinds if k not in all_kinds()]
    if unknown:
        raise CompactgenError(f"unknown device kind(s) {unknown}; expected some of {all_kinds()}")
    if args.per_kind < 1:
        raise CompactgenError(f"--per-kind: expected a positive number of cards, got {args.per_kind}")
    sims = parse_simulators(args.sim)
    outcomes = sweep(kinds, args.per_kind, args.seed, sims, args.time_limit,
                     progress=lambda m: print(f"  .. {m}", file=sys.stderr, flush=True))
    print(table(outcomes))
    bad = sum(o.outcome in ("failed", "crashed", "timeout") for o in outcomes)
    return 0 if bad == 0 else 1
