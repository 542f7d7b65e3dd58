"""Figures beyond the double range (retention of a large pillar): built, printed and compared
without overflow, in one text form (e-notation with the true exponent) everywhere."""
from __future__ import annotations

import json
import math

import pytest

from compactgen.model import bignum
from compactgen.statistics.analytic import retention_time
from compactgen.model.card import starter_card
from compactgen.cli import main
from compactgen.jobs.release.changes import change_text, value_text
from compactgen.jobs.release.compare import compare_figures
from compactgen.model.evaluate import figures

from helpers import card_with


def _strict_json(text: str):
    def refuse(name):
        raise ValueError(f"non-standard JSON constant {name}")

    return json.loads(text, parse_constant=refuse)


@pytest.fixture(scope="module")
def big_card():
    return card_with("stt-mtj", "bigpillar", diameter='"300 nm"')


def test_retention_of_a_large_pillar_keeps_its_exponent(big_card):
    figs = figures(big_card.ir())
    delta = figs["delta"]
    assert delta > 1000  # far beyond exp's double range (709)
    ret = figs["retention"]
    assert math.isinf(ret) and bignum.is_overflow(ret)
    # Neel-Brown tau0 exp(Delta), tau0 = 1 ns: log10 = -9 + Delta / ln 10
    assert ret.log10 == pytest.approx(-9 + delta / math.log(10), rel=1e-12)
    assert retention_time(delta).log10 == pytest.approx(ret.log10, rel=1e-12)
    assert retention_time(20.0) == pytest.approx(1e-9 * math.exp(20.0))  # ordinary values stay floats
    assert not bignum.is_overflow(retention_time(20.0))


def test_build_of_a_large_pillar_writes_datasheet_and_strict_json(tmp_path, big_card):
    card = tmp_path / "big.toml"
    card.write_text(starter_card("stt-mtj", "bigpillar").replace('diameter = "40.0 nm"', 'diameter = "300 nm"'))
    out = tmp_path / "out"
    assert main(["build", str(card), "-o", str(out)]) == 0
    ret = figures(big_card.ir())["retention"]
    text = bignum.sci(ret)
    exponent = math.floor(ret.log10)
    assert text.endswith(f"e+{exponent}")
    md = (out / "bigpillar.md").read_text()
    assert f"| `retention` | {text} s |" in md
    assert "inf" not in md.lower().replace("info", "")
    manifest = _strict_json((out / "manifest.json").read_text())
    assert manifest["figures"]["retention"]["log10"] == pytest.approx(ret.log10, rel=1e-11)
    assert isinstance(manifest["figures"]["delta"], float)


def test_sci_text_of_an_overflow():
    assert bignum.sci(bignum.Overflow(400.0)) == "1e+400"
    assert bignum.sci(bignum.Overflow(400 + math.log10(2.5)), 3) == "2.5e+400"
    assert bignum.sci(bignum.Overflow(400 + math.log10(9.9999999)), 3) == "1e+401"
    assert bignum.exp(1000.0, 1e-9).log10 == pytest.approx(-9 + 1000 / math.log(10))


def _manifest(**values):
    return {"figures": {k: dict(bignum.to_record(v), unit="s", desc="") for k, v in values.items()}}


def test_release_comparison_judges_overflowing_retention_on_its_log_scale():
    ln2 = math.log(2)
    old = _manifest(retention=bignum.Overflow(1000.0), dwell_brown=1e300)
    same = compare_figures(old, _json_round_trip(old))
    assert [r.status for r in same] == ["identical", "identical"]
    near = _manifest(retention=bignum.Overflow(1000.0 + 0.2), dwell_brown=bignum.Overflow(300.0 + 0.1))
    rows = {r.name: r for r in compare_figures(old, _json_round_trip(near))}
    # the retention band is "a factor 2" on a log scale: 0.2 decades is a factor 1.58
    assert rows["retention"].error == pytest.approx(0.2 * math.log(10) / ln2)
    assert rows["retention"].status == "within band"
    assert rows["dwell_brown"].error == pytest.approx(0.1 * math.log(10) / ln2)
    far = _manifest(retention=bignum.Overflow(1001.0), dwell_brown=1e300)
    r = next(r for r in compare_figures(old, _json_round_trip(far)) if r.name == "retention")
    assert r.status == "OUTSIDE BAND" and r.error == pytest.approx(math.log(10) / ln2)
    assert change_text(r) == "x 10"
    assert value_text(r.new, "s").startswith("1e+1001 s (") and "e+99" in value_text(r.new, "s")


def _json_round_trip(manifest):
    return _strict_json(json.dumps(manifest, allow_nan=False))
