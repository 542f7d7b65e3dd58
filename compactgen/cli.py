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

from compactgen import __version__
from compactgen.errors import CompactgenError, InputError, Terminated, VerificationFailed

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
    from compactgen.sim.tools import resume_children, stop_children

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
    for mod in ("compactgen.jobs.calibrate.commands", "compactgen.jobs.wafer.commands", "compactgen.jobs.release",
                "compactgen.jobs.sample_cards", "compactgen.jobs.range_report",
                "compactgen.jobs.wer_study"):
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
    from compactgen.model.card import parse_card, starter_card

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
    from compactgen.jobs.build import BUILD_MANIFEST, build_files, write_files
    from compactgen.model.card import load_card

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
    from compactgen.jobs.build import build_files
    from compactgen.model.card import load_card

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

    from compactgen.harness.verify import parse_simulators

    sims = parse_simulators(args.sim, say)
    card = load_target(args.target)
    result = verify_card(card, sims, args.report)
    return result.exit_status


def verify_card(card, sims=None, report: str | None = None, title: str = ""):
    from compactgen.harness.verify import default_simulators, progress_printer, run_suite

    sims = default_simulators(say) if sims is None else sims
    ir = card.ir()
    say(f"verifying {ir.name} ({ir.kind}): setting up benches")
    benches = card.device.benches(ir, card.values)
    result = run_suite(ir, benches, simulators=sims, progress=progress_printer())
    print(result.table())
    if report:
        from compactgen.jobs.build import write_files
        from compactgen.harness.verify_report import verify_html

        rp = Path(report)
        write_files({rp.name: verify_html(result, title)}, rp.parent if str(rp.parent) else ".")
        say(f"wrote {rp}")
    return result


def cmd_demo(args) -> int:
    """The bundled example end to end; later stages (fit, release) join as they exist."""
    from compactgen.jobs.build import build_files, write_files
    from compactgen.model.card import load_card

    out = Path(args.output)
    out.mkdir(parents=True, exist_ok=True)
    # the start page is written last, so an index is never left describing a demo that did not finish
    (out / DEMO_INDEX).unlink(missing_ok=True)
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
            from compactgen.statistics.thermal_report import demo_thermal

            say(f"thermal demo (switching probability, retention, corners): set COMPACTGEN_DEMO_THERMAL=0 to skip")
            say(f"wrote {demo_thermal(card_path, out / card.name, progress=say)}")
        runs[card.name] = (card_path, result)
    ok &= _demo_release(out, runs)
    ok &= _demo_wafer(out)
    write_files({DEMO_INDEX: demo_index(out, ok)}, out)  # one file, moved into place whole
    say(f"demo finished in {out}: {'every bench passed' if ok else 'SOME BENCHES FAILED'}; start page "
        f"{out / DEMO_INDEX}")
    return 0 if ok else VerificationFailed.exit_status


DEMO_INDEX = "index.html"
#: what each kind of file in a model's folder (build, release bundle) is; NAME is the model name
_MODEL_FILES = (
    ("{name}.va", "Verilog-A module"),
    ("{name}.osdi", "compiled model (openvaf-r) for ngspice with OSDI and for VACASK"),
    ("{name}.osdi.lib", "ngspice library around the compiled model (same subcircuit, parameters and sections)"),
    ("{name}.lib", "ngspice subcircuit library (behavioural sources; process sections tt/ss/ff/mc)"),
    ("{name}.md", "datasheet (Markdown): ports, conventions, parameters, key figures, equations"),
    ("{name}.card.toml", "the card the model was built from"),
    ("manifest.json", "build manifest (compactgen-build/1): sha256 of every file, key figures"),
    ("release.json", "release manifest (compactgen-release/1): sha256 of every file, sealed; its own sha256 "
                     "is the bundle digest"),
    ("verify.html", "verification report: every bench on the reference solver, ngspice and VACASK, with plots"),
    ("thermal.html", "thermal study: switching probability, retention against temperature, process corners"),
    ("changes.html", "comparison with the previous release, with plots"),
    ("changes.md", "comparison with the previous release (Markdown)"),
)


def _describe_demo_file(rel: Path) -> str:
    """One line saying what a file of the demo folder is (``rel``: its path inside the folder)."""
    parts, name = rel.parts, rel.name
    if len(parts) == 1 and name.endswith("_refit.toml"):
        return "the re-fitted card under the device's model name (released as 1.1.0)"
    if len(parts) == 1 and name.endswith("_v2.toml"):
        return "an edited copy of the device's card (released as 1.1.0)"
    if len(parts) == 1 and name.endswith("_fit.toml"):
        return "the card fitted to the bundled synthetic data (copied from fit/), built and verified"
    if len(parts) == 1 and name.endswith(".toml"):
        return "example card (copied from examples/), built and verified"
    if parts[0] == "fit":
        if name.endswith("report.html"):
            return "fit report: data against the fitted model, standard errors, correlations, recovered values"
        if name.endswith(".toml"):
            return "card written by `compactgen fit`: fitted values, [uncertainty], [provenance]"
    if parts[0] == "wafer":
        return {"wafer_report.html": "wafer statistics: population spread, mismatch against 1/sqrt(area), "
                                     "correlations, wafer maps, Monte Carlo proof in ngspice",
                "device_fits.csv": "every device of the synthetic wafer: fitted values, fit quality, status"}.get(
            name, "card written by `compactgen wafer-stats`: population means, sigmas and [variation]")
    if parts[0] == "releases":
        if len(parts) == 2 and name.endswith(".refused.html"):
            return "report of a release that was refused (changes outside tolerance without --accept)"
        if len(parts) > 2 and parts[2] == "curves":
            return "bench curves (CSV with units) of every source"
        model = parts[1].rsplit("-", 1)[0] if len(parts) > 2 else ""
    else:
        model = parts[0] if len(parts) > 1 else ""
    if parts[0] == "releases" and name == "manifest.json":  # a bundle made by an earlier version
        return "release manifest of an older bundle: sha256 of every file, sealed"
    for pattern, what in _MODEL_FILES:
        if name == pattern.format(name=model):
            return what
    return "written by the demo"


