"""`compactgen release`, `compactgen compare`, `compactgen check-release`, and the demo step."""
from __future__ import annotations

import argparse
import re
import sys
import time
from dataclasses import dataclass
from pathlib import Path

from compactgen.errors import CompactgenError, InputError, ReleaseError
from compactgen.jobs.release.bundle import INTEGRITY_ONLY, MANIFEST, SEAL, Bundle, ReleaseRefused, Staging, bundle_digest, check_bundle, created_stamp, load_bundle, manifest_text, release_manifest, seal, sha256
from compactgen.jobs.release.compare import Comparison, compare_bundles
from compactgen.jobs.release.semver import parse_version


def _say(msg: str) -> None:
    print(msg, file=sys.stderr, flush=True)


@dataclass
class ReleaseOutcome:
    path: Path
    manifest: dict
    comparison: Comparison | None
    suite: object  # verify.SuiteResult
    digest: str = ""  # sha256 of the bundle's release.json (bundle.bundle_digest)


def make_release(card_path: str | Path, version: str, out_root: str | Path, against: str | Path | None = None,
                 accept: str | None = None, suite=None, progress=_say) -> ReleaseOutcome:
    """Verify a card in both simulators and freeze it as ``out_root/<name>-<version>/``.

    With ``against`` (a previous bundle) the new release is compared with it; a change
    outside tolerance or an interface break refuses the release (ReleaseRefused, with the
    comparison report written beside the releases) unless ``accept`` gives the reason, which
    the manifest and the report record.  ``suite`` is a SuiteResult already computed for this
    very card (the demo reuses its verification run); by default the suite runs here.
    """
    from compactgen.jobs.build import BUILD_MANIFEST, build_files, write_files
    from compactgen.model.card import load_card
    from compactgen.model.evaluate import figures as eval_figures
    from compactgen.harness.verify_report import verify_html
    from compactgen.harness.verify import progress_printer, run_suite
    from compactgen.jobs.release.changes import html, markdown, summary_text
    from compactgen.jobs.release.curves import curve_table, write_csv

    say = progress or (lambda m: None)
    ver = parse_version(version)
    if accept is not None and not accept.strip():
        raise InputError("--accept: give the reason the changes are intended (it goes into the manifest)")
    if accept and against is None:
        raise InputError("--accept records why changes against a previous release are intended; "
                         "it needs --against PREVIOUS_BUNDLE")
    out_root = Path(out_root)
    if out_root.exists() and not out_root.is_dir():
        raise ReleaseError(f"{out_root}: exists and is not a folder")
    card = load_card(card_path)
    label = f"{card.name}-{ver}"
    target = out_root / label
    if target.exists():
        raise ReleaseError(f"{target}: release {ver} of {card.name} exists already; a release is never "
                           "overwritten, give a new VERSION")
    prev = None
    if against is not None:
        prev = load_bundle(against)
        if not ver > prev.version:
            raise InputError(f"release VERSION {ver}: not newer than the release compared against ({prev.label}, "
                             f"{against}); semantic-version order must increase")
    t0 = time.perf_counter()
    reused = suite is not None
    ir = card.ir()
    # the bundle grows in a hidden staging folder, removed if the release stops for any reason
    with Staging(out_root, label, say) as stage:
        files: dict[str, bytes] = {}

        def add(rel: str, content: str | bytes) -> None:
            files[rel] = content.encode("utf-8") if isinstance(content, str) else content
            stage.write(rel, files[rel])

        for rel, content in build_files(card).items():
            if rel != BUILD_MANIFEST:  # the release manifest holds what it records, and more
                add(rel, content)
        add(f"{card.name}.card.toml", card.text)
        if suite is None:
            say(f"release {card.name} {ver}: running the bench suite in ngspice and VACASK")
            benches = card.device.benches(ir, card.values)
            suite = run_suite(ir, benches, progress=progress_printer() if progress else None)
        elif suite.model != ir.name:
            raise ValueError(f"suite result is for {suite.model}, not {ir.name}")
        if not suite.passed:
            failed = [f"{r.bench}: {r.metric}" for r in suite.rows if not r.passed]
            if progress:
                print(suite.table())
            raise ReleaseRefused(f"{card_path}: {len(failed)} of {len(suite.rows)} bench figures fail "
                                 f"({', '.join(failed[:4])}{', ...' if len(failed) > 4 else ''}); a model that "
                                 f"fails its benches is not released. See them with `compactgen verify {card_path} "
                                 "--report verify.html`")
        ran = "result of the verification just run" if reused else f"{time.perf_counter() - t0:.1f} s"
        say(f"release {card.name} {ver}: bench suite passed ({len(suite.rows)} figures, {ran}); "
            "writing curves and reports")
        for run in suite.runs:
            meta = {"model": f"{card.name} {ver}", "bench": run.bench.name, "title": run.bench.title,
                    "sources": ", ".join(["reference"] + sorted(s for s in run.traces if s != "reference")),
                    "grid": "transient, uniform output step" if run.bench.analysis == "tran" else "DC sweep points"}
            add(f"curves/{run.bench.name}.csv", write_csv(curve_table(ir, run, meta)))
        manifest = release_manifest(card, ir, ver, suite, eval_figures(ir))
        comparison = None
        refused = out_root / f"{label}.refused.html"
        if prev is not None:
            comparison = compare_bundles(prev, Bundle(manifest, files=files), accepted=accept)
            specs = {b: r["plot"] for b, r in manifest["benches"].items()}
            if progress:
                print(summary_text(comparison))
            if not comparison.passed:
                write_files({refused.name: html(comparison, specs)}, out_root)
                raise ReleaseRefused(
                    f"release {label} refused: {comparison.verdict()}. Report: {refused}. If the changes are "
                    f"intended, run again with --accept \"why\" (the reason goes into the manifest and the report)")
            add("changes.md", markdown(comparison))
            add("changes.html", html(comparison, specs))
            manifest["comparison"] = dict(comparison.record(), against_manifest_sha256=prev.manifest.get(SEAL),
                                          against_digest=bundle_digest(prev.root))
        add("verify.html", verify_html(suite, f"{card.name} {ver}: verification"))
        manifest["files"] = {k: sha256(v) for k, v in sorted(files.items())}
        manifest["created"] = created_stamp()
        add(MANIFEST, manifest_text(seal(manifest)))
        path = stage.publish()
    refused.unlink(missing_ok=True)
    digest = sha256(files[MANIFEST])
    say(f"released {path} ({len(files)} files, {time.perf_counter() - t0:.1f} s); bundle digest {digest} "
        f"(sha256 of {MANIFEST}): record this digest elsewhere")
    return ReleaseOutcome(path, manifest, comparison, suite, digest)


