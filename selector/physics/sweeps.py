"""Rail voltage of one design along a swept supply or ambient, for the report's figures.

Each sweep is one vectorised :func:`selector.physics.circuit.solve_operating_points` call
(every curve and every point at once), with the design's exact resistor and every element
at its nominal value (tolerance sign 0). The same call also solves every curve with the
parts at either end of their tolerance and TC spread and the resistor at either end of its
tolerance and TCR: the **worst-case band** around the curves, where a failing design
shows how far outside the window it goes.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import solve_operating_points
from selector.physics.corners import load_terms, worst_case_corners
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_factor
from selector.spec.rail_spec import RailSpec
from selector.spec.spec_sections import AMBIENT_LIMITS_C
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
    band_low_v, band_high_v : ndarray (points,) [V]
        Lowest and highest rail over every curve with the parts and the resistor at their
        tolerance extremes (the worst-case band); NaN where no such point has a solution.
    """

    x: np.ndarray
    vout_v: np.ndarray
    labels: tuple[str, ...]
    quantity: str
    spec_range: tuple[float, float]
    band_low_v: np.ndarray | None = None
    band_high_v: np.ndarray | None = None

    def outside_window(self, spec: RailSpec) -> np.ndarray:
        """Where the band leaves the window (bool per point)."""
        with np.errstate(invalid="ignore"):
            return (self.band_low_v < spec.rail_min_v) | (self.band_high_v > spec.rail_max_v)


def _sweep_axis(low: float, high: float, floor: float, ceiling: float) -> np.ndarray:
    pad = SWEEP_OVERHANG * (high - low) if high > low else 0.1 * max(abs(high), 1.0)
    return np.linspace(max(low - pad, floor), min(high + pad, ceiling), SWEEP_POINTS)


def _load_text(spec: RailSpec, value: float) -> str:
    return format_quantity(value, "Ω" if spec.load_kind == "resistance" else "A", 3)


#: (part sign, resistor sign) of the nominal curves and of the band's four extremes.
_SIGNS = ((0.0, 0.0), (-1.0, -1.0), (-1.0, 1.0), (1.0, -1.0), (1.0, 1.0))


def _solve_sweep(parts, stack, resistor_ohm, spec, supply_v, load_value, ambient_c):
    """Nominal rail (count,) and the band's lowest and highest rail per point of the curves
    (count,), all in one solve."""
    load_current, conductance = load_terms(spec, load_value)
    count = supply_v.size
    part_sign = np.repeat([sign for sign, _ in _SIGNS], count)
    resistor_sign = np.repeat([sign for _, sign in _SIGNS], count)
    ambient = np.tile(ambient_c, len(_SIGNS))
    points = solve_operating_points(
        parts,
        np.repeat(np.asarray(stack, dtype=np.intp).reshape(1, -1), count * len(_SIGNS), axis=0),
        np.tile(supply_v, len(_SIGNS)),
        float(resistor_ohm) * resistor_factor(spec, ambient, resistor_sign),
        ambient,
        part_sign,
        np.tile(load_current, len(_SIGNS)),
        np.tile(conductance, len(_SIGNS)),
    )
    rail = np.where(points.solved, points.vout_v, np.nan).reshape(len(_SIGNS), count)
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # an all-NaN column: no solution there
        return rail[0], np.nanmin(rail[1:], axis=0), np.nanmax(rail[1:], axis=0)


def _band(low: np.ndarray, high: np.ndarray, curves: int):
    """Per swept point, the band over every curve."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmin(low.reshape(curves, -1), axis=0), np.nanmax(high.reshape(curves, -1), axis=0)


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
    vout, low, high = _solve_sweep(
        parts, stack, resistor_ohm, spec,
        np.tile(x, len(fixed)),
        np.repeat([load for load, _ in fixed], x.size),
        np.repeat([ambient for _, ambient in fixed], x.size),
    )
    labels = tuple(
        f"load {'least' if i < 2 else 'most'} ({_load_text(spec, load)}), Ta {ambient:g} °C"
        for i, (load, ambient) in enumerate(fixed)
    )
    return Sweep(x, vout.reshape(len(fixed), x.size), labels, "supply", (spec.supply_min_v, spec.supply_max_v),
                 *_band(low, high, len(fixed)))


def ambient_sweep(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec) -> Sweep:
    """Rail voltage against ambient temperature, one curve per supply extreme × load extreme.

    Parameters and result as for :func:`supply_sweep`; the sweep stays within the
    ambient range the tool accepts (:data:`selector.spec.spec_sections.AMBIENT_LIMITS_C`).
    """
    corners = worst_case_corners(spec)
    supplies = (corners.supply_v[0], corners.supply_v[16])
    loads = (corners.load_value[0], corners.load_value[8])
    fixed = [(supply, load) for supply in supplies for load in loads]
    x = _sweep_axis(spec.ambient_min_c, spec.ambient_max_c, *AMBIENT_LIMITS_C)
    vout, low, high = _solve_sweep(
        parts, stack, resistor_ohm, spec,
        np.repeat([supply for supply, _ in fixed], x.size),
        np.repeat([load for _, load in fixed], x.size),
        np.tile(x, len(fixed)),
    )
    labels = tuple(
        f"Vin {format_quantity(supply, 'V')}, load {'least' if i % 2 == 0 else 'most'} ({_load_text(spec, load)})"
        for i, (supply, load) in enumerate(fixed)
    )
    return Sweep(x, vout.reshape(len(fixed), x.size), labels, "ambient", (spec.ambient_min_c, spec.ambient_max_c),
                 *_band(low, high, len(fixed)))
