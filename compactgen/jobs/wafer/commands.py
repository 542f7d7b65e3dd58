"""`compactgen wafer-stats CARD FOLDER -o OUT`: every device of a wafer fitted, the population's
spread and mismatch in a card, proved by Monte Carlo in ngspice; and the demo's wafer step."""
from __future__ import annotations

import csv
import io
import json
import math
import sys
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from compactgen.errors import InputError

EXAMPLES = Path(__file__).resolve().parents[3] / "examples"
DEMO_WAFER = EXAMPLES / "data" / "wafer"
DEMO_CARD = EXAMPLES / "pmtj35_demo.toml"
CARD_FILE = "{name}.toml"
REPORT_FILE = "wafer_report.html"
DEVICES_FILE = "device_fits.csv"
#: instances a Monte Carlo proof aims at (simulated dies x one device per size), at least twice the dies measured
MC_TARGET = 400


def add_commands(sub) -> None:
    p = sub.add_parser("wafer-stats", help="fit every device of a wafer; process spread, area-scaled mismatch and "
                                           "correlations into a card; Monte Carlo proof in ngspice",
                       description="Fit every device in FOLDER (a device table devices.csv and measurement files "
                                   "tagged with device ids, see examples/data/README.md) to CARD, extract the "
                                   "population's global spread, mismatch (scaling with 1/sqrt(area)) and "
                                   "correlations, and write OUT/NAME.toml, OUT/wafer_report.html and "
                                   "OUT/device_fits.csv.")
    p.add_argument("card", help="the card every device is fitted from (never overwritten)")
    p.add_argument("folder", help="wafer folder: devices.csv and measurement CSV files")
    p.add_argument("-o", "--output", required=True, help="output folder")
    p.add_argument("--devices", help="device table (default: FOLDER/devices.csv)")
    p.add_argument("--name", help="model name of the card written (default: CARDNAME_wafer)")
    p.add_argument("--scheduler", help="Dask scheduler address (default: local processes; also "
                                       "COMPACTGEN_SCHEDULER)")
    p.add_argument("--workers", type=int, help="local worker processes (default: one per core)")
    p.add_argument("--bootstrap", type=int, default=300, help="bootstrap resamples of the dies (default 300)")
    p.add_argument("--seed", type=int, default=1, help="seed of the bootstrap and the Monte Carlo (default 1)")
    p.add_argument("--mc-dies", type=int, help="simulated dies of the Monte Carlo proof (default: enough for "
                                               f"~{MC_TARGET} instances, at least twice the measured dies)")
    p.add_argument("--no-mc", action="store_true", help="skip the Monte Carlo proof (no ngspice needed)")
    p.add_argument("--truth", help="for synthetic wafers: the generator's truth.json, compared in the report")
    p.add_argument("--force", action="store_true", help="replace existing output files")
    p.set_defaults(func=cmd_wafer_stats)


@dataclass
class WaferRun:
    card_path: Path
    report_path: Path
    csv_path: Path
    population: object
    fits: list
    proof: object
    excluded: dict  # device id -> reason (no data, fit failed)
    seconds: dict


