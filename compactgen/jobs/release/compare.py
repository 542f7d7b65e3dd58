"""Compare two release bundles: parameters, interface, key figures, bench figures and curves.

The comparison reads only the bundles (manifests and curve files), never simulates, so a
bundle made years ago stays comparable.  Every figure is compared against a tolerance band
from one table (FIGURE_BANDS, each with its reason); curves are compared point by point on a
common grid against CURVE_BANDS.  Interface changes that break a designer's netlist (port
order, a removed or renamed parameter, a changed instance default, a changed convention) are
listed on their own.  A change outside a band, a removed bench or figure, or an interface
break makes the verdict fail unless accepted with a recorded reason.
"""
from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass, field

import numpy as np

from compactgen.model import bignum
from compactgen.errors import ReleaseError
from compactgen.jobs.release.bundle import Bundle
from compactgen.jobs.release.curves import CurveTable


# ---- tolerance bands -------------------------------------------------------------------------
@dataclass(frozen=True)
class Band:
    label: str
    rtol: float
    atol: float
    reason: str
    peak: float = 0.0  # curves: add peak * max|old| over the curve to atol
    log: bool = False  # compare |ln(new/old)| with ln(1 + rtol): for quantities exponential in a barrier

    def text(self, unit: str = "") -> str:
        if self.log:
            return f"factor {1 + self.rtol:g}"
        parts = []
        if self.rtol:
            parts.append(f"{self.rtol * 100:g} %")
        if self.atol:
            u = "" if unit in ("", "1") else f" {unit}"
            parts.append(f"{self.atol:g}{u}")
        if self.peak:
            parts.append(f"{self.peak * 100:g} % of peak")
        return " + ".join(parts) or "exact"


@dataclass(frozen=True)
class BandRule:
    band: Band
    units: tuple[str, ...] = ()  # empty: any unit
    name: str = ""  # regular expression searched in the figure name; empty: any name

    def matches(self, name: str, unit: str) -> bool:
        return ((not self.units or unit in self.units)
                and (not self.name or re.search(self.name, name, re.IGNORECASE) is not None))


