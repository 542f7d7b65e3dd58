"""The designer decks in ngspice_decks/ run with the generated models, and their key numbers (read
margin, write time, weight levels) agree with the reference solution driven by the very voltages
ngspice put on the device's ports."""
from __future__ import annotations

import re
from pathlib import Path

import jinja2
import numpy as np
import pytest

from compactgen.harness.benches import crossing_time
from compactgen.jobs.build import build_files, write_files
from compactgen.model.card import load_card
from compactgen.harness.reference import ReferenceModel
from compactgen.model.evaluate import figures
from compactgen.sim import run_ngspice

ROOT = Path(__file__).resolve().parent.parent
WHY_T = ("write time: the reference sees ngspice's port voltages interpolated linearly between its time points "
         "(step cap 2 ps, reltol 1e-4): 1 %")
WHY_R = "read resistance at a settled state: 0.1 %"


class Sampled:
    """A port voltage as ngspice computed it, with the deck's source corners as breakpoints."""

    def __init__(self, t, v, corners):
        self.t, self.v, self.corners = np.asarray(t), np.asarray(v), corners

    def value(self, x: float) -> float:
        return float(np.interp(x, self.t, self.v))

    def breakpoints(self, t_end: float) -> list[float]:
        return [c for c in self.corners if c < t_end]


def _number(tok: str) -> float:
    scale = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3}
    return float(tok[:-1]) * scale[tok[-1]] if tok[-1] in scale else float(tok)


def source_corners(deck: str, t_end: float) -> list[float]:
    """Every corner time of the PWL and PULSE sources of a deck."""
    out = set()
    for kind, args in re.findall(r"\b(PWL|PULSE)\(([^)]*)\)", deck):
        vals = [_number(a) for a in args.split()]
        if kind == "PWL":
            out.update(vals[0::2])
        else:
            _, _, td, tr, tf, pw, per, *count = vals
            n = int(count[0]) if count else int(t_end / per) + 1
            for k in range(n):
                out.update(td + k * per + d for d in (0.0, tr, tr + pw, tr + pw + tf))
    return sorted(x for x in out if 0.0 <= x <= t_end)


#: the two forms of a model in ngspice: the B-source library and the compiled model (OSDI)
FORMS = ("bsource", "osdi")


def run_deck(name: str, card: str, tmp_path: Path, form: str = "bsource", **template):
    c = load_card(ROOT / "examples" / card)
    tmp_path.mkdir(parents=True, exist_ok=True)
    write_files(build_files(c), tmp_path)
    text = (ROOT / "ngspice_decks" / name).read_text()
    deck = jinja2.Template(text, undefined=jinja2.StrictUndefined).render(lib_dir=str(tmp_path), form=form,
                                                                          **template)
    osdi = {c.name: tmp_path / f"{c.name}.osdi"} if form == "osdi" else None
    data = run_ngspice(deck, timeout=300.0, osdi=osdi)
    return c, deck, data


def inside(data: dict, form: str, inst: str, name: str) -> np.ndarray:
    """A state or internal node of device ``inst`` as each form names it."""
    return data[f"n.{inst}.n1#{name}" if form == "osdi" else f"{inst}.{name}"]


def resistance(data: dict, form: str, inst: str) -> np.ndarray:
    """The junction-resistance output in ohm (B-source: node res in kohm; compiled: opvar in ohm)."""
    return data[f"@n.{inst}.n1[res]"] if form == "osdi" else data[f"{inst}.res"] * 1e3


def reference_on(c, deck, data, ports: dict[str, str], instance: dict):
    """The reference model driven by ngspice's voltages at the device's ports."""
    t = data["time"]
    corners = source_corners(deck, t[-1])
    model = ReferenceModel(c.ir(), instance)
    drives = {term: Sampled(t, data[node], corners) for term, node in ports.items()}
    return model.transient(drives, t[-1], t_eval=t, rtol=1e-9, atol=1e-12)


WHY_FORMS = ("the two forms evaluate the same equations (one printed as B-sources, one compiled from the .va) "
             "on the same time grid rules: write times within 0.2 %, read resistances within 1e-4")


