"""Rendered Verilog-A and ngspice text: golden files, determinism, compilers, printer rules."""
from __future__ import annotations

import re

import pytest
import sympy as sp

from compactgen.model.lowering import hoisted
from compactgen.targets import render
from compactgen.jobs.build import build_files
from compactgen.errors import UnsupportedExpressionError
from compactgen.targets.printing import NgspicePrinter, VerilogAPrinter
from compactgen.targets.printing.base import format_number
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
    assert "pow(" not in sources[sources.index("Vclk"):sources.index(".ends")]  # one section's subcircuit
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

    from compactgen.harness.reference import ReferenceModel

    ir = example_card().ir()
    a = ReferenceModel(ir, {"state0": -1.0})
    b = ReferenceModel(hoisted(ir), {"state0": -1.0})
    rng = np.random.default_rng(1)
    for _ in range(20):
        y = rng.normal(size=3)
        y /= np.linalg.norm(y)
        v = rng.uniform(-1, 1)
        np.testing.assert_allclose(a.rhs({"t": v, "b": 0.0}, y), b.rhs({"t": v, "b": 0.0}, y), rtol=1e-12)




def _closing(text: str, i: int) -> int:
    """Index of the parenthesis that closes the one at ``i``."""
    depth = 0
    for j in range(i, len(text)):
        depth += {"(": 1, ")": -1}.get(text[j], 0)
        if depth == 0:
            return j
    raise ValueError(f"unbalanced: {text}")


def _python_ternaries(expr: str) -> str:
    """ngspice's ``(((c)) ? (a) : (b))`` -> Python's ``(a if c else b)``, nested ones included."""
    start = expr.find("(((")
    while start >= 0:
        cond_end = _closing(expr, start + 1)
        rest = expr[cond_end + 1:]
        if not rest.startswith(" ? ("):
            start = expr.find("(((", start + 1)
            continue
        a0 = cond_end + 4
        a1 = _closing(expr, a0)
        b0 = a1 + 4  # ") : ("
        b1 = _closing(expr, b0)
        cond = expr[start + 2:cond_end]
        new = (f"({_python_ternaries(expr[a0 + 1:a1])} if {_python_ternaries(cond)} "
               f"else {_python_ternaries(expr[b0 + 1:b1])})")
        expr = expr[:start] + new + expr[b1 + 2:]
        start = expr.find("(((")
    return expr.replace("&&", " and ").replace("||", " or ")


@pytest.mark.parametrize("name", ["pmtj35_demo", "sot50_demo", "dwtrack_demo"])
def test_ngspice_runtime_numbers_are_of_ordinary_size(name):
    # measured: ngspice B-source arithmetic loses a wall velocity by a factor 6e4 when a ratio of
    # two 1e-51 parameter products is left inside the expression; every .param the B-sources read
    # must be of ordinary size at the card's values
    import re

    from compactgen.harness.reference import ReferenceModel

    ir = example_card(name).ir()
    lib = render.ngspice(ir)
    sub = lib[lib.index(".subckt"):lib.index(".ends")]  # the subcircuit (each section holds a copy)
    bsrc = "\n".join(ln for ln in sub.splitlines() if ln.startswith(("B", "+ ")) and "I=" in ln or ln.startswith("+ "))
    used = set(re.findall(r"\b(kq\d+|ks_\w+|kis_\w+)\b", bsrc))
    assert used
    values = {}
    env = {s.name: s.default for s in ir.params}
    num = ReferenceModel(ir).num
    env.update({str(k): float(v) for k, v in num.items()})
    import math

    for m in re.finditer(r"^\.param (\w+)=\{(.*)\}$", sub, re.M):
        expr = m.group(2)
        expr = _python_ternaries(expr)
        expr = re.sub(r"\bln\(", "math.log(", expr)
        expr = re.sub(r"\b(sqrt|pow|acos|tanh|sin|cos|exp)\(", r"math.\1(", expr)
        env[m.group(1)] = eval(expr, {"math": math, "max": max, "min": min, "abs": abs}, env)
        values[m.group(1)] = env[m.group(1)]
    for k in used:
        v = abs(values[k])
        assert v == 0 or 1e-20 < v < 1e20, (k, values[k])
