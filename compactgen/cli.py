"""The `compactgen` command."""
from __future__ import annotations

import argparse
import contextlib
import os
import shutil
import signal
import sys
import threading
from pathlib import Path

from . import __version__
from .errors import CompactgenError, InputError, Terminated, VerificationFailed

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="compactgen", description=(
        "Compact models of spintronic devices: device card -> Verilog-A + ngspice subcircuit, "
        "verified against the reference solution in ngspice and VACASK."))
    parser.add_argument("--version", action="version", version=f"compactgen {__version__}")
    sub = parser.add_subparsers(dest="command", required=True)

    p = sub.add_parser("init", help="write a commented starter card for a device kind")
    p.add_argument("kind")
    p.add_argument("-o", "--output", required=True, help="card file to write (refuses to overwrite)")
    p.add_argument("--name", help="model name (default: from the kind)")
    p.set_defaults(func=cmd_init)

    p = sub.add_parser("build", help="render NAME.va, NAME.lib, NAME.md and manifest.json")
    p.add_argument("card")
    p.add_argument("-o", "--output", required=True, help="output folder")
    p.set_defaults(func=cmd_build)

    p = sub.add_parser("verify", help="run the bench suite on the reference, ngspice and VACASK")
    p.add_argument("target", help="a card, or a folder written by `compactgen build`")
    p.add_argument("--sim", default="all",
                   help="simulators, comma separated, of: ngspice (B-source library), ngspice-osdi (compiled "
                        "model in ngspice), vacask; 'all' (default): every one this machine has ('ngspice-osdi' "
                        "needs an ngspice built with OSDI); 'none': the reference solver alone")
    p.add_argument("--report", help="write an HTML report with plots to this file")
    p.set_defaults(func=cmd_verify)

    p = sub.add_parser("demo", help="the whole job on the bundled example")
    p.add_argument("-o", "--output", default="compactgen_demo", help="output folder (default: ./compactgen_demo)")
    p.set_defaults(func=cmd_demo)

    for extra in _extensions():
        extra(sub)

    args = parser.parse_args(argv)
    try:
        with stop_on_signals():
            return int(args.func(args) or 0)
    except CompactgenError as exc:
        print(f"compactgen {args.command}: error: {exc}", file=sys.stderr)
        return exc.exit_status
    except KeyboardInterrupt:
        print(f"compactgen {args.command}: interrupted; partial output removed", file=sys.stderr)
        return 128 + signal.SIGINT
    except Terminated as exc:
        print(f"compactgen {args.command}: terminated by {signal.Signals(exc.signum).name}; partial output removed",
              file=sys.stderr)
        return 128 + exc.signum