_CNP = "common practice, no source"
#: figure tolerance bands, first match wins; key figures and bench figures of every device kind
FIGURE_BANDS: tuple[BandRule, ...] = (
    BandRule(Band("TMR ratio", 0.01, 0.0, "the sense margin is proportional to TMR; 1 % of TMR is well "
                  f"below the spread a read circuit is designed for ({_CNP})"), name=r"(^|_)tmr"),
    BandRule(Band("thermal stability", 0.02, 0.0, "retention time grows as exp(Delta) (Neel-Brown): 2 % of "
                  "Delta = 60 is 1.2, already a factor 3.3 in retention time"), units=("1",), name=r"^delta$"),
    BandRule(Band("retention / dwell time", 1.0, 0.0, "thermally activated times grow as exp(Delta): compared "
                  "on a log scale, a factor 2 (Delta changed by ln 2 = 0.69) is the smallest step that matters "
                  f"for a retention budget ({_CNP})", log=True), units=("s",), name=r"retention|dwell"),
    BandRule(Band("resistance", 0.01, 0.0, "read circuits are sized on R_P and R_AP directly; 1 % is below "
                  f"the device-to-device spread of RA ({_CNP})"), units=("ohm",)),
    BandRule(Band("time", 0.05, 0.0, "write-pulse margins are set in tens of percent; a 5 % shift in a "
                  f"switching time is the smallest a designer would act on ({_CNP})"), units=("s",)),
    BandRule(Band("current / threshold", 0.05, 0.0, "write drivers are sized with tens of percent margin "
                  f"over the critical current; 5 % flags a shift that eats into it ({_CNP})"),
             units=("A", "A/m^2")),
    BandRule(Band("velocity", 0.05, 0.0, "a wall-velocity change of 5 % moves a timed shift by 5 %, the "
                  f"same margin as a switching time ({_CNP})"), units=("m/s",)),
    BandRule(Band("position / length", 0.02, 1e-9, "wall positions, displacements and widths: 2 % plus 1 nm, a "
                  f"fraction of a wall width, so a wall held by pinning near 0 is not judged on noise ({_CNP})"),
             units=("m",)),
    BandRule(Band("angle", 0.01, 0.01, "a wall or magnetisation angle: 1 % plus 0.01 rad, small against the "
                  f"angles that change a torque noticeably ({_CNP})"), units=("rad",)),
    BandRule(Band("field / frequency", 0.02, 0.0, "anisotropy field and resonance frequency set stability "
                  f"and precession speed; 2 % ({_CNP})"), units=("A/m", "T", "Hz")),
    BandRule(Band("magnetisation value", 0.0, 0.02, "a final or extreme value of a unit-vector component; "
                  "0.02 absolute, as in the benches' own final-state checks"), units=("1",),
             name=r"(^|\W)m_?[xyz]\b"),
    BandRule(Band("simulator agreement", 0.0, 1e-3, "a deviation between simulator and reference; any "
                  "value below the bench tolerance 1e-3 is equally good"), name=r"I_ref|deviation"),
    BandRule(Band("process sigma", 0.25, 0.002, "a global or mismatch sigma from a wafer population of a few "
                  "tens of dies is known to about +-20 % (its bootstrap interval); a move beyond 25 % (plus 0.002 for "
                  f"sigmas near zero) is a change of the process, not of the sample ({_CNP})"), units=("1",),
             name=r"^sigma_(global|mismatch)_"),
    BandRule(Band("correlation", 0.0, 0.2, "a correlation of global draws estimated from a few tens of dies "
                  f"carries about +-0.2 ({_CNP})"), units=("1",), name=r"^correlation "),
    BandRule(Band("other", 0.01, 0.0, f"any other figure: 1 % ({_CNP})")),
)

#: curve tolerance bands by the unit of the column, first match wins
CURVE_BANDS: tuple[BandRule, ...] = (
    BandRule(Band("state", 0.0, 0.02, "unit-vector components and other normalised states: 0.02 absolute, "
                  "as in the benches' final-state checks"), units=("1",)),
    BandRule(Band("voltage", 1e-3, 1e-6, "terminal voltages are the stimulus: any change means the bench "
                  "drives the device differently"), units=("V",)),
    BandRule(Band("current", 0.01, 0.0, "terminal currents: 1 % of the value plus 1 % of the peak, so "
                  f"zero crossings do not dominate ({_CNP})", peak=0.01), units=("A",)),
    BandRule(Band("other", 0.01, 0.0, "other quantities: 1 % plus 1 % of the peak", peak=0.01)),
)


def band_for(name: str, unit: str, rules=FIGURE_BANDS) -> Band:
    for rule in rules:
        if rule.matches(name, unit):
            return rule.band
    raise LookupError(f"no tolerance band matches {name!r} [{unit}]")


def _error(old, new, band: Band) -> float:
    """|new - old| / (atol + rtol |old|); 0 when both are missing, inf when one is."""
    o = math.nan if old is None else old
    n = math.nan if new is None else new
    if math.isnan(o) or math.isnan(n):
        return 0.0 if (math.isnan(o) and math.isnan(n)) else math.inf
    if bignum.is_overflow(o) or bignum.is_overflow(n):  # beyond the double range: judged by log10
        lo, ln = bignum.log10_of(o), bignum.log10_of(n)
        if lo == ln:
            return 0.0
        if band.log and not (math.isnan(lo) or math.isnan(ln)):
            return abs(ln - lo) * bignum.LN10 / math.log(1 + band.rtol)
        return math.inf
    o, n = float(o), float(n)
    if o == n:
        return 0.0
    d = abs(n - o)
    if band.log:
        return abs(math.log(n / o)) / math.log(1 + band.rtol) if n > 0 and o > 0 else math.inf
    scale = band.atol + band.rtol * abs(o)
    return d / scale if scale > 0 else math.inf