def demo_index(out: Path, ok: bool) -> str:
    """The start page of a demo folder: every file in it linked, with one line each saying what it is
    (a release bundle's curves/ folder as one line)."""
    import html as _html

    out = Path(out)
    rows: dict[str, list[tuple[str, str]]] = {}
    seen_curves = set()
    for p in sorted(out.rglob("*")):
        rel = p.relative_to(out)
        if not p.is_file() or rel.as_posix() == DEMO_INDEX or any(x.startswith(".") for x in rel.parts):
            continue
        if len(rel.parts) > 3 and rel.parts[0] == "releases" and rel.parts[2] == "curves":
            folder = Path(*rel.parts[:3])
            if folder in seen_curves:
                continue
            seen_curves.add(folder)
            n = sum(1 for _ in (out / folder).glob("*.csv"))
            rel, what = folder, f"{n} bench curve files (CSV with units), one per bench, every source"
        else:
            what = _describe_demo_file(rel)
        group = rel.parts[0] if len(rel.parts) > 1 else "cards"
        if group == "releases" and len(rel.parts) > 2:
            group = f"releases/{rel.parts[1]}"
        href = rel.as_posix() + ("/" if (out / rel).is_dir() else "")
        rows.setdefault(group, []).append((href, what))
    sections = []
    for group in sorted(rows, key=lambda g: (g != "cards", g.startswith("releases"), g)):
        items = "".join(f"<li><a href='{_html.escape(h)}'>{_html.escape(h)}</a>: {_html.escape(w)}</li>"
                        for h, w in rows[group])
        sections.append(f"<h2>{_html.escape(group)}</h2><ul>{items}</ul>")
    verdict = "every bench passed" if ok else "SOME BENCHES FAILED (see the verify.html pages)"
    return (f"<!doctype html><html><head><meta charset='utf-8'><title>compactgen demo</title>"
            f"<style>body{{font-family:sans-serif;max-width:1100px;margin:auto}}</style></head><body>"
            f"<h1>compactgen demo</h1><p>compactgen {_html.escape(__version__)}. Verdict: <b>{verdict}</b>. "
            "Every file the demo wrote, by folder: the example cards, one folder per model (build and "
            "verification), fit/ (cards fitted to the bundled synthetic data), releases/ (bundles and "
            "comparisons), wafer/ (statistics of a synthetic wafer: <a href='wafer/wafer_report.html'>report</a>)."
            f"</p>{''.join(sections)}</body></html>\n")


def _fitted_demo(out: Path) -> list[Path]:
    """The demo's fit steps, when compactgen.jobs.calibrate is present: the cards fitted to the bundled
    synthetic data (stt-mtj, dw-mtj) join the build and verify."""
    try:
        from compactgen.jobs.calibrate.commands import demo_fits
    except ModuleNotFoundError as exc:
        if exc.name and "compactgen.jobs.calibrate.commands".startswith(exc.name):
            return []
        raise
    return demo_fits(out / "fit")


def _demo_wafer(out: Path) -> bool:
    """The demo's wafer step, when compactgen.jobs.wafer is present: the synthetic wafer of
    examples/data/wafer through `wafer-stats` into OUT/wafer (card, report, per-device CSV)."""
    try:
        from compactgen.jobs.wafer.commands import demo_wafer
    except ModuleNotFoundError as exc:
        if exc.name and "compactgen.jobs.wafer.commands".startswith(exc.name):
            return True
        raise
    say("== wafer statistics (synthetic wafer examples/data/wafer) ==")
    run = demo_wafer(out / "wafer", say=say)
    return run.proof is None or run.proof.passed


def _demo_release(out: Path, runs: dict) -> bool:
    """The demo's release step, when compactgen.jobs.release is present: 1.0.0 of the example device,
    1.1.0 of its re-fit compared against it."""
    try:
        from compactgen.jobs.release.commands import demo_release_step
    except ModuleNotFoundError as exc:
        if exc.name and "compactgen.jobs.release.commands".startswith(exc.name):
            return True
        raise
    return demo_release_step(out, runs)


if __name__ == "__main__":
    sys.exit(main())
