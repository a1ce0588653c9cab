"""Sound bounds on one element's voltage at a fixed current over a range of its junction
temperature, for the search's pruning (the proofs are points 1, 3 and 4 of
:mod:`selector.search.stack_bounds`).
"""

from __future__ import annotations

import numpy as np

from selector.physics.devices import (
    element_voltage_slopes,
    forward_log_saturation_current,
    thermal_voltage_v,
)
from selector.physics.partset import PartSet
from selector.physics.self_heating import forward_junction_floor_c

#: Temperature slices for the forward element's bound (point 4 of :mod:`selector.search.stack_bounds`).
TEMPERATURE_SLICES = 24
#: Floor of the junction range [°C], 1 K above absolute zero.
LOWEST_JUNCTION_C = -272.15


def lowest_junction_c(parts: PartSet, part_index, current_a, ambient_c):
    """Least junction an element can settle at (point 1): a forward element at its lowest
    tolerance and TC spread (:func:`selector.physics.self_heating.forward_junction_floor_c`); a
    zener at the ambient (below it only where its voltage is negative, which its bound
    then does not cover at all)."""
    forward_floor = forward_junction_floor_c(
        ambient_c, parts.theta_ja_k_per_w[part_index] * current_a, -parts.vf_tol_v[part_index],
        -parts.tc_tol_v_per_k[part_index], parts.tnom_c[part_index],
    )
    return np.where(parts.is_zener[part_index], ambient_c, forward_floor)


def voltage_range_fixed_current(
    parts: PartSet,
    part_index: np.ndarray,
    current_a: np.ndarray,
    ambient_c: np.ndarray,
    junction_high_c: np.ndarray,
    tolerance_sign: np.ndarray,
    junction_low_c: np.ndarray | None = None,
    temperature_slices: int = TEMPERATURE_SLICES,
) -> tuple[np.ndarray, np.ndarray]:
    """Sound bounds on an element's voltage at a fixed current over its junction range.

    Points 1 and 4 of :mod:`selector.search.stack_bounds`: the junction runs from
    ``Ta − θ·vf_tol·I`` to ``junction_high_c``. Voltages come from
    :func:`selector.physics.devices.element_voltage_slopes`; this function only brackets them.

    Parameters
    ----------
    parts : PartSet
    part_index : int array (m,)
    current_a : array (m,) [A]
    ambient_c : array (m,) [°C]
    junction_high_c : array (m,) [°C]
        Top of the junction range.
    tolerance_sign : array (m,) [1]
    junction_low_c : array (m,) [°C], optional
        Bottom of the junction range when a tighter one than point 1's is known.
    temperature_slices : int
        Slices ``K`` of a forward element's junction range (point 4).

    Returns
    -------
    low_v, high_v : array (m,) [V]
        ``low ≤ V(I, T) ≤ high`` for every ``T`` in the range (before slack); ±inf where
        no bound holds.
    """
    part_index, current, ambient, t_high, sign = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp), current_a, ambient_c, junction_high_c, tolerance_sign
    )
    if junction_low_c is None:
        t_low = lowest_junction_c(parts, part_index, current, ambient)
    else:
        t_low = np.broadcast_to(np.asarray(junction_low_c, dtype=float), current.shape)
    # Only absurd currents (far past any power limit) reach this; keep the model defined.
    t_low = np.maximum(t_low, LOWEST_JUNCTION_C)
    t_high = np.maximum(t_high, t_low)
    v_low, _, _ = element_voltage_slopes(parts, part_index, current, t_low, sign)
    v_high, _, _ = element_voltage_slopes(parts, part_index, current, t_high, sign)
    # A zener is linear in Tj on either side of tnom, where its TC spread bends it.
    kink = np.clip(parts.tnom_c[part_index], t_low, t_high)
    v_kink, _, _ = element_voltage_slopes(parts, part_index, current, kink, sign)
    low = np.minimum(np.minimum(v_low, v_high), v_kink)
    high = np.maximum(np.maximum(v_low, v_high), v_kink)
    forward = ~parts.is_zener[part_index]
    if forward.any():
        f_low, f_high = _forward_temperature_range(
            parts, part_index[forward], current[forward], t_low[forward], t_high[forward], sign[forward],
            temperature_slices,
        )
        low[forward], high[forward] = f_low, f_high
    zener = parts.is_zener[part_index]
    low = np.where(zener & (low < 0), -np.inf, low)
    high = np.where(zener & (high < 0), np.inf, high)
    return low, high


def _forward_temperature_range(parts, index, current, t_low, t_high, sign, slices=TEMPERATURE_SLICES):
    fraction = np.linspace(0.0, 1.0, slices + 1)
    temperature = t_low[:, None] + (t_high - t_low)[:, None] * fraction[None, :]
    shape = temperature.shape
    index_grid = np.broadcast_to(index[:, None], shape)
    current_grid = np.broadcast_to(current[:, None], shape)
    core_v, _, _ = element_voltage_slopes(parts, index_grid, current_grid, temperature, 0.0)
    rs = parts.rs_ohm[index][:, None]
    core_v = core_v - current_grid * rs
    n = parts.n[index][:, None]
    a_factor = n * thermal_voltage_v(temperature)
    b_factor = core_v / a_factor
    eg = parts.eg_ev[index][:, None]
    xti = parts.xti[index][:, None]
    log_is = forward_log_saturation_current(
        temperature, parts.is_a[index][:, None], n, eg, xti, parts.tnom_c[index][:, None]
    )
    conducting = 1.0 / (1.0 + np.exp(np.clip(log_is - np.log(current_grid), -700.0, 700.0)))
    vt = thermal_voltage_v(temperature)
    gap_term = xti * vt + eg
    # Point 4: B decreasing needs xti·Vt + eg > 0 across the range; else no bound.
    ordered = np.all(gap_term > 0, axis=1)
    lower_slice = a_factor[:, :-1] * b_factor[:, 1:]
    upper_slice = a_factor[:, 1:] * b_factor[:, :-1]
    falling = upper_slice <= conducting[:, 1:] * np.minimum(gap_term[:, :-1], gap_term[:, 1:])
    lower_slice = np.where(falling, core_v[:, 1:], lower_slice)
    upper_slice = np.where(falling, core_v[:, :-1], upper_slice)
    offset = current * parts.rs_ohm[index] + sign * parts.vf_tol_v[index]
    spread_low, spread_high = _spread_range(parts.tc_tol_v_per_k[index] * sign, parts.tnom_c[index], t_low, t_high)
    low = np.where(ordered, lower_slice.min(axis=1), -np.inf) + offset + spread_low
    high = np.where(ordered, upper_slice.max(axis=1), np.inf) + offset + spread_high
    return low, high


def _spread_range(spread_v_per_k, tnom_c, t_low, t_high):
    """Range of the TC-spread term ``s·tc_tol·|T − tnom|`` over ``T`` in ``[t_low, t_high]``:
    ``|T − tnom|`` runs from the interval's distance to tnom to its farther end's."""
    nearest = np.maximum(np.maximum(t_low - tnom_c, tnom_c - t_high), 0.0)
    farthest = np.maximum(np.abs(t_low - tnom_c), np.abs(t_high - tnom_c))
    ends = (spread_v_per_k * nearest, spread_v_per_k * farthest)
    return np.minimum(*ends), np.maximum(*ends)