def both_forms(check, tmp_path: Path) -> None:
    """Each form against the reference driven by its own port voltages (``check``), then the forms'
    figures against each other."""
    figs = {form: check(tmp_path / form, form) for form in FORMS}
    for k, v in figs["bsource"].items():
        assert figs["osdi"][k] == pytest.approx(v, rel=2e-3 if k.startswith("t_") else 1e-4), (k, WHY_FORMS)


def _check_1t1mtj_cell(tmp_path: Path, form: str) -> dict[str, float]:
    c, deck, data = run_deck("stt_1t1mtj_cell.cir", "pmtj35_demo.toml", tmp_path, form)
    t = data["time"]
    ref = reference_on(c, deck, data, {"t": "bl", "b": "b"}, {"state0": -1.0})
    i_bl = -data["vbl#branch"]
    v_mtj = data["bl"] - data["b"]
    r_ap, r_p = (np.interp(x, t, v_mtj) / np.interp(x, t, i_bl) for x in (2.9e-9, 14.9e-9))
    ref_r = [np.interp(x, ref.t, ref.voltages["t"] - ref.voltages["b"]) / np.interp(x, ref.t, ref.currents["t"])
             for x in (2.9e-9, 14.9e-9)]
    assert r_ap == pytest.approx(ref_r[0], rel=1e-3), WHY_R
    assert r_p == pytest.approx(ref_r[1], rel=1e-3), WHY_R
    margin = np.interp(14.9e-9, t, i_bl) / np.interp(2.9e-9, t, i_bl) - 1
    assert margin == pytest.approx(ref_r[0] * np.interp(14.9e-9, t, v_mtj) / (ref_r[1] * np.interp(2.9e-9, t, v_mtj))
                                   - 1, rel=2e-3)
    assert margin > 0.5  # TMR 130 %: the parallel state reads clearly higher
    mz = inside(data, form, "xmtj", "mz")
    t_w = crossing_time(t, mz, 0.0, 3e-9, +1) - 3e-9
    t_w_ref = crossing_time(ref.t, ref.states["mz"], 0.0, 3e-9, +1) - 3e-9
    assert t_w == pytest.approx(t_w_ref, rel=1e-2), WHY_T
    assert mz[-1] > 0.99 and ref.states["mz"][-1] > 0.99
    return dict(t_write=t_w, r_ap=r_ap, r_p=r_p)


@pytest.mark.simulator
def test_one_transistor_one_mtj_cell(tmp_path, ngspice, ngspice_osdi):
    both_forms(_check_1t1mtj_cell, tmp_path)


def _check_sot_cell(tmp_path: Path, form: str) -> dict[str, float]:
    c, deck, data = run_deck("sot_2t1mtj_cell.cir", "sot50_demo.toml", tmp_path, form)
    t = data["time"]
    ref = reference_on(c, deck, data, {"w1": "wbl", "w2": "w2", "t": "t"}, {"state0": -1.0})
    i_rbl = -data["vrbl#branch"]
    mid, mz = inside(data, form, "xsot", "mid"), inside(data, form, "xsot", "mz")
    r_sim = [np.interp(x, t, data["t"] - mid) / np.interp(x, t, i_rbl) for x in (1.9e-9, 8.9e-9)]
    r_ref = [np.interp(x, ref.t, ref.voltages["t"] - ref.voltages["mid"]) / np.interp(x, ref.t, ref.currents["t"])
             for x in (1.9e-9, 8.9e-9)]
    assert r_sim == pytest.approx(r_ref, rel=1e-3), WHY_R
    margin = np.interp(8.9e-9, t, i_rbl) / np.interp(1.9e-9, t, i_rbl) - 1  # I_P / I_AP - 1
    assert margin > 0.4
    # the write current is about twice the threshold and the final state obeys -sign(J theta_sh hx) = +1
    # (theta_sh < 0, hx > 0, J along +x; tests/test_conventions.py)
    line_j = (data["wbl"] - mid) / (c.values["rho_hm"] * c.values["line_length"] / 2
                                    / (c.values["line_width"] * c.values["t_hm"]))
    assert 1.5 < np.max(line_j) / (c.values["line_width"] * c.values["t_hm"]) / figures(c.ir())["j_c_sot"] < 2.5
    assert mz[-1] > 0.99 and ref.states["mz"][-1] > 0.99
    t_w = crossing_time(t, mz, 0.0, 2.5e-9, +1)
    t_w_ref = crossing_time(ref.t, ref.states["mz"], 0.0, 2.5e-9, +1)
    assert t_w - 2.55e-9 == pytest.approx(t_w_ref - 2.55e-9, rel=1e-2), WHY_T
    return dict(t_write=t_w - 2.55e-9, r_ap=r_sim[0], r_p=r_sim[1])