def compare_dirs(old: str | Path, new: str | Path, accept: str | None = None, simulators=None) -> Comparison:
    return compare_bundles(load_bundle(old), load_bundle(new), accepted=accept, simulators=simulators)


# ---- command line ------------------------------------------------------------------------------
def add_commands(sub) -> None:
    p = sub.add_parser("release", help="verify a card and freeze it as an immutable, versioned bundle",
                       usage="compactgen release [-h] CARD VERSION -o OUTPUT [--against AGAINST] [--accept ACCEPT]")
    p.add_argument("card")
    p.add_argument("release_version", metavar="VERSION", nargs="?", help="semantic version of this release, "
                   "e.g. 1.0.0 (`compactgen --version` is the program's own version)")
    p.add_argument("--version", dest="version_option", nargs="?", const="", help=argparse.SUPPRESS)
    p.add_argument("-o", "--output", required=True, help="folder holding the releases; the bundle is "
                   "OUTPUT/<name>-<version>/")
    p.add_argument("--against", help="a previous release bundle to compare with")
    p.add_argument("--accept", help="reason why changes outside tolerance or interface breaks are intended "
                   "(recorded in the manifest and the report)")
    p.set_defaults(func=cmd_release)

    p = sub.add_parser("compare", help="compare two release bundles (reads the bundles only)")
    p.add_argument("old")
    p.add_argument("new")
    p.add_argument("--report", help="write the HTML comparison report (with plots) to this file")
    p.add_argument("--markdown", help="write the comparison as Markdown to this file")
    p.add_argument("--accept", help="reason the changes are intended: exit 0 and record it in the report")
    p.set_defaults(func=cmd_compare)

    p = sub.add_parser("check-release", help="re-hash release bundles; report changed, missing or extra files "
                       "(integrity against accidental change; with --digest or --against also against a record "
                       "kept outside the bundle)")
    p.add_argument("bundles", nargs="+")
    p.add_argument("--digest", metavar="SHA256", help="the bundle digest recorded when the bundle was released "
                   "(printed by `compactgen release`); one bundle only")
    p.add_argument("--against", metavar="PREVIOUS_BUNDLE", help="check PREVIOUS_BUNDLE against the record the "
                   "(later) bundle kept of it when it was released with --against; one bundle only")
    p.set_defaults(func=cmd_check_release)