# ---- rows ------------------------------------------------------------------------------------
def rel_change(old: float | None, new: float | None) -> float | None:
    """(new - old) / |old|, or None when either is missing or not finite, or old is 0."""
    if old is None or new is None or old == 0 or not (math.isfinite(old) and math.isfinite(new)):
        return None
    return (new - old) / abs(old)


@dataclass
class ParamRow:
    name: str
    unit: str
    old: float | None
    new: float | None
    old_text: str
    new_text: str
    origin: str  # re-fit | hand edit | computed | kind default | added | removed
    sigma: float | None = None  # change in standard errors of the new fit

    @property
    def rel(self) -> float | None:
        return rel_change(self.old, self.new)


@dataclass
class InterfaceChange:
    item: str
    old: str
    new: str
    breaking: bool
    note: str = ""


#: the verdict for a figure or a curve set that did not change at all (zero difference)
IDENTICAL = "identical"


@dataclass
class FigureRow:
    group: str  # "key figure" or the bench name
    name: str
    unit: str
    old: float | None
    new: float | None
    band: Band
    error: float  # largest |new - old| / band over the sources compared
    status: str  # identical | within band | OUTSIDE BAND | new | REMOVED
    source: str = ""  # the source with the largest error
    desc: str = ""
    note: str = ""

    @property
    def ok(self) -> bool:
        return self.status in (IDENTICAL, "within band", "new")

    @property
    def rel(self) -> float | None:
        return rel_change(self.old, self.new)


@dataclass
class CurveRow:
    bench: str
    status: str  # identical | within band | OUTSIDE BAND | stimulus changed | new | REMOVED | not comparable
    column: str = ""  # the worst column
    unit: str = ""
    max_diff: float = 0.0
    error: float = 0.0
    band: Band | None = None
    note: str = ""
    old: CurveTable | None = field(default=None, repr=False)
    new: CurveTable | None = field(default=None, repr=False)

    @property
    def ok(self) -> bool:
        return self.status in (IDENTICAL, "within band", "stimulus changed", "new")


@dataclass
class Comparison:
    old: str  # labels "name version"
    new: str
    old_version: str
    new_version: str
    kind: str
    params: list[ParamRow]
    n_params: int
    interface: list[InterfaceChange]
    figures: list[FigureRow]
    metrics: list[FigureRow]
    curves: list[CurveRow]
    stimulus_changes: dict[str, str]
    accepted: str | None = None
    sources: list[str] = field(default_factory=lambda: ["reference"])  # reference and simulators compared

    @property
    def breaks(self) -> list[InterfaceChange]:
        return [c for c in self.interface if c.breaking]

    @property
    def outside(self) -> list[FigureRow]:
        return [r for r in self.figures + self.metrics if not r.ok]

    @property
    def curves_outside(self) -> list[CurveRow]:
        return [c for c in self.curves if not c.ok]

    @property
    def clean(self) -> bool:
        """Nothing outside tolerance and no interface break."""
        return not (self.breaks or self.outside or self.curves_outside)

    @property
    def passed(self) -> bool:
        return self.clean or bool(self.accepted)

    def verdict(self) -> str:
        if self.clean:
            return "PASS: no change outside tolerance, interface unchanged"
        parts = []
        if self.breaks:
            parts.append(f"{len(self.breaks)} interface break(s)")
        if self.outside:
            parts.append(f"{len(self.outside)} figure(s) outside tolerance")
        if self.curves_outside:
            parts.append(f"{len(self.curves_outside)} bench curve set(s) outside tolerance")
        head = "CHANGED: " + ", ".join(parts)
        if self.accepted:
            return f"{head}; ACCEPTED: {self.accepted}"
        return f"{head}; not accepted"

    def record(self) -> dict:
        """What the new release's manifest keeps of the comparison."""
        return {
            "against": self.old,
            "against_version": self.old_version,
            "verdict": self.verdict(),
            "clean": self.clean,
            "accepted": self.accepted,
            "interface_breaks": [f"{c.item}: {c.old} -> {c.new}" for c in self.breaks],
            "outside_tolerance": [f"{r.group}: {r.name}" for r in self.outside],
            "curves_outside_tolerance": [c.bench for c in self.curves_outside],
            "curves_not_judged_stimulus_changed": [c.bench for c in self.curves if c.status == "stimulus changed"],
            "parameters_changed": {p.name: p.origin for p in self.params},
        }


