"""Forward-element parameters fitted to datasheet (voltage, current) points.

Two points fix the saturation current and emission coefficient of
``V = n·Vt·ln(1 + I/Is) + I·rs`` (DESIGN §3 forward element at one temperature); three
or more points also fix the series resistance. The fit is a least-squares fit of the
voltages (``scipy.optimize.least_squares``) over ``ln Is``, ``n`` and ``rs``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares

from selector.errors import InputDataError
from selector.physics.devices import thermal_voltage_v


@dataclass(frozen=True)
class ForwardFit:
    """Fitted forward-element parameters at the points' temperature.

    Attributes
    ----------
    is_a : float [A]
    n : float [1]
    rs_ohm : float [Ω]
        0 when fitted from two points.
    residuals_v : ndarray [V]
        Model voltage minus given voltage, per point.
    rms_residual_v : float [V]
    """

    is_a: float
    n: float
    rs_ohm: float
    residuals_v: np.ndarray
    rms_residual_v: float


def _checked_points(forward_voltage_v, forward_current_a) -> tuple[np.ndarray, np.ndarray]:
    voltage = np.asarray(forward_voltage_v, dtype=float).ravel()
    current = np.asarray(forward_current_a, dtype=float).ravel()
    if voltage.size != current.size:
        raise InputDataError(f"forward points: {voltage.size} voltages but {current.size} currents")
    if voltage.size < 2:
        raise InputDataError("forward points: at least 2 (voltage, current) points are needed")
    if not (np.all(np.isfinite(voltage)) and np.all(np.isfinite(current))):
        raise InputDataError("forward points: every voltage and current must be a finite number")
    for position, (v, i) in enumerate(zip(voltage, current, strict=True), start=1):
        if not (0.0 < v < 100.0):
            raise InputDataError(f"forward point {position}: voltage {v:g} V is not between 0 and 100 V")
        if not (1e-15 <= i <= 1e3):
            raise InputDataError(f"forward point {position}: current {i:g} A is not between 1 fA and 1 kA")
    order = np.argsort(current)
    voltage, current = voltage[order], current[order]
    if np.any(np.diff(current) <= 0):
        raise InputDataError("forward points: two points have the same current")
    if np.any(np.diff(voltage) <= 0):
        raise InputDataError("forward points: the voltage must rise with the current")
    return voltage, current


def fit_forward_points(
    forward_voltage_v, forward_current_a, temperature_c: float = 25.0
) -> ForwardFit:
    """Fit ``is_a``, ``n`` (and ``rs_ohm`` from 3+ points) to datasheet forward points.

    Model: ``V = n·Vt(T)·ln(1 + I/Is) + I·rs`` (DESIGN §3 at ``T = temperature_c``,
    ``Vt = k·T/q`` from ``scipy.constants``). The starting point comes from the two
    lowest-current points, where the series resistance matters least:
    ``n = ΔV/(Vt·Δln I)``.

    Parameters
    ----------
    forward_voltage_v : array-like [V]
    forward_current_a : array-like [A]
    temperature_c : float [°C]
        Temperature of the points; the fitted ``is_a`` holds there (use it as ``tnom_c``).

    Returns
    -------
    ForwardFit

    Raises
    ------
    InputDataError
        For fewer than two points, non-finite or out-of-range values, repeated currents,
        a voltage that does not rise with current, or parameters outside physical range.
    """
    voltage, current = _checked_points(forward_voltage_v, forward_current_a)
    if not (-55.0 <= temperature_c <= 200.0):
        raise InputDataError(f"forward points: temperature {temperature_c:g} °C is outside −55 … 200 °C")
    vt = float(thermal_voltage_v(temperature_c))
    with_resistance = voltage.size >= 3
    n0 = (voltage[1] - voltage[0]) / (vt * np.log(current[1] / current[0]))
    n0 = float(np.clip(n0, 0.5, 20.0))
    log_is0 = float(np.log(current[0]) - voltage[0] / (n0 * vt))
    log_i = np.log(current)

    def model(params: np.ndarray) -> np.ndarray:
        log_is, n = params[0], params[1]
        rs = params[2] if with_resistance else 0.0
        x = log_i - log_is
        log_term = np.maximum(x, 0.0) + np.log1p(np.exp(-np.abs(x)))
        return n * vt * log_term + current * rs

    start = [log_is0, n0] + ([0.0] if with_resistance else [])
    lower = [np.log(1e-40), 0.3] + ([0.0] if with_resistance else [])
    upper = [np.log(1.0), 30.0] + ([1e4] if with_resistance else [])
    start = np.clip(start, np.array(lower) + 1e-12, np.array(upper) - 1e-12)
    result = least_squares(
        lambda p: model(p) - voltage, start, bounds=(lower, upper), x_scale="jac", xtol=1e-15, ftol=1e-15, gtol=1e-15
    )
    if not result.success:
        raise InputDataError(f"forward points: the fit did not converge ({result.message})")
    residuals = model(result.x) - voltage
    return ForwardFit(
        is_a=float(np.exp(result.x[0])),
        n=float(result.x[1]),
        rs_ohm=float(result.x[2]) if with_resistance else 0.0,
        residuals_v=residuals,
        rms_residual_v=float(np.sqrt(np.mean(residuals**2))),
    )
