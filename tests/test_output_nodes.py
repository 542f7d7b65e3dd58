"""Every output of a model (ir.outputs and the range output `drive_ratio`) is readable in every target:
a sampled node per output in the ngspice subcircuit, an output variable in Verilog-A; the values
equal the reference solver's; the range output is never negative; the statistical draws of a
Monte Carlo run can be read back and are the ones the model used."""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy as sp

from compactgen.targets import render
from compactgen.harness import verify
from compactgen.harness.benches import Bench
from compactgen.errors import UnsupportedExpressionError
from compactgen.targets.printing import NgspicePrinter, VerilogAPrinter
from compactgen.targets.printing.ngspice import SAMPLE_STEPS, Sampled
from compactgen.harness.reference import ReferenceModel
from compactgen.sim import compile_va_cached, run_ngspice, run_vacask

from helpers import example_card

#: ngspice samples an output at the last-but-one Newton iterate (no derivative, see
#: printing/ngspice.Sampled); that iterate agrees with the converged point within the Newton
#: tolerance, reltol 1e-6 in the bench decks (largest seen 9.7e-7): 2e-6 relative
WHY_SAMPLED = "sampled one Newton iterate early: within reltol 1e-6 of the converged point; 2e-6"
#: where an output crosses zero (jdens at 0 V) the relative error means nothing; an internal node
#: solved to vntol 1e-9 V leaves a current density of ~1e-8 of the sweep's largest (seen in dw-mtj)
WHY_ZERO = "near zero: 1e-7 of the largest |value| of the sweep (internal node solved to vntol 1e-9 V)"

SWEEP = ("t", -1.5, 1.5, 0.05)  # beyond v_max = 1.2 V, so the range output passes 1


def _reference_outputs(ir, bench):
    ref = verify.reference_trace(ir, bench)
    model = ReferenceModel(ir, bench.instance)
    y = [ref.states[s.name] for s in ir.states]
    nv = {t.name: ref.voltages[t.name] for t in ir.terminals}
    n = len(ref.voltages[ir.terminals[0].name])
    return {o.name: np.broadcast_to(model.output(o.name, nv, y), (n,)).astype(float) for o in ir.monitored_outputs()}


def _assert_outputs_match(ir, sim: dict, ref: dict, where: str):
    for name, r in ref.items():
        s = sim[name]
        tol = 2e-6 * np.abs(r) + 1e-7 * np.max(np.abs(r))
        bad = np.abs(s - r) > tol
        assert not bad.any(), (f"{where}: {name} differs from the reference at sweep points {np.flatnonzero(bad)}: "
                               f"{s[bad][:3]} vs {r[bad][:3]} ({WHY_SAMPLED}; {WHY_ZERO})")


@pytest.mark.simulator
@pytest.mark.parametrize("card_name", ["pmtj35_demo", "sot50_demo", "dwtrack_demo"])
def test_ngspice_output_nodes_equal_the_reference_on_a_dc_sweep(tmp_path, ngspice, card_name):
    ir = example_card(card_name).ir()
    bench = Bench("outputs", "outputs on a DC sweep", "dc", {}, [], sweep=SWEEP)
    lib = tmp_path / f"{ir.name}.lib"
    lib.write_text(render.ngspice(ir))
    data = run_ngspice(verify.ngspice_deck(ir, bench, str(lib)))
    sim = {}
    for o in ir.monitored_outputs():
        unit, scale = render.node_unit(o.unit)
        sim[o.name] = np.asarray(data[f"xdut.{o.name}"]) * scale  # node reads in `unit`
    ref = _reference_outputs(ir, bench)
    _assert_outputs_match(ir, sim, ref, f"ngspice {card_name}")
    assert ref["drive_ratio"].max() > 1.0  # the sweep leaves the calibrated range ...
    assert sim["drive_ratio"].min() >= 0.0  # ... and the range output is never negative
    assert sim["drive_ratio"][np.argmin(np.abs(data["n_t"]))] == 0.0  # exactly 0 at 0 V


@pytest.mark.simulator
def test_verilog_a_outputs_equal_the_reference_and_drive_ratio_is_not_negative(tmp_path, vacask):
    ir = example_card().ir()
    bench = Bench("outputs", "outputs on a DC sweep", "dc", {}, [], sweep=SWEEP)
    net = verify.vacask_netlist(ir, bench, f"{ir.name}.osdi")
    saves = "".join(f"  save p(xdut,{o.name})\n" for o in ir.monitored_outputs())
    net = net.replace("control\n", "control\n  save default\n" + saves, 1)
    osdi = compile_va_cached(render.verilog_a(ir), ir.name)
    d = run_vacask(net, {f"{ir.name}.osdi": osdi})["dc1"].data
    sim = {o.name: np.asarray(d[f"xdut.{o.name}"]) for o in ir.monitored_outputs()}
    _assert_outputs_match(ir, sim, _reference_outputs(ir, bench), "VACASK")
    assert sim["drive_ratio"].min() >= 0.0
    assert sim["drive_ratio"][np.argmin(np.abs(d["n_t"]))] == 0.0


