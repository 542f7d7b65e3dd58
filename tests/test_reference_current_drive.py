"""The reference solver driven by a current waveform (a junction current taken from a circuit run)
reproduces the voltage-driven solution that carried that current."""
from __future__ import annotations

import numpy as np
import pytest

from compactgen.harness.benches import Pulse, crossing_time
from compactgen.harness.reference import ReferenceModel

from helpers import example_card


class Interpolated:
    def __init__(self, t, v, corners):
        self.t, self.v, self.corners = t, v, corners

    def value(self, x):
        return float(np.interp(x, self.t, self.v))

    def breakpoints(self, t_end):
        return [c for c in self.corners if c < t_end]


def test_current_drive_reproduces_the_voltage_driven_write():
    ir = example_card().ir()
    pulse = Pulse(0.0, 0.5, 0.1e-9, 50e-12, 50e-12, 5e-9)
    grid = np.linspace(0.0, 6e-9, 6001)
    by_v = ReferenceModel(ir, {"state0": -1.0}).transient({"t": pulse}, 6e-9, t_eval=grid)
    drive = Interpolated(by_v.t, by_v.currents["t"], pulse.breakpoints(6e-9))
    by_i = ReferenceModel(ir, {"state0": -1.0}).transient({}, 6e-9, t_eval=grid, currents={"t": drive})
    np.testing.assert_allclose(by_i.currents["t"], by_v.currents["t"], rtol=1e-9, atol=1e-15)
    # the current is interpolated linearly on a 1 ps grid: voltages within 1 uV, switching time 1e-5
    assert np.max(np.abs(by_i.voltages["t"] - by_v.voltages["t"])) < 1e-6
    t_v = crossing_time(by_v.t, by_v.states["mz"], 0.0, 0.1e-9, +1)
    t_i = crossing_time(by_i.t, by_i.states["mz"], 0.0, 0.1e-9, +1)
    assert t_i == pytest.approx(t_v, rel=1e-5)


def test_current_drive_refuses_a_terminal_driven_twice_or_every_terminal():
    ir = example_card().ir()
    model = ReferenceModel(ir)
    zero = Interpolated(np.array([0.0, 1e-9]), np.array([0.0, 0.0]), [])
    with pytest.raises(ValueError, match="not voltage-driven too"):
        model.transient({"t": zero}, 1e-9, currents={"t": zero})
    with pytest.raises(ValueError, match="at least one terminal"):
        model.transient({}, 1e-9, currents={"t": zero, "b": zero})
