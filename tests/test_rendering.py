"""Rendered Verilog-A and ngspice text: golden files, determinism, compilers, printer rules."""
from __future__ import annotations

import re

import pytest
import sympy as sp

from compactgen import render
from compactgen.build import build_files
from compactgen.errors import UnsupportedExpressionError
from compactgen.printing import NgspicePrinter, VerilogAPrinter
from compactgen.printing.base import format_number
from compactgen.sim import admsxml_check, compile_va

from helpers import example_card


@pytest.fixture(scope="module")
def files():
    return build_files(example_card())


def test_golden_verilog_a(files, file_regression):
    file_regression.check(files["pmtj35_demo.va"], extension=".va")


def test_golden_ngspice(files, file_regression):
    file_regression.check(files["pmtj35_demo.lib"], extension=".lib")


def test_build_is_byte_identical(files):
    again = build_files(example_card())
    assert again == files


def test_verilog_a_follows_house_rules(files):
    va = files["pmtj35_demo.va"]
    body = va.split("analog begin", 1)[1]
    # no hidden state, events, idt, unsupported functions; ln not log; all ports have directions
    for banned in ("idt(", "@(cross", "@(timer", "@(initial_step", "$random", "$rdist", "transition(",
                   "$bound_step", " log(", "(log("):
        assert banned not in body, banned
    assert "inout t, b;" in va
    assert va.count("ddt(") == 3  # one per state node, never inside a conditional
    for line in body.splitlines():
        if "ddt(" in line:
            assert line.strip().startswith("I(") and "?" not in line
    # every parameter has units, desc and a range
    for line in va.splitlines():
        if "parameter real" in line:
            assert re.search(r'\(\*units="[^"]*", desc="[^"]+"', line), line
            assert " from " in line, line


def test_ngspice_text_rules(files):
    lib = files["pmtj35_demo.lib"]
    assert ".subckt pmtj35_demo t b" in lib
    assert "log(" not in lib.replace("ln(", "")
    # powers (of provably positive bases only) appear in the temperature laws, never in the
    # bias- and state-dependent sources
    sources = re.sub(r"^Btq_.*\n(\+.*\n)*", "", lib, flags=re.M)
    assert "pow(" not in sources[sources.index("Vclk"):]
    assert "time" not in re.sub(r"\*.*", "", lib)  # the model clock replaces ngspice's time


@pytest.mark.simulator
def test_verilog_a_compiles_and_parses(tmp_path, files, openvaf, admsxml):
    va = tmp_path / "pmtj35_demo.va"
    va.write_text(files["pmtj35_demo.va"])
    osdi = compile_va(va)
    assert osdi.is_file() and osdi.stat().st_size > 1000
    admsxml_check(va)


def test_printers_are_strict():
    x = sp.Symbol("x", real=True)
    a = sp.Symbol("a", positive=True)
    for printer in (VerilogAPrinter(), NgspicePrinter()):
        with pytest.raises(UnsupportedExpressionError, match="not provably positive"):
            printer.code(x ** sp.Rational(1, 3))
        with pytest.raises(UnsupportedExpressionError, match="besselj"):
            printer.code(sp.besselj(1, x))
        assert printer.code(sp.log(a)) == "ln(a)"
        assert printer.code(x**3) == "(x*x*x)"
        assert printer.code(x**-2) == "1.0/(x*x)"
        assert printer.code(a**1.5) == "pow(a, 1.5)"
        assert printer.code(sp.Piecewise((x, x > 0), (0, True))) == "(((x > 0.0)) ? (x) : (0.0))"


def test_numbers_round_trip():
    for v in (1.0, 1e-9, 1.2566370612720e-06, 176085962784.0, 1 / 3):
        assert float(format_number(v)) == v
    assert format_number(3) == "3.0"
    with pytest.raises(UnsupportedExpressionError):
        format_number(float("inf"))


def test_hoisting_keeps_the_equations(files):
    # hoisted and original IR give the same numbers (hoisting is exact algebra)
    import numpy as np

    from compactgen.reference import ReferenceModel

    ir = example_card().ir()
    a = ReferenceModel(ir, {"state0": -1.0})
    b = ReferenceModel(ir.hoisted(), {"state0": -1.0})
    rng = np.random.default_rng(1)
    for _ in range(20):
        y = rng.normal(size=3)
        y /= np.linalg.norm(y)
        v = rng.uniform(-1, 1)
        np.testing.assert_allclose(a.rhs({"t": v, "b": 0.0}, y), b.rhs({"t": v, "b": 0.0}, y), rtol=1e-12)