def cmd_release(args) -> int:
    if args.version_option is not None or args.release_version is None:
        raise InputError(f"the release version is the argument after the card: `compactgen release {args.card} "
                         "1.2.0 -o RELEASES` (`--version` is compactgen's own version, not the release's)")
    out = make_release(args.card, args.release_version, args.output, against=args.against, accept=args.accept)
    print(f"released {out.path}\nbundle digest: {out.digest} (sha256 of {out.path / MANIFEST})\n"
          f"Record this digest outside the bundle (release notes, ticket, signed tag): `compactgen check-release "
          f"{out.path} --digest {out.digest}` then shows the bundle is the one released. The bundle's own hashes "
          "only catch accidental change.")
    return 0


def cmd_compare(args) -> int:
    from compactgen.jobs.build import write_files
    from compactgen.jobs.release.changes import html, markdown, summary_text

    c = compare_dirs(args.old, args.new, accept=args.accept)
    print(summary_text(c))
    for out, content in ((args.report, lambda: html(c, _plot_specs(args.new))), (args.markdown, lambda: markdown(c))):
        if out:
            p = Path(out)
            write_files({p.name: content()}, p.parent if str(p.parent) else ".")
            _say(f"wrote {p}")
    return 0 if c.passed else ReleaseRefused.exit_status


def _plot_specs(bundle_dir) -> dict[str, list[str]]:
    manifest = load_bundle(bundle_dir, check=False).manifest
    return {b: r.get("plot", []) for b, r in manifest["benches"].items()}


def cmd_check_release(args) -> int:
    digest = None
    if args.digest is not None:
        digest = args.digest.strip().lower().removeprefix("sha256:")
        if not re.fullmatch(r"[0-9a-f]{64}", digest):
            raise InputError(f"--digest {args.digest!r}: expected 64 hexadecimal digits (the sha256 printed by "
                             "`compactgen release`)")
    if (digest or args.against) and len(args.bundles) != 1:
        raise InputError(f"--digest and --against check one bundle; {len(args.bundles)} given")
    missing = [str(d) for d in args.bundles if not Path(d).is_dir()]
    if missing:  # bad input (exit 2); a folder that is there but damaged fails the check (exit 1)
        raise InputError(f"{', '.join(missing)}: no such release folder; expected a bundle folder written by "
                         "`compactgen release`")
    bad = 0
    for d in args.bundles:
        try:
            result = check_bundle(d)
        except ReleaseError as exc:
            print(f"{d}: {exc}")
            bad += 1
            continue
        print(result.text())
        bad += not result.ok
        if digest is not None:
            if result.digest == digest:
                print("  digest matches the one recorded at release: this is the bundle that was released")
            else:
                print(f"  DIGEST DIFFERS from the one recorded at release ({digest}): this is not the bundle "
                      "that was released (changed and re-sealed, or another release)")
                bad += 1
        if args.against:
            ok, text = check_previous(d, args.against)
            print(text)
            bad += not ok
    if digest is None and not args.against:
        print(INTEGRITY_ONLY)
    return 0 if not bad else 1


