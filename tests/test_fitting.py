"""Forward-point fitting: parameters recovered from points made with known invented values."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from selector.errors import InputDataError
from selector.physics.devices import thermal_voltage_v
from selector.physics.fitting import fit_forward_points


def points(is_a, n, rs_ohm, currents, temperature_c=25.0):
    vt = float(thermal_voltage_v(temperature_c))
    currents = np.asarray(currents, dtype=float)
    return n * vt * np.log1p(currents / is_a) + currents * rs_ohm, currents


def test_two_points_recover_is_and_n():
    voltage, current = points(3e-9, 1.7, 0.0, [1e-3, 50e-3])
    fit = fit_forward_points(voltage, current)
    assert fit.is_a == pytest.approx(3e-9, rel=1e-6)
    assert fit.n == pytest.approx(1.7, rel=1e-7)
    assert fit.rs_ohm == 0.0
    assert fit.rms_residual_v < 1e-9


def test_three_or_more_points_recover_series_resistance_too():
    voltage, current = points(2e-12, 1.05, 0.35, [1e-4, 1e-3, 1e-2, 0.1, 0.5], temperature_c=40.0)
    fit = fit_forward_points(voltage, current, temperature_c=40.0)
    assert fit.is_a == pytest.approx(2e-12, rel=1e-6)
    assert fit.n == pytest.approx(1.05, rel=1e-7)
    assert fit.rs_ohm == pytest.approx(0.35, rel=1e-6)
    assert fit.residuals_v.shape == (5,) and np.max(np.abs(fit.residuals_v)) < 1e-9


def test_slope_per_decade_is_59_5_mV_at_n_1_300K():
    # n·k·T/q·ln 10 = 59.5 mV at n = 1, 300 K from scipy.constants ("about 60 mV/decade"
    # is common practice, no source): a 59.5 mV/decade pair fits n = 1.
    per_decade = constants.k * 300.0 / constants.e * np.log(10.0)
    fit = fit_forward_points([0.60, 0.60 + per_decade], [1e-3, 1e-2], temperature_c=300.0 - 273.15)
    assert fit.n == pytest.approx(1.0, rel=1e-6)


def test_noisy_points_leave_residuals():
    voltage, current = points(5e-9, 1.9, 0.1, [1e-4, 1e-3, 1e-2, 1e-1])
    voltage = voltage + np.array([2e-3, -2e-3, 2e-3, -2e-3])
    fit = fit_forward_points(voltage, current)
    assert 1e-4 < fit.rms_residual_v < 3e-3


@pytest.mark.parametrize(
    "voltage, current, message",
    [
        ([0.6], [1e-3], "forward points: at least 2 (voltage, current) points are needed"),
        ([0.6, 0.7], [1e-3], "forward points: 2 voltages but 1 currents"),
        ([0.6, 0.7], [1e-3, 1e-3], "forward points: two points have the same current"),
        ([0.7, 0.6], [1e-3, 1e-2], "forward points: the voltage must rise with the current"),
        ([0.6, -0.7], [1e-3, 1e-2], "forward point 2: voltage -0.7 V is not between 0 and 100 V"),
        ([0.6, 0.7], [1e-3, -1e-2], "forward point 2: current -0.01 A is not between 1 fA and 1 kA"),
        ([0.6, float("nan")], [1e-3, 1e-2], "forward points: every voltage and current must be a finite number"),
    ],
)
def test_bad_points_give_one_clear_message(voltage, current, message):
    with pytest.raises(InputDataError) as caught:
        fit_forward_points(voltage, current)
    assert str(caught.value) == message
