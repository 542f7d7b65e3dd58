"""A SYNTHETIC wafer of our own, seeded, with its truth stored beside it (demo, tests, benchmark).

Nothing here is measured.  Each device's parameters follow the tool's own variation law
(model/variation.py), with a die-level (global) part that is correlated between parameters and
carries a radial trend, and a per-device mismatch part scaling with 1/sqrt(area):

    ln p = ln p_mean + sigma_global_p (L z_die)_p + trend_p (r^2/R^2 - <r^2/R^2>)
           + sigma_mismatch_p sqrt(area_ref/area) z_device,p

(L the Cholesky factor of the global correlation, z standard normal, <.> the mean over the
wafer's dies, so the trend averages to zero).  The electrical diameter is the drawn one minus a
fixed offset.  Then every device is 'measured' as `compactgen fit` reads it (calibrate.synthetic
draws the same kind of noise): an R-V sweep in both states with Gaussian noise and one R-H loop
whose switching fields are drawn from the survival probability of the swept field
(physics.coercivity.ramp_survival_probability).  A few devices are bad on purpose (shorted,
stuck, degraded TMR, high RA, no data); the truth lists them.

Files (all in one folder): devices.csv (the device table), rv_bias.csv and rh_loops.csv (every
row tagged with its device id), truth.json (the truth; not read by wafer-stats).
"""
from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import sympy as sp

from compactgen.model.constants import MU0
from compactgen.jobs.wafer.card_out import write_text_atomic as _write
from compactgen.physics import coercivity

MT = 1e-3 / MU0  # A/m per mT

#: truth of the demo wafer: population means (geometric), random die-level sigma, radial trend
#: (log change from centre to edge, relative to the wafer mean), mismatch sigma at AREA_REF_DRAWN
DEFAULT_TRUTH = {
    "ra": dict(mean=4.4e-12, sigma_global=0.04, trend=0.04, sigma_mismatch=0.03),
    "tmr0": dict(mean=1.18, sigma_global=0.03, trend=0.0, sigma_mismatch=0.02),
    "ki": dict(mean=1.10e-3, sigma_global=0.012, trend=0.0, sigma_mismatch=0.008),
}
#: global (die-to-die) correlation of the random part, order of DEFAULT_TRUTH
DEFAULT_CORRELATION = [[1.0, 0.6, -0.3], [0.6, 1.0, 0.2], [-0.3, 0.2, 1.0]]
DRAWN_NM = (35.0, 50.0, 70.0, 100.0)
OFFSET_NM = 4.0  # drawn minus electrical diameter
AREA_REF_DRAWN_NM = 50.0  # the mismatch sigmas hold at the electrical area of this drawn size
V_HALF = 0.46  # [V], the same on every device
NUISANCE = {"attempt_time": 1e-9, "offset_field": -8 * MT}
SWEEP_RATE_T = 1.0  # [T/s]
READ_BIAS = 0.05  # [V]
FIELD_STEP_MT = 8.0
R_NOISE = 0.003
BAD_KINDS = ("short", "stuck", "low_tmr", "high_ra", "missing")


def die_positions(n_dies: int, pitch_mm: float = 12.0) -> tuple[np.ndarray, float]:
    """Centres of ``n_dies`` dies on a square grid, those nearest the wafer centre first; returns
    (positions [mm], wafer radius [mm] = the farthest die's radius plus one pitch)."""
    k = int(math.ceil(math.sqrt(n_dies))) + 2
    g = (np.arange(-k, k + 1)) * pitch_mm
    xy = np.array([(x, y) for x in g for y in g])
    r = np.hypot(xy[:, 0], xy[:, 1])
    order = np.lexsort((np.arctan2(xy[:, 1], xy[:, 0]), r))
    pos = xy[order[:n_dies]]
    return pos, float(np.hypot(pos[:, 0], pos[:, 1]).max() + pitch_mm)