def check_previous(bundle: str | Path, previous: str | Path) -> tuple[bool, str]:
    """``previous`` against the record ``bundle`` kept of it when it was released with --against:
    (matches, text).  A bundle without such a record, or one that recorded another release, is
    an InputError."""
    later = load_bundle(bundle, check=False).manifest
    rec = later.get("comparison")
    if not isinstance(rec, dict):
        raise InputError(f"--against {previous}: {bundle} was released without --against and keeps no record of "
                         "a previous release")
    prev_check = check_bundle(previous)
    prev = load_bundle(previous, check=False).manifest
    label = f"{prev.get('name')} {prev.get('version')}"
    if rec.get("against") != label:
        raise InputError(f"--against {previous}: that is {label}, but {bundle} was compared against "
                         f"{rec.get('against')} when it was released")
    lines = [prev_check.text()]
    if rec.get("against_digest"):
        ok = rec["against_digest"] == prev_check.digest
        recorded = f"digest {rec['against_digest']}"
    else:  # bundles released before the digest was recorded kept the previous manifest's seal
        ok = rec.get("against_manifest_sha256") == prev.get(SEAL) and not prev_check.manifest_problem
        recorded = f"{SEAL} {rec.get('against_manifest_sha256')}"
    if ok:
        lines.append(f"  matches the record {bundle} kept of it ({recorded}): unchanged since that release")
    else:
        lines.append(f"  DIFFERS from the record {bundle} kept of it ({recorded}): changed after that release "
                     "(and re-sealed, if it checks out as intact)")
    return ok and prev_check.ok, "\n".join(lines)


# ---- demo ---------------------------------------------------------------------------------------
DEMO_DEVICE = "pmtj35_demo"  # the example device the demo releases; the edited-card fallback is for it
#: (example device, its re-fit to the bundled synthetic data by the compactgen.jobs.calibrate demo step)
DEMO_PAIRS = (("pmtj35_demo", "pmtj35_fit"), ("dwtrack_demo", "dwtrack_fit"))
DEMO_ACCEPT_FIT = ("demo scenario: re-fit of the example device to the bundled synthetic measurements; the "
                   "parameter and figure changes are the intended result of the fit")
DEMO_ACCEPT = ("demo scenario: RA and TMR re-measured on a new (synthetic) wafer lot; the resistance and "
               "read-figure changes are intended")


def demo_edited_card(src: str | Path, dst: str | Path, ra_factor: float = 1.10, tmr0: float = 1.42) -> Path:
    """A copy of a demo card with RA scaled and TMR changed, as if re-measured (invented numbers)."""
    from compactgen.model.card import load_card

    card = load_card(src)
    values = dict(card.values, ra=card.values["ra"] * ra_factor, tmr0=tmr0)
    return _write_card(card, values, card.name, dst, (
        f"DEMO CARD, edited copy of {Path(src).name}: ra x {ra_factor:g} and tmr0 = {tmr0:g}, as if re-measured.\n"
        "Invented values of the compactgen demo scenario, not a measured stack."))


def renamed_card(src: str | Path, name: str, dst: str | Path) -> Path:
    """A card under another model name, values, uncertainties and provenance kept: a re-fit
    released as a new version of the device it re-fits keeps the device's module name, so
    designers' netlists keep working."""
    from compactgen.model.card import load_card

    card = load_card(src)
    return _write_card(card, dict(card.values), name, dst, (
        f"{Path(src).name} (model {card.name}) released under the device's model name {name}.\n"
        "Values, [uncertainty] and [provenance] as fitted."))