@contextlib.contextmanager
def stop_on_signals():
    """While a command runs: SIGTERM and SIGHUP raise Terminated and SIGINT KeyboardInterrupt in
    the main thread, after the simulator processes started so far are killed (so that threads
    waiting on them return at once).  Every cleanup on the way out then runs: staging folders
    and temporary files are removed.  Only in the main thread (signal handlers live there)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    from .sim.tools import resume_children, stop_children

    stopping = []

    def handler(signum, frame):
        if stopping:  # a second signal must not interrupt the cleanup the first one started
            return
        stopping.append(signum)
        stop_children()
        if signum == signal.SIGINT:
            raise KeyboardInterrupt
        raise Terminated(signum)

    wanted = [signal.SIGTERM, signal.SIGINT] + ([signal.SIGHUP] if hasattr(signal, "SIGHUP") else [])
    previous = {sig: signal.signal(sig, handler) for sig in wanted}
    try:
        yield
    finally:
        for sig, old in previous.items():
            signal.signal(sig, old)
        resume_children()


def _extensions():
    """Subcommands that live with their feature (fit, release, ...): each module may define
    ``add_commands(subparsers)``."""
    out = []
    for mod in ("compactgen.calibrate.commands", "compactgen.release", "compactgen.thermal_commands",
                "compactgen.card_sweep", "compactgen.range_report"):
        try:
            m = __import__(mod, fromlist=["add_commands"])
        except ModuleNotFoundError as exc:
            if exc.name and mod.startswith(exc.name):
                continue
            raise
        if hasattr(m, "add_commands"):
            out.append(m.add_commands)
    return out


def say(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


def cmd_init(args) -> int:
    from .card import parse_card, starter_card

    out = Path(args.output)
    if out.exists():
        raise InputError(f"{out}: exists already; choose another name (init never overwrites)")
    text = starter_card(args.kind, args.name)
    parse_card(text, str(out))  # the starter must itself be valid
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(text)
    say(f"wrote {out}: a starter card for {args.kind}; edit the values, then `compactgen build {out} -o DIR`")
    return 0


def cmd_build(args) -> int:
    from .build import BUILD_MANIFEST, build_files, write_files
    from .card import load_card

    card = load_card(args.card)
    files = build_files(card)
    files[f"{card.name}.card.toml"] = card.text
    for p in write_files(files, args.output):
        say(f"wrote {p}")
    if f"{card.name}.osdi" not in files:
        import json

        why = json.loads(files[BUILD_MANIFEST])["compiled"][f"{card.name}.osdi"]["why"]
        say(f"note: no compiled model {card.name}.osdi ({why}); the B-source library {card.name}.lib "
            "and the .va are complete")
    return 0


def load_target(target: str):
    """A card file, or a build folder (its NAME.card.toml, checked against its model files)."""
    from .build import build_files
    from .card import load_card

    path = Path(target)
    if path.is_dir():
        cards = sorted(path.glob("*.card.toml"))
        if len(cards) != 1:
            raise InputError(f"{path}: expected one NAME.card.toml written by `compactgen build`, "
                                  f"found {len(cards)}")
        card = load_card(cards[0])
        fresh = build_files(card)
        for name in (f"{card.name}.va", f"{card.name}.lib", f"{card.name}.osdi.lib"):
            f = path / name
            if not f.is_file() or f.read_text() != fresh[name]:
                raise InputError(f"{f}: missing, edited by hand, or built by another compactgen version; "
                                      f"rebuild with `compactgen build {cards[0]} -o {path}`")
        return card
    return load_card(path)


def cmd_verify(args) -> int:
    from .verify import SIMULATORS

    from .verify import parse_simulators

    sims = parse_simulators(args.sim, say)
    card = load_target(args.target)
    result = verify_card(card, sims, args.report)
    return result.exit_status


def verify_card(card, sims=None, report: str | None = None, title: str = ""):
    from .verify import default_simulators, progress_printer, run_suite

    sims = default_simulators(say) if sims is None else sims
    ir = card.ir()
    say(f"verifying {ir.name} ({ir.kind}): setting up benches")
    benches = card.device.benches(ir, card.values)
    result = run_suite(ir, benches, simulators=sims, progress=progress_printer())
    print(result.table())
    if report:
        from .build import write_files
        from .report import verify_html

        rp = Path(report)
        write_files({rp.name: verify_html(result, title)}, rp.parent if str(rp.parent) else ".")
        say(f"wrote {rp}")
    return result


def cmd_demo(args) -> int:
    """The bundled example end to end; later stages (fit, release) join as they exist."""
    from .build import build_files, write_files
    from .card import load_card

    out = Path(args.output)
    out.mkdir(parents=True, exist_ok=True)
    ok = True
    thermal_done = False
    runs = {}
    for src in sorted(EXAMPLES.glob("*_demo.toml")) + _fitted_demo(out):
        card_path = out / src.name
        shutil.copyfile(src, card_path)
        card = load_card(card_path)
        say(f"== {card.name} ({card.kind}) ==")
        files = build_files(card)
        files[f"{card.name}.card.toml"] = card.text
        write_files(files, out / card.name)
        say(f"built {out / card.name}")
        result = verify_card(card, report=str(out / card.name / "verify.html"), title=f"{card.name}: verification")
        ok &= result.passed
        if card.kind == "stt-mtj" and not thermal_done and os.environ.get("COMPACTGEN_DEMO_THERMAL", "1") != "0":
            thermal_done = True  # once, for the bundled device
            from .thermal_report import demo_thermal

            say(f"thermal demo (switching probability, retention, corners): set COMPACTGEN_DEMO_THERMAL=0 to skip")
            say(f"wrote {demo_thermal(card_path, out / card.name, progress=say)}")
        runs[card.name] = (card_path, result)
    ok &= _demo_release(out, runs)
    say(f"demo finished in {out}: {'every bench passed' if ok else 'SOME BENCHES FAILED'}")
    return 0 if ok else VerificationFailed.exit_status


def _fitted_demo(out: Path) -> list[Path]:
    """The demo's fit steps, when compactgen.calibrate is present: the cards fitted to the bundled
    synthetic data (stt-mtj, dw-mtj) join the build and verify."""
    try:
        from .calibrate.commands import demo_fits
    except ModuleNotFoundError as exc:
        if exc.name and "compactgen.calibrate.commands".startswith(exc.name):
            return []
        raise
    return demo_fits(out / "fit")


def _demo_release(out: Path, runs: dict) -> bool:
    """The demo's release step, when compactgen.release is present: 1.0.0 of the example device,
    1.1.0 of its re-fit compared against it."""
    try:
        from .release.commands import demo_release_step
    except ModuleNotFoundError as exc:
        if exc.name and "compactgen.release.commands".startswith(exc.name):
            return True
        raise
    return demo_release_step(out, runs)


if __name__ == "__main__":
    sys.exit(main())