@pytest.mark.simulator
def test_sot_cell_with_separate_read_and_write_transistors(tmp_path, ngspice, ngspice_osdi):
    both_forms(_check_sot_cell, tmp_path)


def _check_dw_weight_cell(tmp_path: Path, form: str) -> dict[str, float]:
    c, deck, data = run_deck("dw_weight_cell.cir", "dwtrack_demo.toml", tmp_path, form)
    t = data["time"]
    ref = reference_on(c, deck, data, {"w1": "sl", "w2": "w2", "t": "t"}, {})
    reads = [0.7e-9 + 3e-9 * k for k in range(5)]
    i_rbl = -data["vrbl#branch"]
    mid = inside(data, form, "xdw", "mid")
    levels = [np.interp(x, t, data["t"] - mid) / np.interp(x, t, i_rbl) for x in reads]
    ref_levels = [np.interp(x, ref.t, ref.voltages["t"] - ref.voltages["mid"]) / np.interp(x, ref.t, ref.currents["t"])
                  for x in reads]
    assert levels == pytest.approx(ref_levels, rel=1e-3), WHY_R
    assert all(b < a for a, b in zip(levels[:-1], levels[1:]))  # each pulse lowers the weight by a step
    r_p = c.values["ra"] / (c.values["mtj_length"] * c.values["track_width"])
    assert r_p < min(levels) and max(levels) < r_p * (1 + c.values["tmr0"])
    assert min(b / a for a, b in zip(levels[:-1], levels[1:])) < 0.9  # distinct levels, not a drift
    return dict(**{f"level{k}": v for k, v in enumerate(levels)})


@pytest.mark.simulator
def test_domain_wall_weight_levels(tmp_path, ngspice, ngspice_osdi):
    both_forms(_check_dw_weight_cell, tmp_path)



# ---- the 2x2 one-transistor-one-junction array (ngspice_decks/stt_2x2_array.cir.j2) ---------------
#: cell -> (bit line, drain node under the junction, initial state); written cells -> direction
ARRAY_CELLS = {"x00": ("bl0", "d00", -1.0), "x01": ("bl1", "d01", 1.0), "x10": ("bl0", "d10", -1.0),
               "x11": ("bl1", "d11", 1.0)}
ARRAY_WRITES = {"x00": +1, "x01": -1}  # X00 AP->P, X01 P->AP (source-degenerated transistor)
ARRAY_WRITE_START = 1.2e-9  # bit and source lines start their write ramps
ARRAY_READS = (0.95e-9, 12.45e-9)  # end of the reads before and after the write
#: (library section, form) of every array run: all sections in the B-source form, tt and mc compiled
ARRAY_RUNS = (("tt", "bsource"), ("ss", "bsource"), ("ff", "bsource"), ("mc", "bsource"), ("tt", "osdi"),
              ("mc", "osdi"))
ARRAY_SEED = 7
WHY_T_ARRAY = ("write time: step cap 1/50 of the precession period with reltol 1e-4 gives switching times "
               "within 0.4 % (benchmarks/bench_step_cap.py); the reference sees the junction current read from "
               "ngspice's sampled res node, interpolated linearly between its time points: 1 %")
WHY_HOLD = ("hold: m_z stays within 0.01 of its starting pole (the thermal initial cone, 1 - cos(0.084) = 0.0035, "
            "may relax; a disturb that started a switch would leave the cone)")


def _array_instance(c, data, cell: str, section: str) -> dict:
    """Instance values of a cell as the run used them: its state, the section's corner and the
    Monte Carlo draws read back from the library's draw sources (0 outside the mc section)."""
    from compactgen.model.variation import CORNERS

    inst = {"state0": ARRAY_CELLS[cell][2], "corner": CORNERS.get(section, 0.0)}
    for s in c.ir().params:
        if s.name.startswith("draw_global_"):
            inst[s.name] = float(data[f"@i.x00.i{s.name}[dc]"][0])  # global: one value per run
        elif s.name.startswith("draw_mismatch_"):
            inst[s.name] = float(data[f"@i.{cell}.i{s.name}[dc]"][0])
    return inst