def make_wafer(card, out_dir, n_dies: int = 12, per_size: int = 2, seed: int = 1, drawn_nm=DRAWN_NM,
               truth: dict | None = None, correlation=None, offset_nm: float = OFFSET_NM, n_bad: int | None = None,
               label: str = "", fn=None) -> dict:
    """Write a synthetic wafer of ``n_dies`` x len(drawn_nm) x ``per_size`` devices from the stt-mtj
    ``card`` (the parameters not in ``truth`` keep the card's values) into ``out_dir``; returns
    the truth (also written as truth.json)."""
    from compactgen.jobs.calibrate.models import stt_functions

    truth, names, corr, chol, rng = _spread_setup(truth or DEFAULT_TRUTH, correlation if correlation is not None
                                                  else DEFAULT_CORRELATION, seed)
    out = Path(out_dir)
    fn = fn or stt_functions(card)
    pos, radius = die_positions(n_dies)
    rho2 = (pos[:, 0] ** 2 + pos[:, 1] ** 2) / radius**2
    rho2c = rho2 - rho2.mean()
    area_ref = math.pi / 4 * ((AREA_REF_DRAWN_NM - offset_nm) * 1e-9) ** 2

    # devices
    devices = []
    for d in range(n_dies):
        for dn in drawn_nm:
            for k in range(per_size):
                devices.append(dict(id=f"D{d + 1:02d}-{int(dn)}{chr(97 + k)}", die=d, drawn=dn * 1e-9))
    n_bad = max(len(BAD_KINDS), round(0.02 * len(devices))) if n_bad is None else n_bad
    bad_idx = rng.choice(len(devices), size=min(n_bad, len(devices)), replace=False)
    bad = {devices[i]["id"]: BAD_KINDS[j % len(BAD_KINDS)] for j, i in enumerate(sorted(bad_idx))}

    z_die, sg, sm, tr = _die_effects(rng, chol, truth, names, n_dies)
    base = dict(card.values)
    base["v_half"] = V_HALF
    rows_rv, rows_rh = [], []
    v = np.round(np.arange(-0.6, 0.6001, 0.1), 3)
    hsym, hk_s, de_s, t0_s, rate_s = sp.symbols("h hk delta tau0 rate", positive=True)
    surv = sp.lambdify((hsym, hk_s, de_s, t0_s, rate_s),
                       coercivity.ramp_survival_probability(hsym, hk_s, de_s, t0_s, rate_s), "scipy")
    rate = SWEEP_RATE_T / MU0
    per_device = {}
    sizes = sorted({dv["drawn"] for dv in devices})
    hk_max = 0.0
    for dv in devices:
        d_el = dv["drawn"] - offset_nm * 1e-9
        area = math.pi / 4 * d_el**2
        z = rng.standard_normal(len(names))
        lnp = np.log([truth[n]["mean"] for n in names]) + sg * z_die[dv["die"]] + tr * rho2c[dv["die"]] \
            + sm * math.sqrt(area_ref / area) * z
        vals = dict(base, diameter=d_el, **dict(zip(names, np.exp(lnp).tolist())))
        kind = bad.get(dv["id"])
        if kind == "low_tmr":
            vals["tmr0"] *= 0.5
        elif kind == "high_ra":
            vals["ra"] *= 1.6
        vals = card.device.derive_defaults(vals, card.options, card.given - {"demag_nz"})
        per_device[dv["id"]] = {n: vals[n] for n in names}
        a = fn.args(vals)
        hk_max = max(hk_max, float(fn.hk_eff(*a)))
        dv.update(values=vals, args=a)
    h_max_mt = FIELD_STEP_MT * math.ceil(1.3 * hk_max / MT / FIELD_STEP_MT)
    grid = np.arange(-h_max_mt, h_max_mt + 1e-9, FIELD_STEP_MT)
    for dv in devices:
        kind = bad.get(dv["id"])
        if kind == "missing":
            continue
        a, vals = dv["args"], dv["values"]
        short = 0.03 if kind == "short" else 1.0
        for state, mz in (("P", 1.0), ("AP", -1.0)):
            r = short / fn.g(*a, v, mz) * (1 + R_NOISE * rng.standard_normal(v.size))
            rows_rv += [f"{dv['id']},{x:.1f},{y:.2f},{state}" for x, y in zip(v, r)]
        r_p, r_ap = short / fn.g(*a, READ_BIAS, 1.0), short / fn.g(*a, READ_BIAS, -1.0)
        if kind == "short":
            r_ap = r_p * 1.001
        hk, delta = float(fn.hk_eff(*a)), float(fn.delta(*a))
        h_sw = []
        for _ in range(2):  # S(H) = u by bisection: S falls from 1 to 0 as H rises to H_k
            u = rng.uniform()
            lo, hi = -hk, hk * (1 - 1e-12)
            for _ in range(60):
                mid = 0.5 * (lo + hi)
                lo, hi = (mid, hi) if surv(mid, hk, delta, NUISANCE["attempt_time"], rate) > u else (lo, mid)
            h_sw.append(0.5 * (lo + hi))
        down_at = (NUISANCE["offset_field"] - h_sw[0]) / MT
        up_at = (NUISANCE["offset_field"] + h_sw[1]) / MT
        if kind == "stuck":  # a pinned free layer: AP throughout
            down_at, up_at = math.inf, math.inf
        for hf in grid[::-1]:
            r = r_p if hf > down_at else r_ap
            rows_rh.append(f"{dv['id']},{hf:.0f},{r * (1 + R_NOISE * rng.standard_normal()):.1f},1")
        for hf in grid[1:]:
            r = r_ap if hf < up_at else r_p
            rows_rh.append(f"{dv['id']},{hf:.0f},{r * (1 + R_NOISE * rng.standard_normal()):.1f},1")

    label = label or (f"generated by compactgen.jobs.wafer.synthetic from card {card.name}, seed {seed}; "
                      "SYNTHETIC, not measured")
    temp_c = base["tnom"] - 273.15
    table = [f"# synthetic: {label}", "# wafer: SYN-01 (synthetic demo wafer)",
             "# columns: device id, die centre on the wafer, drawn (mask) diameter",
             "device,die_x [mm],die_y [mm],diameter [nm]"]
    table += [f"{dv['id']},{pos[dv['die'], 0]:.1f},{pos[dv['die'], 1]:.1f},{dv['drawn'] * 1e9:.0f}" for dv in devices]
    out.mkdir(parents=True, exist_ok=True)
    _write(out / "devices.csv", "\n".join(table) + "\n")
    _write(out / "rv_bias.csv", "\n".join([f"# synthetic: {label}", f"# temperature: {temp_c:.6g} degC",
                                           "device,voltage [V],resistance [ohm],state", *rows_rv]) + "\n")
    _write(out / "rh_loops.csv", "\n".join([f"# synthetic: {label}", f"# temperature: {temp_c:.6g} degC",
                                            f"# read_bias: {READ_BIAS * 1e3:g} mV",
                                            f"# sweep_rate: {SWEEP_RATE_T:g} T/s",
                                            "device,field [mT],resistance [ohm],loop", *rows_rh]) + "\n")
    truth_out = {
        "synthetic": label, "seed": seed, "card": card.name, "dies": n_dies, "per_size": per_size,
        "drawn_diameters_nm": list(drawn_nm), "diameter_offset_m": offset_nm * 1e-9, "area_ref_m2": area_ref,
        "wafer_radius_mm": radius, "sizes": len(sizes), "devices": len(devices),
        **_population_truth(truth, names, corr, sg, tr, rho2),
        "v_half": V_HALF, "nuisance": NUISANCE, "bad_devices": bad,
        "device_values": per_device,
    }
    _write(out / "truth.json", json.dumps(truth_out, indent=1) + "\n")
    return truth_out


