"""verify.html and changes.html plots: tick labels without an additive offset, and axis labels that
say what is plotted (reference solver only; no simulator)."""
from __future__ import annotations

import dataclasses
import re

import numpy as np
import pytest

from compactgen.harness import verify_report as report
from compactgen.targets.plots import plain_ticks, pyplot
from compactgen.harness.reference import Trace
from compactgen.model.evaluate import figures
from compactgen.jobs.release.changes import _series as curve_series
from compactgen.jobs.release.curves import CurveTable
from compactgen.harness.verify import run_suite

from helpers import example_card


@pytest.fixture(scope="module")
def sot_runs():
    card = example_card("sot50_demo")
    ir = card.ir()
    benches = [b for b in card.device.benches(ir, card.values) if b.name in ("read_parallel", "line_r")]
    result = run_suite(ir, benches, simulators=())
    return ir, {r.bench.name: r for r in result.runs}


def test_read_plot_is_labelled_for_the_path_it_measures(sot_runs):
    ir, runs = sot_runs
    run = runs["read_parallel"]
    tr = run.traces["reference"]
    v, r, _, ylabel = report._series(tr, "resistance", run.bench)
    # plotted: V(t)/I(t). The junction alone (the bench metric R(t-mid)) is (V(t) - V(mid))/I(t); the rest
    # is the two halves of the write line (r_line/2 each, both ends at 0 V) in parallel
    ok = np.abs(v) > 1e-9
    r_junction = (tr.voltages["t"][ok] - tr.voltages["mid"][ok]) / tr.currents["t"][ok]
    assert ok.sum() >= 10
    assert np.allclose(r[ok] - r_junction, figures(ir)["r_line"] / 4, rtol=1e-6, atol=0)
    assert ylabel.startswith("read-port R = V(t)/I(t) [ohm]") and "junction + line parts w1-mid || mid-w2" in ylabel
    line = runs["line_r"]
    assert report._series(line.traces["reference"], "resistance", line.bench)[3].startswith("V(w1)/I(w1) [ohm]")


def _flat(v: np.ndarray, r0: float) -> Trace:
    """A read sweep whose resistance is flat to 1e-7 (as a bias-independent junction is)."""
    return Trace(np.zeros_like(v), {"t": v, "mid": np.zeros_like(v)}, {"t": v / (r0 * (1 + 1e-7 * v))}, {})


def test_flat_resistance_axis_has_no_offset(sot_runs):
    _, runs = sot_runs
    run = runs["read_parallel"]
    v = run.traces["reference"].voltages["t"]
    flat = dataclasses.replace(run, traces={"reference": _flat(v, 1234.5), "ngspice": _flat(v, 1234.5 * (1 + 1e-9))})
    fig = report.bench_figure(flat)
    fig.canvas.draw()
    assert fig.axes[0].yaxis.get_major_formatter().offset != 0  # what matplotlib would print: "+1.2345e3"
    plain_ticks(fig)
    fig.canvas.draw()
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            fmt = axis.get_major_formatter()
            assert fmt.offset == 0 and not fmt.get_useOffset()
    # the resistance panel's tick labels are the values themselves (1234.5 ohm), not offsets from them
    ticks = [re.search(r"-?[0-9.]+", t.get_text().replace("\u2212", "-")) for t in fig.axes[0].get_yticklabels()]
    values = [float(m.group()) for m in ticks if m]
    assert values and all(abs(x - 1234.5) < 1e-3 for x in values)
    pyplot().close(fig)


def test_comparison_plot_labels_the_ratio_it_plots():
    x = np.linspace(-0.2, 0.2, 5)
    table = CurveTable("voltage_t", "V", x, {"reference:current_t": ("A", x / 5000.0)})
    xs, r, xlabel, ylabel = curve_series(table, "resistance")
    assert ylabel == "V(t)/I(t) [ohm]" and xlabel == "voltage_t [V]"
    assert np.allclose(r[np.abs(x) > 1e-9], 5000.0)
