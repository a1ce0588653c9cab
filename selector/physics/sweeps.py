"""Rail voltage of one design along a swept supply or ambient, for the report's figures.

Each sweep is one vectorised :func:`selector.physics.circuit.solve_operating_points` call
(every curve and every point at once), with the design's exact resistor and every element
at its nominal value (tolerance sign 0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import solve_operating_points
from selector.physics.corners import load_terms, worst_case_corners
from selector.physics.partset import PartSet
from selector.spec.rail_spec import AMBIENT_LIMITS_C, RailSpec
from selector.spec.units import format_quantity

#: Points per sweep curve.
SWEEP_POINTS = 121
#: Each sweep runs this fraction of the spec's range beyond either end.
SWEEP_OVERHANG = 0.2


@dataclass(frozen=True)
class Sweep:
    """Rail voltage of one design along one swept quantity, one curve per fixed condition.

    Attributes
    ----------
    x : ndarray (points,)
        Swept values: supply [V] or ambient [°C].
    vout_v : ndarray (curves, points) [V]
        Rail voltage; NaN where the circuit has no solution.
    labels : tuple of str
        What each curve holds fixed.
    quantity : str
        ``"supply"`` or ``"ambient"``.
    spec_range : tuple of float
        The spec's range of the swept quantity.
    """

    x: np.ndarray
    vout_v: np.ndarray
    labels: tuple[str, ...]
    quantity: str
    spec_range: tuple[float, float]


def _sweep_axis(low: float, high: float, floor: float, ceiling: float) -> np.ndarray:
    pad = SWEEP_OVERHANG * (high - low) if high > low else 0.1 * max(abs(high), 1.0)
    return np.linspace(max(low - pad, floor), min(high + pad, ceiling), SWEEP_POINTS)


def _load_text(spec: RailSpec, value: float) -> str:
    return format_quantity(value, "Ω" if spec.load_kind == "resistance" else "A", 3)


def _solve_sweep(parts, stack, resistor_ohm, spec, supply_v, load_value, ambient_c) -> np.ndarray:
    load_current, conductance = load_terms(spec, load_value)
    count = supply_v.size
    points = solve_operating_points(
        parts,
        np.repeat(np.asarray(stack, dtype=np.intp).reshape(1, -1), count, axis=0),
        supply_v,
        np.full(count, float(resistor_ohm)),
        ambient_c,
        np.zeros(count),
        load_current,
        conductance,
    )
    return np.where(points.solved, points.vout_v, np.nan)


def supply_sweep(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec) -> Sweep:
    """Rail voltage against supply, one curve per load extreme × ambient extreme.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices of the stack, padded with −1.
    resistor_ohm : float [Ω]
        Exact series resistor.
    spec : RailSpec

    Returns
    -------
    Sweep
        Four curves over the supply range and :data:`SWEEP_OVERHANG` beyond it.
    """
    corners = worst_case_corners(spec)
    # Corner index = 16·supply + 8·load + 4·ambient + …: bit 0 picks the first extreme.
    loads = (corners.load_value[0], corners.load_value[8])
    ambients = (corners.ambient_c[0], corners.ambient_c[4])
    fixed = [(load, ambient) for load in loads for ambient in ambients]
    x = _sweep_axis(spec.supply_min_v, spec.supply_max_v, 1e-3, np.inf)
    vout = _solve_sweep(
        parts, stack, resistor_ohm, spec,
        np.tile(x, len(fixed)),
        np.repeat([load for load, _ in fixed], x.size),
        np.repeat([ambient for _, ambient in fixed], x.size),
    )
    labels = tuple(
        f"load {'least' if i < 2 else 'most'} ({_load_text(spec, load)}), Ta {ambient:g} °C"
        for i, (load, ambient) in enumerate(fixed)
    )
    return Sweep(x, vout.reshape(len(fixed), x.size), labels, "supply", (spec.supply_min_v, spec.supply_max_v))


def ambient_sweep(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec) -> Sweep:
    """Rail voltage against ambient temperature, one curve per supply extreme × load extreme.

    Parameters and result as for :func:`supply_sweep`; the sweep stays within the
    ambient range the tool accepts (:data:`selector.spec.rail_spec.AMBIENT_LIMITS_C`).
    """
    corners = worst_case_corners(spec)
    supplies = (corners.supply_v[0], corners.supply_v[16])
    loads = (corners.load_value[0], corners.load_value[8])
    fixed = [(supply, load) for supply in supplies for load in loads]
    x = _sweep_axis(spec.ambient_min_c, spec.ambient_max_c, *AMBIENT_LIMITS_C)
    vout = _solve_sweep(
        parts, stack, resistor_ohm, spec,
        np.repeat([supply for supply, _ in fixed], x.size),
        np.repeat([load for _, load in fixed], x.size),
        np.tile(x, len(fixed)),
    )
    labels = tuple(
        f"Vin {format_quantity(supply, 'V')}, load {'least' if i % 2 == 0 else 'most'} ({_load_text(spec, load)})"
        for i, (supply, load) in enumerate(fixed)
    )
    return Sweep(x, vout.reshape(len(fixed), x.size), labels, "ambient", (spec.ambient_min_c, spec.ambient_max_c))