# ---------------------------------------------------------------------------------------------
# dw-mtj: a SYNTHETIC wafer of domain-wall tracks measured by wall velocities
#: truth of the synthetic dw wafer (illustrative, no source): population means (geometric), die-level sigma,
#: radial trend, mismatch sigma at the MTJ area of the DW_REF_WIDTH_NM track
DW_TRUTH = {
    "dmi": dict(mean=1.0e-3, sigma_global=0.05, trend=0.03, sigma_mismatch=0.04),
    "theta_sh": dict(mean=0.16, sigma_global=0.06, trend=0.0, sigma_mismatch=0.05),
    "alpha": dict(mean=0.28, sigma_global=0.04, trend=0.0, sigma_mismatch=0.03),
}
DW_CORRELATION = [[1.0, 0.4, 0.0], [0.4, 1.0, -0.3], [0.0, -0.3, 1.0]]
DW_WIDTHS_NM = (30.0, 60.0, 120.0)  # track widths; the MTJ area is width x the card's mtj_length
DW_REF_WIDTH_NM = 60.0
DW_BAD_KINDS = ("stuck", "low_dmi", "high_alpha", "missing")
DW_NOISE = (0.02, 0.5)  # relative and absolute [m/s] velocity scatter


def make_dw_wafer(card, out_dir, n_dies: int = 12, per_size: int = 2, seed: int = 1, widths_nm=DW_WIDTHS_NM,
                  truth: dict | None = None, correlation=None, n_current: int = 7, n_field: int = 7,
                  label: str = "", fn=None) -> dict:
    """Write a synthetic wafer of dw-mtj tracks (``n_dies`` x len(widths_nm) x ``per_size``) from
    the dw-mtj ``card`` into ``out_dir``; returns the truth (also written as truth.json).

    Each device's dmi, theta_sh and alpha follow the variation law of the module docstring (the
    mismatch with the MTJ area track_width x mtj_length); every other parameter is the card's.  A
    device is 'measured' as `compactgen fit` reads wall velocities: the steady wall speed of the
    card's own wall equations (calibrate.wall, pinning off) versus current density (zero field) and
    versus perpendicular field (zero current, up -> down wall), with DW_NOISE scatter.  Bad devices
    on purpose: a stuck wall (velocities are noise only), DMI halved, damping x 1.8, no data.
    Files: devices.csv (``area`` = the MTJ area, ``track_width`` kept as text),
    wall_velocity_current.csv and wall_velocity_field.csv (rows tagged by device), truth.json."""
    from compactgen.jobs.calibrate.wall import steady_state, wall_functions

    if card.kind != "dw-mtj":
        raise ValueError(f"make_dw_wafer needs a dw-mtj card, not {card.kind}")
    truth, names, corr, chol, rng = _spread_setup(truth or DW_TRUTH, correlation if correlation is not None
                                                  else DW_CORRELATION, seed)
    out = Path(out_dir)
    fn = fn or wall_functions(card.ir())
    pos, radius = die_positions(n_dies)
    rho2 = (pos[:, 0] ** 2 + pos[:, 1] ** 2) / radius**2
    rho2c = rho2 - rho2.mean()
    length = card.values["mtj_length"]
    area_ref = DW_REF_WIDTH_NM * 1e-9 * length

    devices = []
    for d in range(n_dies):
        for w in widths_nm:
            for k in range(per_size):
                devices.append(dict(id=f"T{d + 1:02d}-w{int(w)}{chr(97 + k)}", die=d, width=w * 1e-9))
    bad_idx = rng.choice(len(devices), size=min(len(DW_BAD_KINDS), len(devices)), replace=False)
    bad = {devices[i]["id"]: DW_BAD_KINDS[j] for j, i in enumerate(sorted(bad_idx))}
    z_die, sg, sm, tr = _die_effects(rng, chol, truth, names, n_dies)
    # the flow regime the card's data file uses (calibrate.synthetic.make_wall_data), fewer points
    j_max_cm2 = card.values["j_max"] * 1e-4
    j_cm2 = np.round(np.concatenate([[-0.5 * j_max_cm2], np.linspace(0.0, j_max_cm2, n_current)[1:]]), -5)
    h_mt = np.round(np.linspace(12.0, 120.0, n_field), 3)
    abs_noise = DW_NOISE[1]
    rows_j, rows_h, per_device = [], [], {}
    for dv in devices:
        area = dv["width"] * length
        z = rng.standard_normal(len(names))
        lnp = np.log([truth[n]["mean"] for n in names]) + sg * z_die[dv["die"]] + tr * rho2c[dv["die"]] \
            + sm * math.sqrt(area_ref / area) * z
        vals = dict(card.values, track_width=dv["width"], **dict(zip(names, np.exp(lnp).tolist())))
        kind = bad.get(dv["id"])
        if kind == "low_dmi":
            vals["dmi"] *= 0.5
        elif kind == "high_alpha":
            vals["alpha"] *= 1.8
        per_device[dv["id"]] = {n: vals[n] for n in names}
        if kind == "missing":
            continue
        still = 0.0 if kind == "stuck" else 1.0
        vj = still * steady_state(fn, vals, j_cm2 * 1e4)[0]
        vh = still * steady_state(fn, vals, 0.0, h_mt * MT, q=1)[0]
        vj = vj * (1 + DW_NOISE[0] * rng.standard_normal(vj.size)) + abs_noise * rng.standard_normal(vj.size)
        vh = vh * (1 + DW_NOISE[0] * rng.standard_normal(vh.size)) + abs_noise * rng.standard_normal(vh.size)
        rows_j += [f"{dv['id']},{j:.4g},{v:.3f}" for j, v in zip(j_cm2, vj)]
        rows_h += [f"{dv['id']},0,{h:.4g},{v:.3f}" for h, v in zip(h_mt, vh)]

    label = label or (f"generated by compactgen.jobs.wafer.synthetic (make_dw_wafer) from card {card.name}, seed "
                      f"{seed}; SYNTHETIC, not measured")
    table = [f"# synthetic: {label}", "# wafer: SYN-DW-01 (synthetic domain-wall track wafer)",
             f"# columns: device id, die centre on the wafer, MTJ area on the track (track_width x mtj_length = "
             f"{length * 1e9:.4g} nm), track width",
             "device,die_x [mm],die_y [mm],area [um^2],track_width"]
    table += [f"{dv['id']},{pos[dv['die'], 0]:.1f},{pos[dv['die'], 1]:.1f},{dv['width'] * length * 1e12:.6g},"
              f"{dv['width'] * 1e9:.4g} nm" for dv in devices]
    common = [f"# synthetic: {label}", f"# temperature: {card.values['tnom'] - 273.15:.6g} degC"]
    out.mkdir(parents=True, exist_ok=True)
    _write(out / "devices.csv", "\n".join(table) + "\n")
    _write(out / "wall_velocity_current.csv", "\n".join(
        common + ["device,current_density [A/cm^2],velocity [m/s]", *rows_j]) + "\n")
    _write(out / "wall_velocity_field.csv", "\n".join(
        common + ["# wall: up-down", "device,current_density [A/m^2],field [mT],velocity [m/s]", *rows_h]) + "\n")
    truth_out = {
        "synthetic": label, "seed": seed, "card": card.name, "kind": "dw-mtj", "dies": n_dies, "per_size": per_size,
        "track_widths_nm": list(widths_nm), "mtj_length_m": length, "area_ref_m2": area_ref,
        "wafer_radius_mm": radius, "sizes": len(widths_nm), "devices": len(devices),
        **_population_truth(truth, names, corr, sg, tr, rho2),
        "noise": {"relative": DW_NOISE[0], "absolute_m_per_s": DW_NOISE[1]},
        "bad_devices": bad, "device_values": per_device,
    }
    _write(out / "truth.json", json.dumps(truth_out, indent=1) + "\n")
    return truth_out