def run_wafer_stats(card_path, folder, output, devices=None, name=None, scheduler=None, workers=None,
                    bootstrap=300, seed=1, mc_dies=None, mc=True, truth=None, force=False, say=None) -> WaferRun:
    from compactgen.jobs.build import write_files
    from compactgen.jobs.wafer import fits as wfits
    from compactgen.jobs.wafer.card_out import population_card_text
    from compactgen.jobs.wafer.kinds import wafer_kind
    from compactgen.jobs.wafer.population import analyse, diameter_offset
    from compactgen.jobs.wafer.table import die_index, load_wafer
    from compactgen.model.card import load_card, parse_card
    from compactgen.model.variation import varied_names

    say = say or (lambda m: print(m, file=sys.stderr, flush=True))
    t = {"start": time.perf_counter()}
    card = load_card(card_path)
    spec = wafer_kind(card, str(card_path))
    out = Path(output)
    name = name or f"{card.name}_wafer"
    targets = [out / CARD_FILE.format(name=name), out / REPORT_FILE, out / DEVICES_FILE]
    for p in targets:
        if p.exists() and p.resolve() == Path(card_path).resolve():
            raise InputError(f"{p}: this is the input card; wafer-stats never overwrites its input (choose another -o)")
        if p.exists() and not force:
            raise InputError(f"{p}: exists already; choose another -o or pass --force")
    wafer = load_wafer(folder, devices, accepts=spec.accepts, check=spec.missing_data)
    tab = wafer.table
    say(f"read {tab.path}: {len(tab.devices)} devices on {len(tab.dies())} dies; {len(wafer.files)} measurement "
        f"files")
    for d, why in wafer.problems.items():
        say(f"device {d}: left out: {why}")
    by_id = tab.by_id()
    raw: dict = {}
    if spec.offset:  # electrical diameter offset from the raw parallel resistances, before the fits
        raw = {d: wfits.rp_estimate(v) for d, v in wafer.datasets.items() if v and d not in wafer.problems}
        ok_raw = [d for d, r in raw.items() if math.isfinite(r) and r > 0]
        drawn = np.array([by_id[d].drawn_diameter for d in ok_raw])
        offset = diameter_offset(drawn, np.array([raw[d] for d in ok_raw])) if ok_raw else math.nan
        if not math.isfinite(offset):
            offset = 0.0
            say("one drawn size only: no electrical diameter offset (drawn = electrical)")
        else:
            offset = float(f"{offset * 1e9:.3g}") * 1e-9  # three digits: the card's diameter reads as written
            say(f"electrical diameter offset (drawn - electrical, from R_P across sizes): {offset * 1e9:.3g} nm")
        smallest = min(by_id[d].drawn_diameter for d in ok_raw) if ok_raw else 0.0
        if offset >= smallest:
            raise InputError(f"{folder}: the diameter offset {offset * 1e9:.3g} nm from R_P across sizes is not below "
                             f"the smallest drawn diameter {smallest * 1e9:.3g} nm: R_P does not scale with the drawn "
                             "area")
        for d, dss in wafer.datasets.items():
            d_el = by_id[d].drawn_diameter - offset
            for ds in dss:
                ds.meta["diameter"] = f"{d_el * 1e9:.9g} nm"
                ds.meta.pop("area", None)
    else:  # dw-mtj: the table's area is the MTJ area on the track; the velocities do not see it
        offset = 0.0
    todo = {d: v for d, v in wafer.datasets.items() if v and d not in wafer.problems}
    say(f"fitting {len(todo)} devices ({spec.data_words} data: {', '.join(spec.fitted)} per device)")
    t["fits0"] = time.perf_counter()
    results = wfits.fit_devices(card, todo, scheduler=scheduler, workers=workers, progress=say)
    t["fits"] = time.perf_counter() - t["fits0"]
    excluded = dict(wafer.problems)
    for r in results:
        if not r.ok:
            excluded[r.id] = r.reason
            say(f"device {r.id}: left out: {r.reason}")
    varied = [n for n in varied_names(card.values) if n in spec.fitted]
    names = varied + [n for n in spec.reported if n not in varied]
    for r in results:  # the statistics work on ln p: a fitted value <= 0 is a failed device, named
        bad = [f"{n} = {r.values[n]:.4g}" for n in names if r.ok and n in r.values and not r.values[n] > 0]
        if bad:
            r.ok, r.reason = False, f"fit gave {', '.join(bad)}, not positive (the statistics work on ln p)"
            excluded[r.id] = r.reason
            say(f"device {r.id}: left out: {r.reason}")
    good = [r for r in results if r.ok]
    say(f"fitted {len(good)} of {len(todo)} devices in {t['fits']:.1f} s ({len(todo) / max(t['fits'], 1e-9):.1f} "
        "devices/s)")
    if len(good) < 6:
        raise InputError(f"{folder}: only {len(good)} devices could be fitted; the statistics need more")
    dmap, pos = die_index(tab)
    r2 = (pos ** 2).sum(axis=1)
    rmax2 = float(r2.max()) or 1.0
    names = [n for n in names if all(n in r.values for r in good)]
    varied = [n for n in varied if n in names]
    sizes = sorted({by_id[r.id].drawn_diameter for r in good})
    if spec.offset:
        ref = min(sizes, key=lambda s: abs(s - offset - card.values["diameter"]))
    else:
        ref = min(sizes, key=lambda s: abs(math.pi / 4 * s**2 - spec.card_area(card.values)))
    area_ref = math.pi / 4 * (ref - offset) ** 2
    devs = [dict(id=r.id, die=dmap[r.id], drawn=by_id[r.id].drawn_diameter,
                 area=math.pi / 4 * (by_id[r.id].drawn_diameter - offset) ** 2, values=r.values, stderr=r.stderr,
                 rho2=float(r2[dmap[r.id]] / rmax2), r_p=raw.get(r.id, math.nan)) for r in good]
    say(f"population: {len(devs)} devices, {len(sizes)} sizes; bootstrap over dies ({bootstrap} resamples)")
    t["pop0"] = time.perf_counter()
    pop = analyse(devs, names, area_ref, bootstrap=bootstrap, seed=seed, offset=offset, progress=say)
    t["population"] = time.perf_counter() - t["pop0"]
    for d, why in pop.outliers.items():
        say(f"device {d}: outlier, left out of the statistics: {why}")
    tnom = next((float(ds.meta_si("temperature")) for v in todo.values() for ds in v if "temperature" in ds.meta),
                None)
    summary = {"wafer_folder": str(folder), "device_table": str(tab.path), "devices_in_table": len(tab.devices),
               "excluded": {k: v for k, v in sorted(excluded.items())}}
    text, values = population_card_text(card, pop, name, tnom, summary)
    new_card = parse_card(text, str(targets[0]))
    proof = None
    if mc and spec.mc_note:
        say(f"Monte Carlo proof skipped: {spec.mc_note}")
    elif mc:
        layout = list(sizes)  # one instance of each size per simulated die
        k = mc_dies or max(2 * pop.n_dies, math.ceil(MC_TARGET / len(layout)))
        meas = {"r_p": [], "r_ap": [], "tmr": []}
        for r in good:
            if r.id in pop.outliers:
                continue
            d, die = by_id[r.id].drawn_diameter, dmap[r.id]
            meas["r_p"].append((d, die, r.figures["r_p"]))
            meas["r_ap"].append((d, die, r.figures["r_ap"]))
            meas["tmr"].append((d, die, r.figures["r_ap"] / r.figures["r_p"] - 1.0))
        from compactgen.jobs.wafer.montecarlo import run_proof

        say(f"Monte Carlo proof: {k} simulated dies x {len(layout)} instances x 2 states in ngspice (section mc)")
        t["mc0"] = time.perf_counter()
        proof = run_proof(new_card, meas, layout, offset, k, seed=seed, scheduler=scheduler, workers=workers,
                          progress=say, bootstrap=bootstrap)
        t["mc"] = time.perf_counter() - t["mc0"]
        for row in proof.rows:
            say(f"  {row.quantity:5s} {row.drawn * 1e9:5.0f} nm: sd(ln) measured {row.sd_measured:.4f} "
                f"[{row.sd_ci[0]:.4f}, {row.sd_ci[1]:.4f}], simulated {row.sd_simulated:.4f} "
                f"[{row.sd_sim_ci[0]:.4f}, {row.sd_sim_ci[1]:.4f}] ({'inside' if row.sd_inside else 'outside'} the "
                f"measured interval; {'agree' if row.sd_agrees else 'DISAGREE'}); KS p = {row.ks_p:.3g}"
                f"{'' if row.ks_ok else ' REJECTED'}")
    truth_doc = json.loads(Path(truth).read_text()) if truth else None
    from compactgen.jobs.wafer.report import wafer_html

    t["total"] = time.perf_counter() - t["start"]
    html = wafer_html(card, new_card, pop, results, excluded, tab, proof, truth_doc, t, offset, dmap, pos)
    files = {targets[0].name: text, REPORT_FILE: html,
             DEVICES_FILE: devices_csv(tab, results, excluded, pop, offset, spec)}
    write_files(files, out)  # all three or none (the card was checked by parse_card above)
    say(f"wrote {targets[0]}, {targets[1]}, {targets[2]}")
    return WaferRun(targets[0], targets[1], targets[2], pop, results, proof, excluded, t)