@pytest.mark.simulator
def test_range_output_is_not_negative_in_a_cell_at_rest(tmp_path, ngspice):
    # the designer's report: a 1T1MTJ cell at rest showed stress (now drive_ratio) = -1.3e-16 (a
    # derivative-carrying B-source linearised about a bias that changes sign between Newton iterations)
    ir = example_card().ir()
    lib = tmp_path / f"{ir.name}.lib"
    lib.write_text(render.ngspice(ir))
    deck = f"""cell at rest
.lib {lib} tt
.model nacc nmos level=1 vto=0.4 kp=300e-6 lambda=0.02 gamma=0.4 phi=0.7
M1 b wl sl sl nacc w=0.2e-6 l=0.1e-6
Vwl wl 0 1.2
Vbl bl 0 0
Vsl sl 0 0
Xmtj bl b {ir.name} state0=-1
.options method=trap reltol=1e-4 abstol=1e-12 vntol=1e-7 chgtol=1e-20
.tran 10p 1n 0 2p
"""
    data = run_ngspice(deck)
    assert np.min(data["xmtj.drive_ratio"]) >= 0.0
    assert np.max(data["xmtj.drive_ratio"]) < 1e-9  # at rest: no drive


def test_sampled_values_print_only_for_ngspice():
    x = sp.Symbol("x", real=True)
    k = repr(SAMPLE_STEPS)
    assert NgspicePrinter({"x": "V(a)"}).code(Sampled(2 * x)) == f"nint({k}*(2.0*V(a)))/{k}"
    with pytest.raises(UnsupportedExpressionError):
        VerilogAPrinter().code(Sampled(x))


def test_every_output_has_a_node_and_the_usage_line_sets_no_draws():
    ir = example_card().ir()
    lib = render.ngspice(ir)
    for o in ir.monitored_outputs():
        assert f"\nR{o.name} {o.name} 0 1\n" in lib and f"\nB{o.name} 0 {o.name} I=nint(" in lib
    usage = render.usage_instance(ir)
    assert "draw_mismatch_" not in usage and "draw_global_" not in usage and "corner" not in usage
    instance = [s.name for s in ir.params
                if s.kind == "instance" and not s.name.startswith(("draw_mismatch_", "draw_global_"))]
    assert all(f" {n}=" in usage for n in instance)
    assert f"*         {usage}\n" in lib
    # node names are unique across ports, states, outputs, auxiliary and temperature nodes
    names = [r["name"] for r in render.ngspice_nodes(ir)]
    assert len(names) == len(set(names)) and {"res", "jdens", "drive_ratio", "clk"} <= set(names)


def _mc_deck(lib: Path, name: str, seed: int, draws: list[str]) -> str:
    saves = " ".join(f"@i.{x}.i{d}[dc]" for x in ("x1", "x2") for d in draws)
    return f"""two instances, Monte Carlo section
.lib {lib} mc
Vb t 0 0.1
X1 t 0 {name}
X2 t 0 {name}
.options seed={seed}
.save all {saves}
.tran 1p 2p
"""


@pytest.mark.simulator
def test_monte_carlo_draws_read_back_are_the_draws_used_and_a_seed_repeats_them(tmp_path, ngspice):
    ir = example_card().ir()
    lib = tmp_path / f"{ir.name}.lib"
    lib.write_text(render.ngspice(ir))
    draws = [s.name for s in render.draw_params(ir)]
    runs = [run_ngspice(_mc_deck(lib, ir.name, seed, draws)) for seed in (11, 11, 12)]
    read = [{x: {d: float(r[f"@i.{x}.i{d}[dc]"][0]) for d in draws} for x in ("x1", "x2")} for r in runs]
    assert read[0] == read[1]  # .options seed=N repeats every draw (ngspice 39)
    assert read[0] != read[2]
    first = read[0]
    assert all(first["x1"][d] == first["x2"][d] for d in draws if d.startswith("draw_global_"))  # one per run
    assert all(first["x1"][d] != first["x2"][d] for d in draws if d.startswith("draw_mismatch_"))  # per instance
    # the reference model with the draws read back gives the resistances ngspice computed
    for x in ("x1", "x2"):
        model = ReferenceModel(ir, first[x])
        r_ref = float(model.output("res", {"t": 0.1, "b": 0.0}, list(model.initial)))
        assert runs[0][f"{x}.res"][0] * 1e3 == pytest.approx(r_ref, rel=2e-6), WHY_SAMPLED
    assert runs[0]["x1.res"][0] != runs[0]["x2.res"][0]