def _write_card(card, values: dict, name: str, dst: str | Path, header: str) -> Path:
    from compactgen.jobs.build import write_files
    from compactgen.model.card import card_text, parse_card

    text = card_text(card.kind, name, values, card.description, card.options, card.uncertainty,
                     card.provenance, given=card.given, header=header)
    dst = Path(dst)
    parse_card(text, str(dst))
    write_files({dst.name: text}, dst.parent)
    return dst


def _existing(card_path, version, releases: Path) -> Path | None:
    """An intact bundle of this version made by an earlier demo run from the same model (same
    parameter values and interface; the card text may differ, e.g. in a fit's date)."""
    from compactgen.model.card import load_card
    from compactgen.jobs.release.bundle import interface_record, json_safe, parameter_record

    card = load_card(card_path)
    path = releases / f"{card.name}-{parse_version(version)}"
    if not path.exists():
        return None
    if check_bundle(path).ok:
        m = load_bundle(path).manifest
        ir = card.ir()
        if (m["parameters"] == json_safe(parameter_record(card, ir))
                and m["interface"] == json_safe(interface_record(ir))):
            _say(f"{path}: released earlier from the same model; kept as it is")
            return path
    raise ReleaseError(f"{path}: exists from an earlier run but holds another model or does not check out; "
                       "releases are never overwritten: remove the demo folder or choose another")


def demo_release(card_v1: Path, card_v2: Path, out_dir: Path, suite_v1=None, accept: str = DEMO_ACCEPT) -> bool:
    """Release 1.0.0 of ``card_v1`` and 1.1.0 of ``card_v2`` against it (changes accepted with
    ``accept``) into ``out_dir/releases``; print the comparison summary; True if all went fine."""
    from compactgen.jobs.release.changes import summary_text

    releases = Path(out_dir) / "releases"
    try:
        v1 = _existing(card_v1, "1.0.0", releases) or make_release(card_v1, "1.0.0", releases, suite=suite_v1).path
        v2 = _existing(card_v2, "1.1.0", releases)
        if v2 is None:  # make_release prints the comparison summary
            v2 = make_release(card_v2, "1.1.0", releases, against=v1, accept=accept, progress=_say).path
            comparison = compare_dirs(v1, v2, accept=accept)
        else:
            comparison = compare_dirs(v1, v2, accept=accept)
            print(summary_text(comparison))
    except CompactgenError as exc:
        _say(f"release step failed: {exc}")
        return False
    _say(f"comparison report: {v2 / 'changes.html'} (Markdown: {v2 / 'changes.md'})")
    return comparison.passed and check_bundle(v1).ok and check_bundle(v2).ok


def demo_release_step(out_dir: Path, runs: dict) -> bool:
    """The release step of `compactgen demo`: ``runs`` maps model names to (card path, verify
    result) of the cards the demo verified.  For each example device with a re-fit (DEMO_PAIRS),
    release 1.0.0 is the device (its verify result reused) and 1.1.0 its re-fit (the fitted card
    under the device's name); without the fit step, 1.1.0 of DEMO_DEVICE is an edited copy."""
    out_dir = Path(out_dir)
    ok = True
    for device, fit in DEMO_PAIRS:
        if device not in runs or (fit not in runs and device != DEMO_DEVICE):
            continue
        card_v1, result = runs[device]
        _say(f"== releases of {device} ==")
        if not result.passed:
            _say(f"release step skipped: {device} fails its benches")
            ok = False
            continue
        if fit in runs:
            v2 = renamed_card(runs[fit][0], device, out_dir / f"{device}_refit.toml")
            ok &= demo_release(card_v1, v2, out_dir, suite_v1=result, accept=DEMO_ACCEPT_FIT)
        else:
            v2 = demo_edited_card(card_v1, out_dir / f"{device}_v2.toml")
            ok &= demo_release(card_v1, v2, out_dir, suite_v1=result, accept=DEMO_ACCEPT)
    return ok
