"""A user's device, not only ours: random cards inside the documented ranges build and verify or
say why (issue: works on the user's device).  The benches' physics is checked elsewhere; here the
outcome classes are: no crash, no timeout, no NaN judged a pass, a not-applicable bench always
carries its reason."""
from __future__ import annotations


import numpy as np
import pytest

from compactgen.harness.benches import Bench, Metric
from compactgen.model.card import parse_card, starter_card
from compactgen.jobs.sample_cards import draw_values, run_card, sweep, table
from compactgen.devices.stt_mtj import POINT_BUDGET
from compactgen.harness.verify import _compare, run_suite


def test_nan_is_never_a_pass() -> None:
    m = Metric("switching time", "s", lambda tr: float("nan"), 1e-2, 0.0, "test")
    assert not m.agrees(float("nan"), float("nan"))
    assert not m.agrees(1.0, float("nan"))
    bench = Bench("b", "", "tran", {}, [m])
    rows = _compare(bench, {"reference": object(), "ngspice": object()}, {}, ("ngspice",))
    assert not rows[0].passed


def test_draws_stay_inside_the_documented_ranges() -> None:
    from compactgen.devices.base import get_kind

    rng = np.random.default_rng(7)
    for kind in ("stt-mtj", "sot-mtj", "dw-mtj"):
        specs = {s.name: s for s in get_kind(kind).param_specs()}
        for _ in range(20):
            for name, value in draw_values(kind, rng).items():
                specs[name].check(value)  # raises outside the documented range


def _starter_with(kind: str, **values: float):
    card = parse_card(starter_card(kind), f"<{kind}>")
    return card.with_values(values)


def test_a_write_beyond_the_bias_limit_is_not_applicable_not_a_crash() -> None:
    """stt-mtj starter with ra = 5000 ohm um^2: the writes need more than v_max."""
    card = _starter_with("stt-mtj", ra=5000e-12)
    ir = card.ir()
    benches = card.device.benches(ir, card.values)
    writes = [b for b in benches if b.name.startswith("write_")]
    assert writes and all(b.not_applicable for b in writes)
    assert all("v_max" in b.not_applicable for b in writes)
    result = run_suite(ir, benches, simulators=())
    assert result.passed and result.exit_status == 4


@pytest.mark.parametrize("kind, alpha", [("stt-mtj", 1e-4), ("sot-mtj", 2e-3)])
def test_low_damping_stays_within_the_step_budget(kind: str, alpha: float) -> None:
    for _ in (1,):
        card = _starter_with(kind, alpha=alpha)
        ir = card.ir()
        for b in card.device.benches(ir, card.values):
            if b.analysis == "tran" and not b.not_applicable:
                assert b.t_stop / b.max_step <= POINT_BUDGET * 1.01, (kind, b.name)
            if b.not_applicable:
                assert "time steps" in b.not_applicable or "limit" in b.not_applicable, b.not_applicable


def test_seeded_reference_sweep_has_no_crash_and_no_failure() -> None:
    outcomes = sweep(["stt-mtj", "sot-mtj"], 4, seed=11, sims=(), limit=240.0)
    text = table(outcomes)
    assert not [o for o in outcomes if o.outcome in ("crashed", "timeout", "failed")], text
    assert [o for o in outcomes if o.outcome == "passed"], text  # the sweep tried devices, not only refusals
    for o in outcomes:
        assert all(": " in reason and len(reason) > 20 for reason in o.not_applicable)


@pytest.mark.simulator
@pytest.mark.slow
def test_random_cards_in_every_simulator(ngspice, vacask) -> None:
    rng = np.random.default_rng([5, 0])
    passed = 0
    for kind in ("stt-mtj", "sot-mtj"):
        tried = 0
        for _ in range(30):  # draws until one card builds
            o = run_card(kind, tried, draw_values(kind, rng), ("ngspice", "vacask"))
            if o.outcome == "refused":
                continue
            tried += 1
            assert o.outcome == "passed", (o.outcome, o.reason, o.failures)
            passed += 1
            break
    assert passed == 2
