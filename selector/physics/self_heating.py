"""Each stack element at its self-heating steady state ``Tj = Ta + θ·V(I, Tj)·I``, and the
voltage of whole stacks so heated (DESIGN §3, self-heating).

Each element's junction temperature depends only on its own current and the ambient. For
the breakdown element ``V`` is linear in ``Tj`` on either side of ``tnom`` (the TC spread
bends it there), so ``Tj`` is closed-form on the side where the steady state lies; for the
forward element it is a scalar Newton solve whose loop gain ``θ·I·∂V/∂T`` is negative for
every physical parameter set. Where the loop gain reaches 1 there is no thermal steady
state (runaway) and the element is flagged. The element models themselves are
:mod:`selector.physics.devices`.

References
----------
.. [1] DESIGN §3, physics contract version 2 (forward and breakdown elements, self-heating).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.devices import (
    BREAKDOWN_FIELDS,
    FORWARD_FIELDS,
    ZERO_CELSIUS_K,
    breakdown_curve_terms,
    broadcast_signs,
    forward_voltage_slopes,
    part_fields,
)
from selector.physics.partset import PartSet

#: Iterations allowed for the forward element's junction temperature (bisection alone
#: narrows the bracket below the tolerance in 43).
_THERMAL_ITERATIONS = 80
#: Convergence of that solve [K].
_THERMAL_TOLERANCE_K = 1e-9
#: Highest junction temperature a solution may have [°C]. Far above every rating: a junction
#: that would settle above it has no physical steady state (the part is destroyed long
#: before), and the solvers report it as thermal runaway.
JUNCTION_CEILING_C = 5000.0
#: Loop gains at or above this count as runaway (no thermal steady state).
RUNAWAY_LOOP_GAIN = 1.0 - 1e-9


@dataclass(frozen=True)
class ElementState:
    """One element's operating state at a given current, self-heating included.

    Attributes
    ----------
    voltage_v : array [V]
        Element voltage at its own junction temperature.
    junction_c : array [°C]
        ``Tj = Ta + θ·V·I``.
    dv_dlog_current_v : array [V]
        Total ``I·dV/dI`` along the self-heated curve (thermal feedback included).
    isothermal_dv_dlog_current_v : array [V]
        ``I·∂V/∂I`` with the junction held where it is (what a fast ripple sees).
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T`` at constant current.
    loop_gain : array [1]
        Electro-thermal loop gain ``θ·I·∂V/∂T``.
    runaway : array of bool
        No thermal steady state (loop gain ≥ 1, or the temperature solve failed).
    """

    voltage_v: np.ndarray
    junction_c: np.ndarray
    dv_dlog_current_v: np.ndarray
    isothermal_dv_dlog_current_v: np.ndarray
    dv_dtemperature_v_per_k: np.ndarray
    loop_gain: np.ndarray
    runaway: np.ndarray


def self_heated_element(
    parts: PartSet,
    part_index: np.ndarray,
    log_current: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    junction_guess_c: np.ndarray | None = None,
    tc_spread_sign: np.ndarray | float | None = None,
) -> ElementState:
    """Element voltage with its junction at the self-heating steady state ``Tj = Ta + θ·V·I``.

    Breakdown element: ``V`` is linear in ``Tj`` on each side of ``tnom`` (slope
    ``tc ± s'·tc_tol``), so ``Tj`` is closed-form on the side where the steady state lies
    (:func:`_breakdown_steady_state`). Forward element: Newton on
    ``Tj − Ta − θ·I·V(I, Tj) = 0`` from ``Tj = Ta`` (or the guess). The total slope along
    the self-heated curve is ``I·dV/dI = I·∂V/∂I + ∂V/∂T·θ·I·(V + I·∂V/∂I)/(1 − g)``, with
    loop gain ``g = θ·I·∂V/∂T`` (DESIGN §3 self-heating; implicit differentiation).

    Parameters
    ----------
    parts : PartSet
    part_index : int array
    log_current : array [ln A]
        ``ln(I)`` of each element's current.
    ambient_c : array [°C]
    tolerance_sign : array or float [1]
    junction_guess_c : array [°C], optional
        Starting temperature for the forward Newton solve.
    tc_spread_sign : array or float [1], optional
        Default: ``tolerance_sign``.

    Returns
    -------
    ElementState
    """
    part_index, log_current, ambient = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp), np.asarray(log_current, dtype=float), np.asarray(ambient_c, dtype=float)
    )
    shape = log_current.shape
    sign, spread = broadcast_signs(shape, tolerance_sign, tc_spread_sign)
    names = ("voltage", "junction", "du", "du_iso", "dt", "gain")
    outputs = {name: np.empty(shape) for name in names}
    runaway = np.zeros(shape, dtype=bool)
    zener = parts.is_zener[part_index]
    theta_all = parts.theta_ja_k_per_w[part_index]
    guess = ambient if junction_guess_c is None else np.broadcast_to(junction_guess_c, shape)
    for mask, is_breakdown in ((zener, True), (~zener, False)):
        if not mask.any():
            continue
        index = part_index[mask]
        theta = theta_all[mask]
        u, ta, s, s_spread = log_current[mask], ambient[mask], sign[mask], spread[mask]
        if is_breakdown:
            state = _breakdown_steady_state(u, ta, theta, s, s_spread, part_fields(parts, index, BREAKDOWN_FIELDS))
        else:
            fields = part_fields(parts, index, FORWARD_FIELDS)
            state = _forward_steady_state(u, ta, theta, s, s_spread, guess[mask], fields)
        for name, values in zip(names, state[:6], strict=True):
            outputs[name][mask] = values
        runaway[mask] = state[6]
    return ElementState(
        voltage_v=outputs["voltage"],
        junction_c=outputs["junction"],
        dv_dlog_current_v=outputs["du"],
        isothermal_dv_dlog_current_v=outputs["du_iso"],
        dv_dtemperature_v_per_k=outputs["dt"],
        loop_gain=outputs["gain"],
        runaway=runaway,
    )


def self_heated_slope(
    current_a: np.ndarray,
    voltage_v: np.ndarray,
    dv_dlog_current_v: np.ndarray,
    dv_dtemperature_v_per_k: np.ndarray,
    theta_k_per_w: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Total log-current slope along the self-heated curve, and the loop gain.

    ``g = θ·I·∂V/∂T``; ``dTj/dlnI = θ·I·(V + ∂V/∂lnI)/(1 − g)``;
    ``dV/dlnI = ∂V/∂lnI + ∂V/∂T·dTj/dlnI`` (implicit differentiation of
    ``Tj = Ta + θ·V·I``, DESIGN §3). Where ``g`` reaches 1 the slope is returned as a
    large finite value and the runaway flag is set.

    Returns
    -------
    total_dv_dlog_current_v : array [V]
    loop_gain : array [1]
    runaway : array of bool
    """
    loop_gain = theta_k_per_w * current_a * dv_dtemperature_v_per_k
    runaway = loop_gain >= RUNAWAY_LOOP_GAIN
    headroom = np.where(runaway, 1.0, 1.0 - loop_gain)
    dtj_du = theta_k_per_w * current_a * (voltage_v + dv_dlog_current_v) / headroom
    return dv_dlog_current_v + dv_dtemperature_v_per_k * dtj_du, loop_gain, runaway


def breakdown_junction_side(heating_k_per_v, at_tnom_v, tnom_c, ambient_c):
    """Whether a zener's steady junction lies at or above ``tnom``: the residual
    ``Tj − Ta − θ·I·V`` is ≤ 0 at ``Tj = tnom`` (it rises with ``Tj`` wherever the loop gain
    is below 1, so the root lies above). ``at_tnom_v`` is ``V`` at ``tnom`` [V]."""
    return tnom_c - ambient_c <= heating_k_per_v * at_tnom_v


def _breakdown_steady_state(u, ambient, theta, sign, spread_sign, fields):
    """Zener junction, closed-form: on the side of ``tnom`` where the steady state lies
    (:func:`breakdown_junction_side`) ``V = V(tnom) + k·(Tj − tnom)`` with
    ``k = tc ± s'·tc_tol``, so ``Tj = (Ta + θ·I·(V(tnom) − k·tnom))/(1 − θ·I·k)``."""
    vz, izt, zzt, knee, tol, tc, tc_tol, tnom = fields
    curve, du = breakdown_curve_terms(u, izt, zzt, knee)
    at_tnom = vz * (1.0 + sign * tol / 100.0) + curve
    current = np.exp(u)
    heating = theta * current
    above = breakdown_junction_side(heating, at_tnom, tnom, ambient)
    slope = tc + np.where(above, spread_sign, -spread_sign) * tc_tol
    loop_gain = heating * slope
    runaway = loop_gain >= RUNAWAY_LOOP_GAIN
    headroom = np.where(runaway, 1.0, 1.0 - loop_gain)
    junction = (ambient + heating * (at_tnom - slope * tnom)) / headroom
    voltage = at_tnom + slope * (junction - tnom)
    total_du, _, _ = self_heated_slope(current, voltage, du, slope, theta)
    runaway |= junction > JUNCTION_CEILING_C
    return voltage, junction, total_du, du, slope, loop_gain, runaway


def forward_junction_floor_c(ambient_c, heating_k_per_v, offset_v, spread_v_per_k=0.0, tnom_c=25.0):
    """Least junction temperature a forward element can settle at [°C].

    ``V ≥ s·vf_tol + s'·tc_tol·|Tj − tnom|`` (the diode and ohmic terms are ≥ 0): a
    negative tolerance or TC spread can make ``V`` negative at small currents, and the
    junction colder than the ambient by ``d = −θ·I·V``. With ``o = max(0, −s·vf_tol)``,
    ``c = max(0, −s'·tc_tol)`` and ``|Tj − tnom| ≤ |Ta − tnom| + d``:
    ``d ≤ θ·I·(o + c·|Ta − tnom|)/(1 − θ·I·c)`` while ``θ·I·c < 1``. The floor is kept
    above half the ambient's absolute temperature, so that trial currents far too large
    for that to happen leave the model defined.

    Parameters
    ----------
    ambient_c : array [°C]
    heating_k_per_v : array [K/V]
        ``θ·I``.
    offset_v : array [V]
        ``s·vf_tol``.
    spread_v_per_k : array [V/K]
        ``s'·tc_tol``.
    tnom_c : array [°C]
    """
    half_absolute = 0.5 * (ambient_c + ZERO_CELSIUS_K) - ZERO_CELSIUS_K
    drop = np.maximum(-np.asarray(offset_v, dtype=float), 0.0)
    bend = np.maximum(-np.asarray(spread_v_per_k, dtype=float), 0.0)
    feedback = heating_k_per_v * bend
    bounded = feedback < 1.0
    cooling = heating_k_per_v * (drop + bend * np.abs(ambient_c - tnom_c)) / np.where(bounded, 1.0 - feedback, 1.0)
    floor = np.where(bounded, ambient_c - cooling, -np.inf)
    return np.maximum(floor, half_absolute)


def _forward_steady_state(u, ambient, theta, sign, spread_sign, guess, fields):
    """Forward junction at ``Tj − Ta − θ·I·V(I, Tj) = 0``, by Newton's method kept inside a
    bracket that starts as ``[floor, JUNCTION_CEILING_C]``, with bisection where a step
    would leave it or the slope ``1 − θ·I·∂V/∂T`` is not positive (the loop gain of the
    junction at or above 1 there, as it can be at the ambient far past a part's rating);
    the floor is :func:`forward_junction_floor_c`. A residual still negative at the
    ceiling, or not settled, is runaway."""
    current = np.exp(u)
    heating = theta * current
    tnom, vf_tol, tc_tol = (fields[FORWARD_FIELDS.index(name)] for name in ("tnom_c", "vf_tol_v", "tc_tol_v_per_k"))
    low = forward_junction_floor_c(ambient, heating, sign * vf_tol, spread_sign * tc_tol, tnom)
    high = np.full(u.shape, JUNCTION_CEILING_C)
    junction = np.clip(guess, low, high)
    active = np.ones(u.shape, dtype=bool)
    for _ in range(_THERMAL_ITERATIONS):
        index = np.flatnonzero(active)
        if index.size == 0:
            break
        sub = [f[index] for f in fields]
        temperature = junction[index]
        v, _, dt = forward_voltage_slopes(u[index], temperature, *sub, sign[index], spread_sign[index])
        residual = temperature - ambient[index] - heating[index] * v
        below = residual < 0.0
        lo = np.where(below, temperature, low[index])
        hi = np.where(below, high[index], temperature)
        low[index], high[index] = lo, hi
        slope = 1.0 - heating[index] * dt
        rising = slope > 1.0 - RUNAWAY_LOOP_GAIN
        newton = temperature - residual / np.where(rising, slope, 1.0)
        inside = rising & (newton >= lo) & (newton <= hi)
        new = np.where(inside, newton, 0.5 * (lo + hi))
        junction[index] = new
        active[index] = (np.abs(new - temperature) > _THERMAL_TOLERANCE_K) & (hi - lo > _THERMAL_TOLERANCE_K)
    voltage, du, dt = forward_voltage_slopes(u, junction, *fields, sign, spread_sign)
    residual = np.abs(junction - ambient - heating * voltage)
    total_du, loop_gain, runaway = self_heated_slope(current, voltage, du, dt, theta)
    runaway |= residual > 1e-6
    return voltage, junction, total_du, du, dt, loop_gain, runaway


def stack_voltage(
    parts: PartSet,
    stacks: np.ndarray,
    current_a: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    tc_spread_sign: np.ndarray | float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Voltage across whole stacks at given currents, each element at its self-heated junction.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    current_a : array [A], broadcastable to (n,)
        Stack current (> 0).
    ambient_c : array [°C], broadcastable to (n,)
    tolerance_sign : array or float [1], broadcastable to (n,)
    tc_spread_sign : array or float [1], broadcastable to (n,), optional
        Default: ``tolerance_sign``.

    Returns
    -------
    voltage_v : array (n,) [V]
        Sum of element voltages (0 for an empty stack).
    runaway : array (n,) of bool
        Some element has no thermal steady state at that current.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count = stacks.shape[0]
    log_current = np.broadcast_to(np.log(np.asarray(current_a, dtype=float)), (count,))
    ambient = np.broadcast_to(np.asarray(ambient_c, dtype=float), (count,))
    sign = np.broadcast_to(np.asarray(tolerance_sign, dtype=float), (count,))
    spread = sign if tc_spread_sign is None else np.broadcast_to(np.asarray(tc_spread_sign, dtype=float), (count,))
    rows, slots = np.nonzero(stacks >= 0)
    state = self_heated_element(parts, stacks[rows, slots], log_current[rows], ambient[rows], sign[rows],
                                tc_spread_sign=spread[rows])  # fmt: skip
    voltage = np.bincount(rows, weights=state.voltage_v, minlength=count)
    runaway = np.bincount(rows, weights=state.runaway.astype(float), minlength=count) > 0
    return voltage, runaway
