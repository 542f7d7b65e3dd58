"""`compactgen fit CARD DATA... -o FITTED.toml [--report FILE]` and the demo's fit step."""
from __future__ import annotations

import sys
import time
from pathlib import Path

from compactgen.errors import InputError

EXAMPLES = Path(__file__).resolve().parents[3] / "examples"
DEMO_CARD = EXAMPLES / "pmtj35_demo.toml"
DEMO_DATA = EXAMPLES / "data"
DEMO_TRUTH = DEMO_DATA / "truth_pmtj35.toml"
DW_DEMO_CARD = EXAMPLES / "dwtrack_demo.toml"
DW_DEMO_TRUTH = DEMO_DATA / "truth_dwtrack.toml"


def add_commands(sub) -> None:
    p = sub.add_parser("fit", help="re-fit a card to measured data (R-H, R-V, switching counts; wall velocities)",
                       description="Fit the parameters of CARD to the measured DATA files (CSV with units in the "
                                   "header) and write a new card with standard errors and provenance.")
    p.add_argument("card", help="the card to start from (never overwritten)")
    p.add_argument("data", nargs="+", help="measured data files (CSV)")
    p.add_argument("-o", "--output", required=True, help="fitted card to write")
    p.add_argument("--report", help="write an HTML report (data versus fit, residuals, correlations) here")
    p.add_argument("--name", help="model name of the fitted card (default: CARDNAME_fit)")
    p.add_argument("--free", help="comma-separated parameters to fit (default: what the data determine)")
    p.add_argument("--fix", help="comma-separated parameters held fixed at their card values (listed under "
                   "`fixed` in the fitted card's [provenance])")
    p.add_argument("--truth", help="for synthetic data: a card holding the true values, compared in the report")
    p.add_argument("--force", action="store_true", help="replace an existing output card (never the input)")
    p.set_defaults(func=cmd_fit)


def _names(text: str | None) -> list[str] | None:
    if text is None:
        return None
    return [t.strip() for t in text.split(",") if t.strip()]


class Progress:
    """One status line on stderr, at most a few times a second."""

    def __init__(self, stream=sys.stderr, every: float = 0.3):
        self.stream = stream
        self.every = every
        self.last = 0.0
        self.t0 = time.perf_counter()
        self.tty = hasattr(stream, "isatty") and stream.isatty()
        self.shown = False

    def __call__(self, event: dict) -> None:
        now = time.perf_counter()
        if now - self.last < self.every:
            return
        self.last = now
        msg = (f"fitting: {event['nfev']} model evaluations, cost {event['best']:.6g} "
               f"(pass {event['pass']}), {now - self.t0:.1f} s")
        if self.tty:
            self.stream.write("\r" + msg + " " * 8)
        else:
            self.stream.write(msg + "\n")
        self.stream.flush()
        self.shown = True

    def done(self) -> None:
        if self.shown and self.tty:
            self.stream.write("\n")
            self.stream.flush()


def run_fit(card_path, data_paths, output, report=None, name=None, free=None, fix=None, truth=None, force=False,
            say=None):
    """Load, fit, write the card (and report); returns (fitted card path, CardFit)."""
    from compactgen.model.card import load_card
    from compactgen.jobs.calibrate.data import read_all
    from compactgen.jobs.calibrate.models import nuisance_from
    from compactgen.jobs.calibrate.result import write_fitted_card
    from compactgen.jobs.calibrate.runner import fit_card

    say = say or (lambda m: print(m, file=sys.stderr, flush=True))
    out = Path(output)
    card = load_card(card_path)
    if card.path is not None and out.resolve() == Path(card.path).resolve():
        raise InputError(f"{out}: this is the input card; `compactgen fit` never overwrites its input")
    datasets = read_all(data_paths)
    for ds in datasets:
        say(f"read {ds.path}: {ds.kind}, {len(ds)} rows" + (f" (ignored columns: {', '.join(ds.ignored)})"
                                                          if ds.ignored else ""))
    progress = Progress()
    cf = fit_card(card, datasets, free=free, fix=fix or (), progress=progress)
    progress.done()
    path = write_fitted_card(cf, out, name=name, force=force)
    say(f"wrote {path}: {len(cf.free)} free parameters, {cf.nfev} model evaluations, "
        f"{sum(s['seconds'] for s in cf.stages):.2f} s")
    print(summary_table(cf))
    for n in cf.fixed_notes:
        say(f"note: {n}")
    for w in cf.outcome.warnings:
        say(f"warning: {w}")
    if report:
        from compactgen.jobs.build import write_files
        from compactgen.jobs.calibrate.report import fit_html

        tv = None
        if truth:
            tc = load_card(truth)
            tv = {**tc.values, **nuisance_from(tc)}
        rp = Path(report)
        write_files({rp.name: fit_html(cf, tv)}, rp.parent if str(rp.parent) else ".")
        say(f"wrote {rp}")
    return path, cf


def summary_table(cf) -> str:
    from compactgen.jobs.calibrate.report import _display

    lines = [f"{'parameter':20s} {'start':>14s} {'fitted':>14s} {'std. error':>12s}  unit"]
    for n in cf.free:
        spec = cf.specs[n]
        s0, unit = _display(spec, cf.start[n])
        v, _ = _display(spec, cf.values[n])
        se = cf.outcome.stderr.get(n, float("nan"))
        sd, _ = _display(spec, se) if se == se else (float("nan"), "")
        lines.append(f"{n:20s} {s0:14.6g} {v:14.6g} {sd:12.3g}  {unit}")
    return "\n".join(lines)


def cmd_fit(args) -> int:
    run_fit(args.card, args.data, args.output, args.report, args.name, _names(args.free), _names(args.fix),
            args.truth, args.force)
    return 0


def demo_data_files() -> list[Path]:
    return sorted(DEMO_DATA.glob("*.csv"))


def demo_fit(out_dir) -> Path:
    """The demo's fit step: examples/data/*.csv (synthetic, from examples/data/truth_pmtj35.toml) fitted
    to examples/pmtj35_demo.toml; writes OUT/pmtj35_fit.toml and OUT/fit_report.html (with the
    recovered-versus-true table) and returns the fitted card's path."""
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    path, _ = run_fit(DEMO_CARD, demo_data_files(), out / "pmtj35_fit.toml", report=out / "fit_report.html",
                      name="pmtj35_fit", truth=DEMO_TRUTH, force=True)
    return path


def dw_demo_data_files() -> list[Path]:
    return sorted((DEMO_DATA / "wall").glob("*.csv"))


def demo_fits(out_dir) -> list[Path]:
    """The demo's fit steps: ``demo_fit`` (stt-mtj), then the wall-velocity files examples/data/wall/*.csv
    (synthetic, from examples/data/truth_dwtrack.toml) fitted to examples/dwtrack_demo.toml, written to
    OUT/dwtrack_fit.toml and OUT/dwtrack_fit_report.html; returns both fitted cards' paths."""
    out = Path(out_dir)
    paths = [demo_fit(out)]
    path, _ = run_fit(DW_DEMO_CARD, dw_demo_data_files(), out / "dwtrack_fit.toml",
                      report=out / "dwtrack_fit_report.html", name="dwtrack_fit", truth=DW_DEMO_TRUTH, force=True)
    return paths + [path]
