"""The build caches (compactgen/cache.py): a build with a warm cache writes exactly the files of a
build with an empty one, a damaged or unwritable cache is never more than a miss, the render
cache's key holds what the printed expressions depend on, and the unit factors learnt from pint
give pint's own floats bit for bit."""
from __future__ import annotations

import json
import math
from pathlib import Path

import pytest

from compactgen import cache
from compactgen.targets import render
from compactgen.model import units
from compactgen.jobs.build import build_files
from compactgen.model.card import load_card, parse_card
from compactgen.devices import get_kind, kinds

from helpers import EXAMPLES

CARDS = ("pmtj35_demo", "sot50_demo", "dwtrack_demo")


@pytest.fixture
def cache_root(tmp_path, monkeypatch) -> Path:
    """An empty cache root of its own, and the learnt units read from it afresh."""
    root = tmp_path / "cache"
    monkeypatch.setenv(cache.CACHE_ENV, str(root))
    monkeypatch.setattr(units, "_LEARNT", units._Learnt())
    return root


@pytest.fixture
def expression_calls(monkeypatch) -> list:
    """Every call of render._ngspice_expressions (the sympy work the render cache saves)."""
    calls = []
    real = render._ngspice_expressions

    def counted(ir, *args):
        calls.append(ir.name)
        return real(ir, *args)

    monkeypatch.setattr(render, "_ngspice_expressions", counted)
    return calls


def build(card_path: Path, compiled: bool = True) -> dict[str, str | bytes]:
    """Every file of a build from the card file, as a new process would do it: the learnt units
    are read from the cache folder again."""
    units._LEARNT = units._Learnt()
    card = load_card(card_path)
    files = build_files(card, compiled=compiled)
    files[f"{card.name}.card.toml"] = card.text
    return files


def cache_files(root: Path) -> dict[str, list[str]]:
    return {d.name: sorted(p.name for p in d.iterdir()) for d in sorted(root.iterdir()) if d.is_dir()}


@pytest.mark.parametrize("name", CARDS)
def test_warm_cache_build_is_byte_identical(name, cache_root, expression_calls, monkeypatch):
    cold = build(EXAMPLES / f"{name}.toml")
    assert expression_calls == [name]
    stored = cache_files(cache_root)
    assert stored["render"] and stored["units"]
    # the warm build reads everything it can from the cache, pint included: it must not need it
    monkeypatch.setattr(units, "registry", lambda: pytest.fail("pint was used with a warm cache"))
    warm = build(EXAMPLES / f"{name}.toml")
    assert expression_calls == [name]  # printed once, read back the second time
    assert warm == cold
    assert cache_files(cache_root) == stored  # nothing new, no temporary files left behind