def devices_csv(tab, results, excluded: dict, pop, offset: float, spec=None) -> str:
    """One row per device of the table: position, sizes, fitted values with standard errors, fit
    quality, and whether (and why not) it is in the statistics."""
    from compactgen.jobs.wafer.kinds import KINDS

    spec = spec or KINDS["stt-mtj"]
    by = {r.id: r for r in results}
    units, fig_units = spec.fitted, spec.figures
    names, figures = list(units), list(fig_units)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if spec.offset:
        buf.write(f"# per-device fits of compactgen wafer-stats; electrical diameter = drawn - {offset * 1e9:.4g} nm\n")
        sizes = ["drawn_diameter [nm]", "diameter [nm]"]
    else:
        buf.write("# per-device fits of compactgen wafer-stats; area = the device table's MTJ area on the track "
                  "(track_width x mtj_length)\n")
        sizes = ["area [nm^2]"]
    head = ["device", f"die_x [{tab.position_unit or '1'}]", f"die_y [{tab.position_unit or '1'}]",
            *sizes, "status", "reason"]
    for n in names:
        u = units[n][0]
        head += [f"{n} [{u}]", f"{n}_se [{u}]"]
    head += [f"{n} [{fig_units[n][0]}]" for n in figures]
    head += ["fit_p_min", "worst_block", *(["rv_rms [1]"] if spec.offset else []), "model_evaluations",
             "fit_seconds [s]"]
    w.writerow(head)
    for d in tab.devices:
        r = by.get(d.id)
        status = ("outlier" if d.id in pop.outliers else "used" if d.id in pop.used else "excluded")
        reason = pop.outliers.get(d.id) or excluded.get(d.id, "")
        size = ([f"{d.drawn_diameter * 1e9:.6g}", f"{(d.drawn_diameter - offset) * 1e9:.6g}"] if spec.offset
                else [f"{d.drawn_area * 1e18:.6g}"])
        row = [d.id, f"{d.die[0]:g}", f"{d.die[1]:g}", *size, status, reason]
        for n in names:
            s = units[n][1]
            v = r.values.get(n, math.nan) if r else math.nan
            e = r.stderr.get(n, math.nan) if r else math.nan
            row += [f"{v * s:.8g}" if math.isfinite(v) else "", f"{e * s:.4g}" if math.isfinite(e) else ""]
        for n in figures:
            v = r.figures.get(n, math.nan) if r else math.nan
            row.append(f"{v * fig_units[n][1]:.8g}" if math.isfinite(v) else "")
        row += [f"{r.p_min:.4g}" if r and math.isfinite(r.p_min) else "", r.worst_block if r else ""]
        if spec.offset:
            row.append(f"{r.rv_rms:.4g}" if r and math.isfinite(r.rv_rms) else "")
        row += [str(r.nfev) if r else "", f"{r.seconds:.3f}" if r else ""]
        w.writerow(row)
    return buf.getvalue()


def cmd_wafer_stats(args) -> int:
    run = run_wafer_stats(args.card, args.folder, args.output, args.devices, args.name, args.scheduler,
                          args.workers, args.bootstrap, args.seed, args.mc_dies, not args.no_mc, args.truth,
                          args.force)
    if run.proof is not None and not run.proof.passed:
        print("Monte Carlo proof: the simulated population does not match the measured one (see the report)",
              file=sys.stderr)
        return 1
    return 0


def demo_wafer(out_dir, say=None) -> WaferRun:
    """The demo's wafer step: examples/data/wafer (SYNTHETIC, examples/data/wafer/make_wafer.py) against
    examples/pmtj35_demo.toml, into OUT (card, report, per-device CSV)."""
    return run_wafer_stats(DEMO_CARD, DEMO_WAFER, out_dir, bootstrap=200, mc_dies=60,
                           truth=DEMO_WAFER / "truth.json", force=True, say=say)
