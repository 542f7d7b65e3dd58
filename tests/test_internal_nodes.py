"""Internal electrical nodes of the ModelIR: validation, the reference solver's KCL, rendering."""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import sympy as sp

from compactgen.targets import render
from compactgen.devices import get_kind
from compactgen.model.ir import Branch, ModelIR, Node, State, Terminal
from compactgen.model.params import ParamSpec, ParamTable
from compactgen.harness.reference import ReferenceModel


def divider_ir(nodes=("mid",), probes=None, branches=None):
    """Two terminals a, b and an internal node mid: a resistor r from a to mid and a diode-like
    element i0 (exp(V/vt) - 1) from mid to b (a nonlinear KCL with a known solution)."""
    table = ParamTable([ParamSpec("r_ser", "ohm", 1e3, 1.0, 1e9, "series resistor"),
                        ParamSpec("i0", "A", 1e-9, 1e-15, 1.0, "saturation current"),
                        ParamSpec("v_slope", "V", 0.05, 0.01, 1.0, "slope voltage")])
    P = table.symbols()
    v1, v2 = sp.Symbol("v_am", real=True), sp.Symbol("v_mb", real=True)
    x = sp.Symbol("x", real=True)
    tsc = sp.Symbol("tsc", positive=True)
    return ModelIR(
        name="divider", kind="test", title="divider", terminals=[Terminal("a", ""), Terminal("b", "")],
        params=table, constants={}, derived=[(tsc, sp.Float(1e-9))],
        voltages=probes or {v1: ("a", "mid"), v2: ("mid", "b")},
        temperature=sp.Symbol("temp_k", positive=True), locals=[],
        states=[State("x", x, -x / tsc, sp.Integer(0), "a dummy state")], time_scale=tsc,
        branches=branches or [Branch("a", "mid", v1 / P["r_ser"], "resistor"),
                              Branch("mid", "b", P["i0"] * (sp.exp(v2 / P["v_slope"]) - 1), "diode")],
        nodes=[Node(n, "") for n in nodes])


def test_kcl_at_an_internal_node_is_solved_exactly():
    ir = divider_ir()
    ir.validate()
    model = ReferenceModel(ir)
    va = np.linspace(-1.0, 2.0, 31)
    tr = model.dc({"a": va, "b": np.zeros_like(va)})
    vm = tr.voltages["mid"]
    # both branch currents agree at every point (KCL), and the terminal currents balance
    i_r = (va - vm) / 1e3
    i_d = 1e-9 * np.expm1(vm / 0.05)
    assert np.allclose(i_r, i_d, rtol=1e-10, atol=1e-18)
    assert np.allclose(tr.currents["a"], i_r, rtol=1e-12, atol=1e-18)
    assert np.allclose(tr.currents["a"] + tr.currents["b"], 0.0, atol=1e-15)
    # the scalar path (used inside the integrator) gives the same node voltage
    single = model.solve_nodes({"a": 1.5, "b": 0.0}, [0.0])
    assert single["mid"] == pytest.approx(float(np.interp(1.5, va, vm)), rel=1e-9)


def test_validation_of_internal_nodes():
    with pytest.raises(ValueError, match="no branch"):
        divider_ir(nodes=("mid", "spare")).validate()
    v1, v2 = sp.Symbol("v_am", real=True), sp.Symbol("v_mb", real=True)
    with pytest.raises(ValueError, match="unknown terminal or node"):
        divider_ir(probes={v1: ("a", "nowhere"), v2: ("mid", "b")}).validate()
    with pytest.raises(ValueError, match="reserved"):
        divider_ir(nodes=("x",)).validate()  # clashes with the state node x


def test_three_terminal_kinds_declare_the_node_in_both_back_ends():
    kind = get_kind("sot-mtj")
    vals = kind.derive_defaults(kind.table().defaults(), {"demag": "thin-film"})
    ir = kind.build_ir("cell", vals, {"demag": "thin-film"})
    va = render.verilog_a(ir)
    lib = render.ngspice(ir)
    assert "  electrical mid;" in va
    assert "I(t, mid) <+ i_tm;" in va and "I(w1, mid) <+ i_w1;" in va
    assert "Btmid t mid I=" in lib and "Bw1mid w1 mid I=" in lib
    # a kind without internal nodes renders no node line
    stt = get_kind("stt-mtj")
    ir2 = stt.build_ir("plain", stt.derive_defaults(stt.table().defaults(), {"demag": "thin-film"}),
                       {"demag": "thin-film"})
    assert ir2.nodes == [] and "internal electrical nodes" not in render.verilog_a(ir2)
    assert dataclasses.replace(ir2, nodes=[]).digest() == ir2.digest()