@pytest.fixture(scope="module")
def array_runs(tmp_path_factory):
    """The array deck in every section, with the reference driven by each written junction's current."""
    from conftest import needs

    needs("ngspice", "ngspice-osdi")  # skips, or fails when COMPACTGEN_REQUIRE_SIMULATORS=1
    out = {}
    for section, form in ARRAY_RUNS:
        tmp = tmp_path_factory.mktemp(f"array_{section}_{form}")
        c, deck, data = run_deck("stt_2x2_array.cir.j2", "pmtj35_demo.toml", tmp, form, section=section,
                                 seed=ARRAY_SEED)
        t = data["time"]
        corners = source_corners(deck, t[-1])
        run = dict(c=c, data=data, t=t, cells={}, form=form, section=section)
        for cell, (bl, d, _) in ARRAY_CELLS.items():
            v_tb = data[bl] - data[d]
            i_tb = v_tb / resistance(data, form, cell)  # the junction current, from the res output
            inst = _array_instance(c, data, cell, section)
            cell_run = dict(inst=inst, v_tb=v_tb, i_tb=i_tb)
            if cell in ARRAY_WRITES:
                model = ReferenceModel(c.ir(), inst)
                cell_run["ref"] = model.transient({}, t[-1], t_eval=t, rtol=1e-9, atol=1e-12,
                                                  currents={"t": Sampled(t, i_tb, corners)})
            run["cells"][cell] = cell_run
        out[(section, form)] = run
    return out


def _write_time(t, mz, direction):
    return crossing_time(t, mz, 0.0, ARRAY_WRITE_START, direction) - ARRAY_WRITE_START


def _margins(run):
    """Read margin of each written cell, I_P / I_AP - 1 of its bit-line current before and after."""
    d, t = run["data"], run["t"]
    i0 = [np.interp(x, t, -d["vbl0#branch"]) for x in ARRAY_READS]
    i1 = [np.interp(x, t, -d["vbl1#branch"]) for x in ARRAY_READS]
    return {"x00": i0[1] / i0[0] - 1, "x01": i1[0] / i1[1] - 1}


@pytest.mark.simulator
def test_array_write_times_match_the_reference_driven_by_the_junction_current(array_runs, ngspice):
    rows = []
    for (section, form), run in array_runs.items():
        figs = figures(run["c"].ir(), {k: v for k, v in run["cells"]["x00"]["inst"].items() if k != "state0"})
        for cell, direction in ARRAY_WRITES.items():
            cr = run["cells"][cell]
            mz = inside(run["data"], form, cell, "mz")
            t_sim = _write_time(run["t"], mz, direction)
            t_ref = _write_time(cr["ref"].t, cr["ref"].states["mz"], direction)
            i_w = np.interp(ARRAY_WRITE_START + 0.5e-9, run["t"], cr["i_tb"])
            cr["t_write"] = t_sim
            rows.append(f"{section:3s} {form:7s} {cell} {'AP->P' if direction > 0 else 'P->AP'}  I = {i_w * 1e6:+7.1f} uA "
                        f"({i_w / figs['i_c0']:+.2f} I_c0)  write time ngspice {t_sim * 1e9:.3f} ns, "
                        f"reference {t_ref * 1e9:.3f} ns")
            assert np.isfinite(t_sim) and t_sim == pytest.approx(t_ref, rel=1e-2), (section, cell, WHY_T_ARRAY)
            assert direction * mz[-1] > 0.99 and direction * cr["ref"].states["mz"][-1] > 0.99
    print("\n2x2 array, write times (from the start of the write ramps at 1.2 ns):\n" + "\n".join(rows))
    for section in ("tt", "mc"):  # the compiled model in the same circuit: the same write times
        for cell in ARRAY_WRITES:
            a, b = (array_runs[(section, form)]["cells"][cell]["t_write"] for form in FORMS)
            assert b == pytest.approx(a, rel=2e-3), (section, cell, WHY_FORMS)