# ---- the comparison --------------------------------------------------------------------------
FIT_KEYS = ("fitted", "free", "fitted_parameters", "free_parameters")


def fitted_names(manifest: dict) -> set[str]:
    """Parameters a fit produced: listed under a fit key of [provenance] (at any depth), or
    carrying a standard error (written by `compactgen fit`)."""
    found: set[str] = set()

    def walk(d):
        for k, v in d.items():
            if k in FIT_KEYS:
                if isinstance(v, str):
                    found.update(x.strip() for x in v.split(","))
                elif isinstance(v, dict):
                    found.update(v)
                elif isinstance(v, list):
                    found.update(x for x in v if isinstance(x, str))
            if isinstance(v, dict):
                walk(v)

    walk(manifest.get("provenance") or {})
    found.update(n for n, p in manifest.get("parameters", {}).items() if "stderr" in p)
    return found


def compare_parameters(old: dict, new: dict) -> tuple[list[ParamRow], int]:
    po, pn = old["parameters"], new["parameters"]
    fitted = fitted_names(new)
    rows = []
    for name in list(po) + [n for n in pn if n not in po]:
        a, b = po.get(name), pn.get(name)
        if a and b and a["value"] == b["value"] and a["unit"] == b["unit"]:
            continue
        if a is None:
            origin = "added"
        elif b is None:
            origin = "removed"
        elif name in fitted:
            origin = "re-fit"
        elif b.get("origin") == "computed":
            origin = "computed"
        elif b.get("origin") == "card" or a.get("origin") == "card":
            origin = "hand edit"
        else:
            origin = "kind default"
        sigma = None
        if a and b and b.get("stderr") and a["value"] is not None and b["value"] is not None:
            sigma = (b["value"] - a["value"]) / b["stderr"]
        rows.append(ParamRow(name, (b or a)["unit"], a and a["value"], b and b["value"],
                             a["text"] if a else "—", b["text"] if b else "—", origin, sigma))
    return rows, len(set(po) | set(pn))