def _spread_setup(truth: dict, correlation, seed: int):
    """A private copy of the truth, its parameter names, the global correlation with its Cholesky
    factor, and the seeded generator every draw of a synthetic wafer comes from."""
    truth = {k: dict(v) for k, v in truth.items()}
    corr = np.asarray(correlation, float)
    return truth, list(truth), corr, np.linalg.cholesky(corr), np.random.default_rng(seed)


def _die_effects(rng, chol, truth: dict, names: list[str], n_dies: int):
    """Correlated standard-normal die draws, and per parameter its global sigma, mismatch sigma and
    radial trend."""
    z_die = rng.standard_normal((n_dies, len(names))) @ chol.T
    sg = np.array([truth[n]["sigma_global"] for n in names])
    sm = np.array([truth[n]["sigma_mismatch"] for n in names])
    tr = np.array([truth[n].get("trend", 0.0) for n in names])
    return z_die, sg, sm, tr


def _population_truth(truth: dict, names: list[str], corr, sg, tr, rho2) -> dict:
    """The truth a population of these dies shows: the global sigma is the random part and the
    radial trend's spread over the dies together; the correlation follows."""
    cov = np.outer(sg, sg) * corr + np.diag(tr**2 * float(np.var(rho2)))
    sg_eff = np.sqrt(np.diag(cov))
    return {
        "parameters": {n: {**truth[n], "sigma_global_population": float(sg_eff[i]),
                           "sigma_global_random": truth[n]["sigma_global"]} for i, n in enumerate(names)},
        "correlation": {"parameters": names, "random_part": corr.tolist(),
                        "population": (cov / np.outer(sg_eff, sg_eff)).tolist()},
        "note": "sigma_global in 'parameters' is the random die-level part; sigma_global_population adds the "
                "radial trend's spread over these dies (what a population of these dies shows)",
    }
