"""The designer decks in ngspice_decks/ run with the generated models, and their key numbers (read
margin, write time, weight levels) agree with the reference solution driven by the very voltages
ngspice put on the device's ports."""
from __future__ import annotations

import re
from pathlib import Path

import jinja2
import numpy as np
import pytest

from compactgen.benches import crossing_time
from compactgen.build import build_files, write_files
from compactgen.card import load_card
from compactgen.reference import ReferenceModel, figures
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


def run_deck(name: str, card: str, tmp_path: Path):
    c = load_card(ROOT / "examples" / card)
    write_files(build_files(c), tmp_path)
    text = (ROOT / "ngspice_decks" / name).read_text()
    deck = jinja2.Template(text, undefined=jinja2.StrictUndefined).render(lib_dir=str(tmp_path))
    data = run_ngspice(deck, timeout=300.0)
    return c, deck, data


def reference_on(c, deck, data, ports: dict[str, str], instance: dict):
    """The reference model driven by ngspice's voltages at the device's ports."""
    t = data["time"]
    corners = source_corners(deck, t[-1])
    model = ReferenceModel(c.ir(), instance)
    drives = {term: Sampled(t, data[node], corners) for term, node in ports.items()}
    return model.transient(drives, t[-1], t_eval=t, rtol=1e-9, atol=1e-12)


@pytest.mark.simulator
def test_one_transistor_one_mtj_cell(tmp_path, ngspice):
    c, deck, data = run_deck("stt_1t1mtj_cell.cir", "pmtj35_demo.toml", tmp_path)
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
    t_w = crossing_time(t, data["xmtj.mz"], 0.0, 3e-9, +1) - 3e-9
    t_w_ref = crossing_time(ref.t, ref.states["mz"], 0.0, 3e-9, +1) - 3e-9
    assert t_w == pytest.approx(t_w_ref, rel=1e-2), WHY_T
    assert data["xmtj.mz"][-1] > 0.99 and ref.states["mz"][-1] > 0.99


@pytest.mark.simulator
def test_sot_cell_with_separate_read_and_write_transistors(tmp_path, ngspice):
    c, deck, data = run_deck("sot_2t1mtj_cell.cir", "sot50_demo.toml", tmp_path)
    t = data["time"]
    ref = reference_on(c, deck, data, {"w1": "wbl", "w2": "w2", "t": "t"}, {"state0": -1.0})
    i_rbl = -data["vrbl#branch"]
    r_sim = [np.interp(x, t, data["t"] - data["xsot.mid"]) / np.interp(x, t, i_rbl) for x in (1.9e-9, 8.9e-9)]
    r_ref = [np.interp(x, ref.t, ref.voltages["t"] - ref.voltages["mid"]) / np.interp(x, ref.t, ref.currents["t"])
             for x in (1.9e-9, 8.9e-9)]
    assert r_sim == pytest.approx(r_ref, rel=1e-3), WHY_R
    margin = np.interp(8.9e-9, t, i_rbl) / np.interp(1.9e-9, t, i_rbl) - 1  # I_P / I_AP - 1
    assert margin > 0.4
    # the write current is about twice the threshold and the final state obeys -sign(J theta_sh hx) = +1
    # (theta_sh < 0, hx > 0, J along +x; tests/test_conventions.py)
    line_j = (data["wbl"] - data["xsot.mid"]) / (c.values["rho_hm"] * c.values["line_length"] / 2
                                                 / (c.values["line_width"] * c.values["t_hm"]))
    assert 1.5 < np.max(line_j) / (c.values["line_width"] * c.values["t_hm"]) / figures(c.ir())["j_c_sot"] < 2.5
    assert data["xsot.mz"][-1] > 0.99 and ref.states["mz"][-1] > 0.99
    t_w = crossing_time(t, data["xsot.mz"], 0.0, 2.5e-9, +1)
    t_w_ref = crossing_time(ref.t, ref.states["mz"], 0.0, 2.5e-9, +1)
    assert t_w - 2.55e-9 == pytest.approx(t_w_ref - 2.55e-9, rel=1e-2), WHY_T


@pytest.mark.simulator
def test_domain_wall_weight_levels(tmp_path, ngspice):
    c, deck, data = run_deck("dw_weight_cell.cir", "dwtrack_demo.toml", tmp_path)
    t = data["time"]
    ref = reference_on(c, deck, data, {"w1": "sl", "w2": "w2", "t": "t"}, {})
    reads = [0.7e-9 + 3e-9 * k for k in range(5)]
    i_rbl = -data["vrbl#branch"]
    levels = [np.interp(x, t, data["t"] - data["xdw.mid"]) / np.interp(x, t, i_rbl) for x in reads]
    ref_levels = [np.interp(x, ref.t, ref.voltages["t"] - ref.voltages["mid"]) / np.interp(x, ref.t, ref.currents["t"])
                  for x in reads]
    assert levels == pytest.approx(ref_levels, rel=1e-3), WHY_R
    assert all(b < a for a, b in zip(levels[:-1], levels[1:]))  # each pulse lowers the weight by a step
    r_p = c.values["ra"] / (c.values["mtj_length"] * c.values["track_width"])
    assert r_p < min(levels) and max(levels) < r_p * (1 + c.values["tmr0"])
    assert min(b / a for a, b in zip(levels[:-1], levels[1:])) < 0.9  # distinct levels, not a drift