def compare_interface(old: dict, new: dict) -> list[InterfaceChange]:
    """Interface records (bundle.interface_record) old -> new; breaking changes flagged."""
    out: list[InterfaceChange] = []
    if old["module"] != new["module"]:
        out.append(InterfaceChange("module / subcircuit name", old["module"], new["module"], True,
                                   "every netlist instantiating the model by name must change"))
    if old["kind"] != new["kind"]:
        out.append(InterfaceChange("device kind", old["kind"], new["kind"], True))
    if old["ports"] != new["ports"]:
        out.append(InterfaceChange("port order", " ".join(old["ports"]), " ".join(new["ports"]), True,
                                   "netlists connect by position: nodes would land on the wrong ports"))
    pa = {p["name"]: p for p in old["parameters"]}
    pb = {p["name"]: p for p in new["parameters"]}
    removed = [n for n in pa if n not in pb]
    added = [n for n in pb if n not in pa]
    from compactgen.model.card import renamed_to

    for n in removed:
        same_shape = [m for m in added if pb[m]["unit"] == pa[n]["unit"] and pb[m]["kind"] == pa[n]["kind"]]
        known = renamed_to(n)
        if known in same_shape:  # a rename compactgen made on purpose (cards still read the old name)
            guess = [known]
            note = (f"renamed to {known!r} by compactgen (cards may still use {n!r} in this release; "
                    "netlists must use the new name)")
        else:
            guess = difflib.get_close_matches(n, same_shape, n=1, cutoff=0.0) if same_shape else []
            note = f"renamed to {guess[0]!r}?" if guess else "netlists that set it fail to load"
        out.append(InterfaceChange(f"parameter {n}", f"{pa[n]['kind']} [{pa[n]['unit']}]",
                                   "removed" + (f" (new {guess[0]!r} [{pb[guess[0]]['unit']}])" if guess else ""),
                                   True, note))
    for n in added:
        out.append(InterfaceChange(f"parameter {n}", "—", f"added, {pb[n]['kind']} [{pb[n]['unit']}], "
                                   f"default {pb[n]['default']:.6g}", False, "existing netlists are unaffected"))
    for n in pa:
        if n not in pb:
            continue
        a, b = pa[n], pb[n]
        if a["unit"] != b["unit"]:
            out.append(InterfaceChange(f"unit of {n}", a["unit"], b["unit"], True,
                                       "a value set in a netlist would mean something else"))
        if a["kind"] != b["kind"]:
            out.append(InterfaceChange(f"{n}: model or instance", a["kind"], b["kind"], True,
                                       "where it may be set in a netlist changes"))
        elif a["kind"] == "instance" and a["default"] != b["default"]:
            out.append(InterfaceChange(f"default of instance parameter {n}", f"{a['default']:.6g}",
                                       f"{b['default']:.6g}", True,
                                       "instances that rely on the default start differently"))
    oa = {o["name"]: o for o in old.get("outputs", [])}
    ob = {o["name"]: o for o in new.get("outputs", [])}
    for n in oa:
        if n not in ob:
            out.append(InterfaceChange(f"output {n}", f"[{oa[n]['unit']}]", "removed", True,
                                       "probes and measurements of it fail"))
        elif oa[n]["unit"] != ob[n]["unit"]:
            out.append(InterfaceChange(f"unit of output {n}", oa[n]["unit"], ob[n]["unit"], True))
    for n in ob:
        if n not in oa:
            out.append(InterfaceChange(f"output {n}", "—", f"added [{ob[n]['unit']}]", False))
    ra, rb = old.get("range_output"), new.get("range_output")  # absent in bundles made before it was recorded
    if ra and not rb:
        out.append(InterfaceChange(f"range output {ra['name']}", f"[{ra['unit']}]", "removed", True,
                                   "probes, .meas and range-report of it fail"))
    elif ra and rb and (ra["name"], ra["unit"]) != (rb["name"], rb["unit"]):
        out.append(InterfaceChange("range output", f"{ra['name']} [{ra['unit']}]", f"{rb['name']} [{rb['unit']}]",
                                   True, "probes and .meas that name it must change"))
    elif rb and "range_output" in old and not ra:
        out.append(InterfaceChange(f"range output {rb['name']}", "—", f"added [{rb['unit']}]", False))
    sa, sb = old.get("lib_sections", []), new.get("lib_sections", [])
    for n in sa:
        if n not in sb:
            out.append(InterfaceChange(f".lib section {n}", "present", "removed", True,
                                       f"netlists that load the library with section {n} fail"))
    for n in sb:
        if n not in sa:
            out.append(InterfaceChange(f".lib section {n}", "—", "added", False, "existing netlists are unaffected"))
    if old["conventions"] != new["conventions"]:
        gone = [c for c in old["conventions"] if c not in new["conventions"]]
        came = [c for c in new["conventions"] if c not in old["conventions"]]
        out.append(InterfaceChange("conventions (sign, ports, states)", " / ".join(gone) or "(reordered)",
                                   " / ".join(came) or "(reordered)", True,
                                   "a changed sign or port convention silently inverts a circuit"))
    return out


