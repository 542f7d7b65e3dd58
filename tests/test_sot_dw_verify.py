"""`compactgen verify` of the sot-mtj and dw-mtj demo cards: every bench passes in ngspice (B-source
library and compiled model) and in VACASK against the reference, and the benches' expectations hold (published closed forms: the
exact SOT torque balance, the 1D wall steady state, Schryer & Walker's field-driven speeds)."""
from __future__ import annotations

from pathlib import Path

import pytest

from compactgen.model.card import load_card
from compactgen.harness.verify import run_suite

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def run(card_name: str):
    card = load_card(EXAMPLES / card_name)
    ir = card.ir()
    benches = card.device.benches(ir, card.values)
    result = run_suite(ir, benches, simulators=("ngspice", "ngspice-osdi", "vacask"))
    print(result.table())
    return benches, result


@pytest.mark.simulator
@pytest.mark.slow
def test_sot_suite_passes_in_every_simulator(ngspice, ngspice_osdi, vacask):
    benches, result = run("sot50_demo.toml")
    assert result.passed, result.table()
    names = {b.name for b in benches}
    assert {"line_r", "read_parallel", "read_antiparallel", "threshold_ramp"} <= names
    writes = [b for b in benches if b.name.startswith("write_")]
    assert len(writes) == 6  # three amplitudes and the four signs of J * hx
    for run_ in result.runs:
        assert set(run_.traces) == {"reference", "ngspice", "ngspice-osdi", "vacask"}


@pytest.mark.simulator
@pytest.mark.slow
def test_dw_suite_passes_in_every_simulator(ngspice, ngspice_osdi, vacask):
    benches, result = run("dwtrack_demo.toml")
    assert result.passed, result.table()
    names = {b.name for b in benches}
    assert {"velocity_0.1jhalf", "velocity_3jhalf", "field_0.5hw", "field_2hw", "hold_0.8jdep", "pulse_train",
            "long_pulse"} <= names
    levels = [r for r in result.rows if r.bench == "pulse_train" and r.metric.startswith("R ")]
    assert len(levels) == 5
    values = [r.reference for r in levels]
    assert all(b < a for a, b in zip(values[:-1], values[1:]))  # the weight walks down step by step
