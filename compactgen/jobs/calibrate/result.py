"""The fitted card: values, [uncertainty] (one standard error), [provenance] (data hashes, tool
version, date, free parameters, nuisance values, goodness of fit), written atomically."""
from __future__ import annotations

import datetime as _dt
import math
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from compactgen import __version__
from compactgen.model.card import card_text, parse_card
from compactgen.errors import InputError
from compactgen.jobs.calibrate.models import NUISANCE_SPECS
from compactgen.jobs.calibrate.data import Dataset
from compactgen.jobs.calibrate.fit import Block, FitOutcome
from compactgen.jobs.calibrate.models import STT_FITTABLE
from compactgen.model.params import ParamSpec

@dataclass
class CardFit:
    """A fitted card: values (card parameters and nuisance), uncertainties, key figures, notes."""

    card: object  # the input Card
    datasets: list[Dataset]
    outcome: FitOutcome
    specs: dict[str, ParamSpec]
    start: dict[str, float]  # card values after geometry/temperature from the data, before fitting
    values: dict[str, float]  # every value after the fit (card parameters + nuisance)
    free: list[str]
    fixed_notes: list[str]
    figures: dict[str, tuple[float, float, float, str, str]]  # name -> (before, after, stderr, unit, meaning)
    blocks: list[Block]
    stages: list[dict] = field(default_factory=list)
    fittable: tuple[str, ...] = (*STT_FITTABLE, *NUISANCE_SPECS)  # what this card kind's fit may free

    @property
    def fixed(self) -> list[str]:
        """Fittable parameters held at their card values (by default or by --fix)."""
        return [n for n in self.fittable if n not in self.free]

    @property
    def card_values(self) -> dict[str, float]:
        return {k: v for k, v in self.values.items() if k in self.card.values}

    @property
    def nuisance(self) -> dict[str, float]:
        return {k: self.values[k] for k in NUISANCE_SPECS if k in self.values}

    @property
    def stderr(self) -> dict[str, float]:
        return self.outcome.stderr

    @property
    def nfev(self) -> int:
        return sum(s["nfev"] for s in self.stages)



METHOD = ("joint maximum likelihood (scipy.optimize.least_squares, trust-region reflective): Gaussian "
          "residuals for resistances, fields and velocities (noise scale estimated per file unless stated), "
          "binomial deviance residuals for switching counts; standard errors from the Fisher information")


def _fmt(spec, value: float) -> str:
    return spec.card_text(value)


def provenance(cf: CardFit, date: str | None = None) -> dict:
    o = cf.outcome
    card = cf.card
    prov: dict = {
        "tool": f"compactgen {__version__}",
        "date": date or _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat(),
        "fitted_from": str(card.path) if card.path else card.name,
        "fitted_from_sha256": card.sha256(),
        "method": METHOD,
        "free": list(cf.free),
        "fixed": cf.fixed,  # held at their card values (cards fitted by earlier versions say "kept")
        "model_evaluations": int(cf.nfev),
        "converged": bool(o.success),
        "notes": list(cf.fixed_notes),
        "warnings": list(o.warnings),
        "data": [{"file": str(ds.path), "sha256": ds.sha256, "measurement": ds.kind, "rows": len(ds)}
                 for ds in cf.datasets],
        "correlation": {"parameters": list(o.free),
                        "matrix": [[float(f"{c:.4f}") if math.isfinite(c) else 0.0 for c in row] for row in o.corr]},
        "nuisance": {k: _fmt(NUISANCE_SPECS[k], v) for k, v in cf.nuisance.items()},
        "nuisance_uncertainty": {k: _fmt(NUISANCE_SPECS[k], o.stderr[k]) for k in NUISANCE_SPECS
                                 if k in o.stderr and math.isfinite(o.stderr[k])},
        "goodness": {s.name: {"kind": s.kind, "points": s.n,
                              ("chi_square" if s.kind == "gaussian" else "deviance"): round(s.statistic, 4),
                              "dof": round(s.dof, 3), "p_value": float(f"{s.p_value:.4g}")} for s in o.stats},
    }
    for key in ("nuisance", "nuisance_uncertainty"):  # a kind without data-only parameters (dw-mtj)
        if not prov[key]:
            del prov[key]
    return prov


def fitted_card_text(cf: CardFit, name: str | None = None, date: str | None = None) -> str:
    card = cf.card
    name = name or f"{card.name}_fit"
    unc = {n: cf.outcome.stderr[n] for n in cf.free
           if n in card.values and math.isfinite(cf.outcome.stderr.get(n, math.nan))}
    given = set(card.given) | {n for n in cf.free if n in card.values}
    for key in ("diameter", "tnom"):
        if (key in card.values and cf.card_values[key] != card.values[key]) or key in card.given:
            given.add(key)
    header = (f"FITTED by `compactgen fit` from {card.path.name if card.path else card.name} and "
              f"{len(cf.datasets)} data file(s) ({', '.join(ds.name for ds in cf.datasets)}).\n"
              "[uncertainty] holds one standard error of each fitted parameter; [provenance] the data hashes,\n"
              "the free parameters and the goodness of fit.  A fit is no substitute for silicon qualification.")
    desc = (card.description + " (re-fitted to measured data)") if card.description else ""
    text = card_text(card.kind, name, cf.card_values, desc, card.options, unc, provenance(cf, date), header,
                     frozenset(given))
    return text


def write_fitted_card(cf: CardFit, out: str | Path, name: str | None = None, force: bool = False,
                      date: str | None = None) -> Path:
    """Validate and write the fitted card atomically; never overwrite the input card."""
    out = Path(out)
    src = cf.card.path
    if src is not None and out.exists() and out.resolve() == Path(src).resolve():
        raise InputError(f"{out}: this is the input card; `compactgen fit` never overwrites its input "
                         "(choose another -o)")
    if src is not None and out.resolve() == Path(src).resolve():
        raise InputError(f"{out}: this is the input card; choose another -o")
    if out.exists() and not force:
        raise InputError(f"{out}: exists already; choose another name or pass --force")
    text = fitted_card_text(cf, name, date)
    parse_card(text, str(out))  # the fitted card must itself be valid before anything is written
    out.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", dir=out.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        os.replace(tmp, out)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return out