def _stimulus_note(old: dict, new: dict) -> str:
    if old == new:
        return ""
    diffs = []
    for key in sorted(set(old) | set(new)):
        if old.get(key) == new.get(key):
            continue
        if key == "drives":
            for term in sorted(set(old[key]) | set(new[key])):
                a, b = old[key].get(term), new[key].get(term)
                if a != b:
                    diffs.append(f"drive {term}: {_drive_text(a)} -> {_drive_text(b)}")
        elif isinstance(old.get(key), float) and isinstance(new.get(key), float):
            diffs.append(f"{key}: {old[key]:.4g} -> {new[key]:.4g}")
        else:
            diffs.append(f"{key} changed")
    return "stimulus changed: " + "; ".join(diffs)


def _drive_text(d) -> str:
    if not d:
        return "none"
    if "dc" in d:
        return f"DC {d['dc']:.4g} V"
    if "pwl" in d:
        peak = max(d["pwl"], key=lambda p: abs(p[1]))
        return f"PWL {len(d['pwl'])} corners, peak {peak[1]:.4g} V at {peak[0] * 1e9:.3g} ns"
    p = d["pulse"]
    return f"pulse {p['v1']:.4g} V x {p['width'] * 1e9:.3g} ns"


def compare_figures(old: dict, new: dict) -> list[FigureRow]:
    fo, fn = old["figures"], new["figures"]
    rows = []
    for name in list(fo) + [n for n in fn if n not in fo]:
        a, b = fo.get(name), fn.get(name)
        unit = (b or a)["unit"]
        band = band_for(name, unit)
        desc = (b or a).get("desc", "")
        va = None if a is None else bignum.from_record(a)
        vb = None if b is None else bignum.from_record(b)
        if a is None:
            rows.append(FigureRow("key figure", name, unit, None, vb, band, 0.0, "new", desc=desc))
            continue
        if b is None:
            rows.append(FigureRow("key figure", name, unit, va, None, band, math.inf, "REMOVED", desc=desc))
            continue
        err = _error(va, vb, band)
        rows.append(FigureRow("key figure", name, unit, va, vb, band, err, _status(err), "model", desc))
    return rows


def compare_variation(old: dict, new: dict) -> list[FigureRow]:
    """Process sigmas and global correlations of two releases, when either records a [variation]
    (bundle.variation_record): each sigma against the 'process sigma' band, each correlation against
    'correlation'; a note says when the new sigma also left the old release's interval."""
    vo, vn = old.get("variation"), new.get("variation")
    if not vo and not vn:
        return []
    po, pn = old["parameters"], new["parameters"]
    rows = []
    names = [n for n in list(po) + [n for n in pn if n not in po] if n.startswith(("sigma_global_", "sigma_mismatch_"))]
    for name in names:
        a, b = po.get(name), pn.get(name)
        band = band_for(name, "1")
        va, vb = (a or {}).get("value"), (b or {}).get("value")
        if a is None or b is None:
            rows.append(FigureRow("process variation", name, "1", va, vb, band, 0.0 if a is None else math.inf,
                                  "new" if a is None else "REMOVED"))
            continue
        err = _error(va, vb, band)
        lo_hi = (vo or {}).get("intervals", {}).get(name)
        note = ""
        if lo_hi and not lo_hi[0] <= vb <= lo_hi[1]:
            note = f"outside the old release's 95 % interval [{lo_hi[0]:.4g}, {lo_hi[1]:.4g}]"
        origin = f"{(vo or {}).get('origin', 'no [variation]')} -> {(vn or {}).get('origin', 'no [variation]')}"
        rows.append(FigureRow("process variation", name, "1", va, vb, band, err, _status(err), "card",
                              f"process sigma (origin {origin})", note))

    def corr(v):
        out = {}
        if v:
            c = v.get("correlated", [])
            for i, x in enumerate(c):
                for j in range(i + 1, len(c)):
                    out[f"correlation {x}-{c[j]}"] = v["correlation"][i][j]
        return out

    co, cn = corr(vo), corr(vn)
    for name in list(co) + [n for n in cn if n not in co]:
        a, b = co.get(name, 0.0), cn.get(name, 0.0)  # a pair not listed is drawn independently: 0
        band = band_for(name, "1")
        err = _error(a, b, band)
        rows.append(FigureRow("process variation", name, "1", a, b, band, err, _status(err), "card",
                              "correlation of the global draws"))
    return rows