@pytest.mark.simulator
def test_array_half_selected_cells_hold_their_state(array_runs, ngspice):
    rows = []
    for (section, form), run in array_runs.items():
        ic0 = figures(run["c"].ir())["i_c0"]
        for cell in ("x10", "x11"):  # share the written cells' bit and source lines; word line off
            mz = inside(run["data"], form, cell, "mz")
            start = ARRAY_CELLS[cell][2]
            assert np.max(np.abs(mz - start)) < 0.01, (section, cell, WHY_HOLD)
            i_tb, t = run["cells"][cell]["i_tb"], run["t"]
            # a line edge charges the drain node under the junction through it (a pulse of up to
            # ~I_c0 for tens of ps); on the write plateau only the off transistor's leakage flows
            plateau = (t > ARRAY_WRITE_START + 1e-9) & (t < ARRAY_WRITE_START + 9.5e-9)
            i_leak = np.max(np.abs(i_tb[plateau]))
            assert i_leak < 0.01 * ic0, (section, cell)
            rows.append(f"{section:3s} {form:7s} {cell}: largest |I| {np.max(np.abs(i_tb)) / ic0:.2f} I_c0 (edge), on the write "
                        f"plateau {i_leak * 1e9:.3g} nA; largest |m_z - m_z(0)| {np.max(np.abs(mz - mz[0])):.2e}")
    print("\n2x2 array, half-selected cells:\n" + "\n".join(rows))


@pytest.mark.simulator
def test_array_read_margins_at_the_corners(array_runs, ngspice):
    rows, margins = [], {}
    for (section, form), run in array_runs.items():
        t = run["t"]
        for cell in ARRAY_WRITES:
            cr = run["cells"][cell]
            for x in ARRAY_READS:  # the junction resistance read at each read equals the reference's
                r_sim = np.interp(x, t, resistance(run["data"], form, cell))
                r_ref = np.interp(x, cr["ref"].t, cr["ref"].voltages["t"]) / np.interp(x, t, cr["i_tb"])
                assert r_sim == pytest.approx(r_ref, rel=1e-3), (section, cell, x, WHY_R)
        margins[(section, form)] = _margins(run)
        rows.append(f"{section:3s} {form:7s} read margin (I_P/I_AP - 1 of the bit-line current at 0.1 V): "
                    f"X00 {margins[(section, form)]['x00'] * 100:.1f} %, X01 {margins[(section, form)]['x01'] * 100:.1f} %")
    print("\n2x2 array, read margins:\n" + "\n".join(rows))
    for key, m in margins.items():
        assert min(m.values()) > 0.8, key  # TMR 130 % at 0 V, ~125 % at the 0.1 V read, less the transistor
    # the slow corner has the larger RA and the smaller TMR, the fast one the opposite
    for cell in ARRAY_WRITES:
        assert margins[("ss", "bsource")][cell] < margins[("tt", "bsource")][cell] < margins[("ff", "bsource")][cell]
        for section in ("tt", "mc"):
            assert margins[(section, "osdi")][cell] == pytest.approx(margins[(section, "bsource")][cell], rel=1e-4)


@pytest.mark.simulator
def test_array_monte_carlo_run_is_seeded_and_its_draws_are_read_back(array_runs, tmp_path, ngspice):
    run = array_runs[("mc", "bsource")]
    draws = {cell: {k: v for k, v in run["cells"][cell]["inst"].items() if k.startswith("draw_mismatch_")}
             for cell in ARRAY_CELLS}
    assert all(v != 0.0 for d in draws.values() for v in d.values())
    assert len({tuple(d.values()) for d in draws.values()}) == 4  # mismatch: each junction its own draws
    assert any(v != 0.0 for k, v in run["cells"]["x00"]["inst"].items() if k.startswith("draw_global_"))
    # the same seed draws the same values again
    _, _, again = run_deck("stt_2x2_array.cir.j2", "pmtj35_demo.toml", tmp_path, section="mc", seed=ARRAY_SEED)
    for cell in ARRAY_CELLS:
        assert _array_instance(run["c"], again, cell, "mc") == run["cells"][cell]["inst"]
    # the tt run and the mc run differ in the written cells' resistances (the draws are used)
    assert run["data"]["x00.res"][0] != array_runs[("tt", "bsource")]["data"]["x00.res"][0]
    # the compiled form with the same seed draws the same values (same library defaults)
    for cell in ARRAY_CELLS:
        assert array_runs[("mc", "osdi")]["cells"][cell]["inst"] == run["cells"][cell]["inst"], cell