def test_damaged_cache_entries_are_rebuilt(cache_root, expression_calls):
    card = EXAMPLES / "sot50_demo.toml"
    cold = build(card)
    entries = sorted(p for p in cache_root.rglob("*.json"))
    assert {p.parent.name for p in entries} == {"render", "units", "numbers"}
    damages = [
        lambda text: text[: len(text) // 2],  # truncated
        lambda text: "",  # empty
        lambda text: "\x00\x01 not json",
        lambda text: "[1, 2, 3]",  # JSON, not an entry
        lambda text: json.dumps({**json.loads(text), "key": "another key"}),  # seal no longer matches
        lambda text: text.replace("e", "f", 1) if "e" in text else text + " ",  # one character changed
    ]
    rounds = -(-len(damages) // len(entries))  # every kind of damage on some entry
    for r in range(max(rounds, 2)):
        for j, p in enumerate(entries):
            p.write_text(damages[(j + r * len(entries)) % len(damages)](p.read_text()))
        assert build(card) == cold, f"round {r}"
        for p in entries:  # each entry was written again, whole
            assert cache.read_json(p) is not None, (r, p.name)
    assert len(expression_calls) == 1 + max(rounds, 2)


def test_unwritable_cache_is_only_a_miss(tmp_path, monkeypatch, expression_calls):
    """(Without the compiled model: compiling goes through the osdi cache, which needs its folder.)"""
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file where the cache root should be")
    monkeypatch.setenv(cache.CACHE_ENV, str(blocker))
    monkeypatch.setattr(units, "_LEARNT", units._Learnt())
    first = build(EXAMPLES / "sot50_demo.toml", compiled=False)
    second = build(EXAMPLES / "sot50_demo.toml", compiled=False)
    assert first == second
    assert expression_calls == ["sot50_demo", "sot50_demo"]
    assert blocker.read_text() == "a file where the cache root should be"


def _edited(name: str, key: str, factor: float) -> str:
    """The example card's text with the "<number> <unit>" value of ``key`` times ``factor``."""
    lines = []
    for line in (EXAMPLES / f"{name}.toml").read_text().splitlines():
        if line.startswith(f"{key} = \""):
            number, rest = line.split('"')[1].split(" ", 1)
            line = f'{key} = "{float(number) * factor!r} {rest}"' + line.split('"', 2)[2]
        lines.append(line)
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("name", ["pmtj35_demo", "dwtrack_demo"])
def test_render_cache_key(name, cache_root, tmp_path, monkeypatch, expression_calls):
    """A value that reaches no printed expression (ra: the junction's scale is a parameter of the
    library) finds the entry of the original card; one that changes the temperature-node scales
    (ms) does not.  Either way the library equals one printed with an empty cache."""
    base = parse_card((EXAMPLES / f"{name}.toml").read_text(), name)
    render.ngspice_context(base.ir())
    assert expression_calls == [name]
    for key, hit in (("ra", True), ("ms", False)):
        card = parse_card(_edited(name, key, 1.05), f"{name} with {key} x 1.05")
        assert card.values[key] != base.values[key]
        before = len(expression_calls)
        warm = render.ngspice_text(render.ngspice_context(card.ir()))
        assert (len(expression_calls) == before) == hit, key
        if hit:  # read from the entry of another card: the same text as printed afresh
            monkeypatch.setenv(cache.CACHE_ENV, str(tmp_path / f"empty-{key}"))
            assert render.ngspice_text(render.ngspice_context(card.ir())) == warm
            monkeypatch.setenv(cache.CACHE_ENV, str(cache_root))


def test_structure_digest_ignores_parameter_values_only():
    import dataclasses

    import sympy as sp

    a = load_card(EXAMPLES / "pmtj35_demo.toml")
    b = a.with_values({"ra": a.values["ra"] * 2, "eta": 0.5})
    ir_a, ir_b = a.ir(), b.ir()
    assert ir_a.digest() != ir_b.digest()
    assert ir_a.structure_digest() == ir_b.structure_digest()
    sym, expr = ir_a.derived[0]
    changed = dataclasses.replace(ir_a, derived=[(sym, 2 * expr)] + ir_a.derived[1:])
    assert changed.structure_digest() != ir_a.structure_digest()
    renamed = dataclasses.replace(ir_a, constants={**ir_a.constants, sp.Symbol("c_extra", positive=True): 1.0})
    assert renamed.structure_digest() != ir_a.structure_digest()


def _unit_cases():
    """(text, SI unit) pairs: every parameter of every kind at its default and at other values,
    written in its card unit and in other units of the same dimension, signs and zeros."""
    cases = set()
    for key in kinds():
        for spec in get_kind(key).table():
            unit = spec.card_unit or spec.unit
            if unit in ("1", ""):
                continue
            for x in (spec.default, spec.lo, spec.hi, 0.37 * (spec.hi if math.isfinite(spec.hi) else 1.0)):
                if math.isfinite(x):
                    cases.add((f"{units.from_si(x, spec.unit, unit)!r} {unit}", spec.unit))
    cases |= {("1.3 nm", "m"), ("13 angstrom", "m"), ("-0.5 V", "V"), ("-0.0 nm", "m"), ("0 nm", "m"),
              ("20 mT", "A/m"), ("-35.5 mT", "A/m"), ("40 Oe", "A/m"), ("1.5 kOe", "A/m"),
              ("2 T/s", "A/m/s"), ("7 Oe/s", "A/m/s"), ("12.5 %", "1"), ("27.0 degC", "K"),
              ("-40 degC", "K"), ("300 K", "K"), ("1e3 A/m", "A/m"), ("1.1e+6 A/m", "A/m"),
              ("4.0 ohm*um^2", "ohm*m^2"), ("20.0 MA/cm^2", "A/m^2"), ("1.15 mJ/m^2", "J/m^2"),
              ("15 pJ/m", "J/m"), ("3 mJ/m^3", "J/m^3"), ("0.25 rad", "rad"), ("10 deg", "rad")}
    return sorted(cases)


def test_learnt_unit_factors_give_pints_floats(cache_root):
    cases = _unit_cases()
    assert len(cases) > 50
    for text, unit in cases:
        want = units._to_si_pint(text, unit)
        first = units.to_si(text, unit)  # read by pint, factor learnt
        units._LEARNT = units._Learnt()  # a new process: from the cache file
        again = units.to_si(text, unit)
        assert first.hex() == want.hex() and again.hex() == want.hex(), (text, unit)
    learnt = json.loads(next((cache_root / "units").iterdir()).read_text())
    assert len(learnt["factors"]) > 20  # most went through a factor, not a remembered value
    assert all(not k.startswith("to_si\x1fdegC") for k in learnt["factors"])  # offset units never do


def test_learnt_conversions_from_si_give_pints_floats(cache_root):
    ureg = units.registry()
    for key in kinds():
        for spec in get_kind(key).table():
            unit = spec.card_unit or spec.unit
            if unit == spec.unit or unit in ("1", ""):
                continue
            for x in (spec.default, spec.lo, spec.hi, 1.2345e-3 * spec.hi, -spec.default):
                if not math.isfinite(x):
                    continue
                if spec.unit == "A/m" and ureg.Quantity(1.0, unit).check(ureg.tesla.dimensionality):
                    want = float(ureg.Quantity(x * units.MU0, "T").to(unit).magnitude)
                elif spec.unit == "K" and unit == "degC":
                    want = x - 273.15
                else:
                    want = float(ureg.Quantity(x, spec.unit).to(unit).magnitude)
                for _ in range(2):  # learnt, then applied
                    assert units.from_si(x, spec.unit, unit).hex() == want.hex(), (x, spec.unit, unit)
                    units._LEARNT = units._Learnt()
    for a, b, x in (("kohm", "ohm", 1.0), ("MA/cm^2", "A/m^2", 1.0), ("nm", "m", 1.0), ("ns", "s", 3.3),
                    ("degC", "K", 25.0)):
        want = float(ureg.Quantity(x, a).to(b).magnitude)
        assert units.convert(x, a, b).hex() == want.hex() and units.convert(x, a, b).hex() == want.hex()