def _status(err: float) -> str:
    return IDENTICAL if err == 0 else ("within band" if err <= 1.0 else "OUTSIDE BAND")


def compared_sources(old: dict, new: dict, simulators=None) -> list[str]:
    """The reference, then the simulators both manifests hold (only those in ``simulators``
    unless it is None)."""
    common = [s for s in old.get("simulators", []) if s in new.get("simulators", [])]
    return ["reference"] + [s for s in common if simulators is None or s in simulators]


def compare_metrics(old: dict, new: dict, stimulus: dict[str, str], simulators=None) -> list[FigureRow]:
    bo, bn = old["benches"], new["benches"]
    sources = compared_sources(old, new, simulators)
    rows = []
    for bench in list(bo) + [b for b in bn if b not in bo]:
        mo = bo.get(bench, {}).get("metrics", {})
        mn = bn.get(bench, {}).get("metrics", {})
        for metric in list(mo) + [m for m in mn if m not in mo]:
            a, b = mo.get(metric), mn.get(metric)
            unit = (b or a)["unit"]
            band = band_for(metric, unit)
            note = stimulus.get(bench, "")
            if a is None:
                rows.append(FigureRow(bench, metric, unit, None, b["reference"], band, 0.0, "new", note=note))
                continue
            if b is None:
                rows.append(FigureRow(bench, metric, unit, a["reference"], None, band, math.inf, "REMOVED",
                                      note=note))
                continue
            errs = {s: _error(a.get(s), b.get(s), band) for s in sources}
            top = max(errs.values())
            worst = next(s for s in sources if errs[s] >= top * (1 - 1e-6))  # ties: the first source
            rows.append(FigureRow(bench, metric, unit, a["reference"], b["reference"], band, errs[worst],
                                  _status(errs[worst]), worst if errs[worst] > 0 else "", note=note))
    return rows


def compare_curve_tables(bench: str, old: CurveTable, new: CurveTable, stimulus_note: str = "",
                         observed: set[str] | None = None, sources: list[str] | None = None) -> CurveRow:
    """The columns of ``old`` against ``new`` interpolated onto the old grid over the common range.

    Compared: every terminal current; the states in ``observed`` (those the bench plots; all when
    None); the stimulus voltages unless the stimulus changed (``stimulus_note`` says how), since
    they would only restate it.  States a bench does not observe, such as the in-plane components
    of a precessing macrospin whose phase any small change shifts, are not compared.  When the
    stimulus changed (a bench whose pulse follows the model's own critical current), the two
    curves answer different questions: the difference is shown but not judged, and the bench's
    figures, defined in the bench's own terms, carry the verdict."""
    if old.grid != new.grid or old.grid_unit != new.grid_unit:
        return CurveRow(bench, "not comparable", note=f"grid {old.grid} [{old.grid_unit}] -> "
                        f"{new.grid} [{new.grid_unit}]", old=old, new=new)
    lo, hi = max(old.x.min(), new.x.min()), min(old.x.max(), new.x.max())
    span = max(abs(hi), abs(lo), 1e-300) * 1e-12
    mask = (old.x >= lo - span) & (old.x <= hi + span)
    grid = old.x[mask]
    notes = [stimulus_note] if stimulus_note else []
    if len(grid) < 2:
        return CurveRow(bench, "not comparable", note="; ".join(notes + ["no common range"]), old=old, new=new)
    if not (np.array_equal(old.x, new.x)):
        u = old.grid_unit
        notes.append(f"compared on {len(grid)} points over [{lo:.4g}, {hi:.4g}] {u} (old to {old.x.max():.4g}, "
                     f"new to {new.x.max():.4g} {u})")
    worst = CurveRow(bench, IDENTICAL, old=old, new=new)
    missing = [c for c in old.columns if c not in new.columns]
    for col, (unit, yo_all) in old.columns.items():
        if col in missing or not _judged(col, stimulus_note, observed):
            continue
        if sources is not None and ":" in col and col.split(":", 1)[0] not in sources:
            continue
        yo = yo_all[mask]
        yn = np.interp(grid, new.x, new.values(col))
        band = band_for(col, unit, CURVE_BANDS)
        diff = np.abs(yn - yo)
        scale = band.atol + band.peak * float(np.max(np.abs(yo))) + band.rtol * np.abs(yo)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(diff == 0, 0.0, np.where(scale > 0, diff / np.where(scale > 0, scale, 1.0), np.inf))
        err = float(np.max(ratio)) if ratio.size else 0.0
        if np.isnan(err):
            err = math.inf
        if worst.band is None or err > worst.error * (1 + 1e-6):  # ties: the first column
            worst.column, worst.unit, worst.band, worst.error = col, unit, band, err
            worst.max_diff = float(np.max(diff))
    if missing:
        notes.append(f"columns missing in the new release: {', '.join(missing)}")
        worst.status = "OUTSIDE BAND"
    elif stimulus_note and worst.error > 0:
        worst.status = "stimulus changed"  # shown, not judged: the bench figures carry the verdict
    else:
        worst.status = IDENTICAL if worst.error == 0 else ("within band" if worst.error <= 1 else "OUTSIDE BAND")
    worst.note = "; ".join(notes)
    return worst


def _judged(col: str, stimulus_note: str, observed: set[str] | None) -> bool:
    quantity = col.split(":", 1)[-1]
    if ":" not in col:  # a stimulus voltage
        return not stimulus_note
    return quantity.startswith("current_") or observed is None or quantity in observed


def observed_states(plot: list[str]) -> set[str]:
    """States a bench plots ("state:mz" -> mz)."""
    return {p.split(":", 1)[1] for p in plot if p.startswith("state:")}


def compare_bundles(old: Bundle, new: Bundle, accepted: str | None = None, simulators=None) -> Comparison:
    """The comparison of two bundles.  ``simulators`` limits the sources compared besides the
    reference (None: every simulator both bundles hold; (): the reference solutions only, which
    are deterministic, unlike the last digits of simulator results)."""
    mo, mn = old.manifest, new.manifest
    for m, b in ((mo, old), (mn, new)):
        for key in ("parameters", "interface", "figures", "benches"):
            if key not in m:
                raise ReleaseError(f"{b.where}: manifest has no {key!r}; not a release bundle")
    stimulus = {}
    for bench in mo["benches"]:
        if bench in mn["benches"]:
            note = _stimulus_note(mo["benches"][bench]["stimulus"], mn["benches"][bench]["stimulus"])
            if note:
                stimulus[bench] = note
    params, n_params = compare_parameters(mo, mn)
    sources = compared_sources(mo, mn, simulators)
    curves = []
    for bench in list(mo["benches"]) + [b for b in mn["benches"] if b not in mo["benches"]]:
        if bench not in mn["benches"]:
            curves.append(CurveRow(bench, "REMOVED", note="bench no longer in the release"))
        elif bench not in mo["benches"]:
            curves.append(CurveRow(bench, "new", note="bench added"))
        else:
            curves.append(compare_curve_tables(bench, old.curves(bench), new.curves(bench), stimulus.get(bench, ""),
                                               observed_states(mn["benches"][bench].get("plot", [])), sources))
    return Comparison(
        old=old.label, new=new.label, old_version=mo["version"], new_version=mn["version"], kind=mn["kind"],
        params=params, n_params=n_params, interface=compare_interface(mo["interface"], mn["interface"]),
        figures=compare_figures(mo, mn) + compare_variation(mo, mn), metrics=compare_metrics(mo, mn, stimulus, simulators), curves=curves,
        stimulus_changes=stimulus, accepted=accepted or None, sources=sources)
