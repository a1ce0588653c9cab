"""Provable bounds on one (stack, series resistor) design's rail, by table look-ups alone.

:mod:`selector.search.stack_bounds` bounds a stack over every resistor at once; here each
series value of a stack gets its own bounds, so that most values are ruled out without
solving the circuit. Like the stack bounds, every bound holds for every *feasible*
design (DESIGN §3); infeasible designs are never shortlisted, so they need none.

Why the bounds hold
-------------------
1. *Current cells.* Currents from ``I₀`` to ``I_K`` are cut into cells
   ``[I_k, I_{k+1}]`` with a fixed ratio. A solved point has ``I ≥ 1 fA`` (the solver's
   floor), and a feasible one ``I ≥`` every element's floor, so ``I₀`` is the larger of
   1 fA and the least part floor. ``I_K`` is above ``(Vin_max + max_parts·vf_tol)/R_c``,
   which no stack current can exceed with a non-negative load.
2. *One element over one cell.* Its junction lies between its floor at ``I_{k+1}`` and
   ``Ta + θ·(1 − m)·P_max`` (stack bounds, point 1), which gives a first voltage range
   ``[lo, hi]`` over the cell (stack bounds, points 3 and 4: every element rises with
   current at fixed junction, so the ends of the cell bound it). Since ``Tj = Ta + θ·V·I`` with
   ``V`` in ``[lo, hi]`` and ``I`` in the cell, the junction range narrows to
   ``[Ta + θ·min(lo·I_k, lo·I_{k+1}), Ta + θ·max(hi·I_k, hi·I_{k+1})]``; each pass
   (:data:`NARROWING_PASSES`) narrows it further. One pass suffices for the search: the
   corner screen (:mod:`selector.search.resistor_choice`) sharpens whatever these bounds leave.
3. *Monotone envelopes.* ``L_k = min_{j ≥ k} lo_j`` and ``U_k = max_{j ≤ k} hi_j`` are
   still bounds on each cell, and are non-decreasing in ``k``; per stack they are summed
   over the elements, which share one current.
4. *Crossing with the load line.* At a corner the solution satisfies
   ``Vout = λ(I) = (Vin − R_c·(I + I_Lc))/(1 + R_c·G_L)``, decreasing in ``I``, and
   ``Vout ∈ [L_j, U_j]`` in the cell ``j`` holding ``I``. Let ``k*`` be the last cell
   with ``λ(I_k) ≥ L_k`` (then ``j ≤ k*``, since ``λ(I_j) ≥ λ(I) ≥ L_j``). If ``j = k*``,
   ``Vout ≥ L_{k*}``; if ``j < k*``, ``Vout ≥ λ(I_{j+1}) ≥ λ(I_{k*}) ≥ L_{k*}``; either way
   ``Vout ≥ max(L_{k*}, λ(I_{k*+1}))`` and ``I ≤ I_{k*+1}``. Likewise, with ``k₊`` the first
   cell with ``λ(I_{k+1}) ≤ U_k``, ``Vout ≤ min(U_{k₊}, λ(I_{k₊}))``. ``λ − L`` falls and
   ``U − λ`` rises with ``k``, so both cells are found by bisection.
5. *Reachable cells.* At a feasible design every element carries at least its own floor
   and, at a corner of class ``c``, less than its own cap of that class (stack bounds,
   point 2), so the cell holding the solution current meets ``[floor, cap]`` for every
   element. Cells outside it are left out (``lo = +D``, ``hi = −D`` with a huge finite
   :data:`DEAD_CELL_V`, so that sums with an element's ``∓inf`` never make NaN): the
   envelopes of point 3 are then still monotone and still bound the cell holding the
   solution, which is all point 4 uses.
6. *Error and bias.* Any corner's ``Vout`` lies in ``[vout_low, vout_high]``, so
   ``error_v ≥ max(lower(Vout_c) − target, target − upper(Vout_c'))`` for any corners
   ``c, c'`` (the bound uses the supply maximum, least load, ``R(Ta, −1)``, parts high
   for ``c`` and the opposite for ``c'``, both ambients, the resistor's TCR at each).
   Where the current bound ``I ≤ I_{k*+1}`` at a corner with the supply minimum, most
   load and ``R(Ta, +1)`` is below the stack's floor, the design is infeasible.

7. *A range of resistors.* The load line ``λ(I)`` falls with ``R`` at every ``I ≥ 0``
   (``∂λ/∂R = −(I + I_L + Vin·G_L)/(1 + R·G_L)² < 0``), so ``k*`` and ``k₊`` of point 4
   cannot rise with ``R``; with the envelopes monotone, the lower bound on the highest
   rail and the upper bound on the lowest rail then cannot rise either, and the
   shortfall proof at the supply minimum can only get stronger. For every ``R`` in
   ``[R₁, R₂]`` the error is therefore at least ``max(lower(Vout_c; R₂) − target,
   target − upper(Vout_c'; R₁))``, and a shortfall proven at ``R₁`` holds for the whole
   range (:func:`range_bounds`).

A small slack (:data:`selector.search.stack_bounds.VOLTAGE_SLACK_V`) widens every voltage bound.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.partset import PartSet
from selector.physics.self_heating import JUNCTION_CEILING_C
from selector.search.element_bounds import lowest_junction_c, voltage_range_fixed_current
from selector.search.stack_bounds import (
    CLASS_SIGNS,
    CURRENT_FLOOR_A,
    VOLTAGE_SLACK_V,
    _junction_ranges,
    class_resistor_factors,
    may_be_off,
    off_error_floor,
)
from selector.spec.rail_spec import RailSpec

#: Ratio of a current cell's ends: the bounds' looseness is about one cell's voltage step.
CELL_RATIO = 1.04
#: Least current the solver accepts [A] (a point below it is not solved).
SOLVER_CURRENT_FLOOR_A = 1e-15
#: Junction-narrowing passes (module docstring, point 2).
NARROWING_PASSES = 1
#: Below this current [A] cells are coarse: only odd designs run their stacks so low.
FINE_CELLS_FROM_A = 1e-7
#: Ratio of the coarse cells below :data:`FINE_CELLS_FROM_A`.
COARSE_CELL_RATIO = 4.0
#: Stand-in for the voltage bounds of an unreachable cell [V] (point 5).
DEAD_CELL_V = 1e30
#: Slices of a forward element's junction range; it is narrow after the first pass.
CELL_TEMPERATURE_SLICES = 3


@dataclass(frozen=True)
class CellBoundTables:
    """Per part and corner class, monotone voltage envelopes over current cells.

    Attributes
    ----------
    currents_a : array (K + 1,) [A]
        Cell edges, ascending.
    lower_v, upper_v : array (4, n_parts + 1, K) [V]
        ``L_k`` and ``U_k`` (module docstring, point 3); the last part row is padding (0).
    floor_a : array (n_parts + 1,) [A]
        Each part's current floor (padding: the spec's).
    """

    currents_a: np.ndarray
    lower_v: np.ndarray
    upper_v: np.ndarray
    floor_a: np.ndarray


def _cell_range(parts, part, low_current, high_current, t_low, t_high, sign):
    """Voltage range of elements over current cells at junction ranges (point 2)."""
    options = dict(junction_low_c=t_low, temperature_slices=CELL_TEMPERATURE_SLICES)
    low_a, high_a = voltage_range_fixed_current(parts, part, low_current, 0.0, t_high, sign, **options)
    low_b, high_b = voltage_range_fixed_current(parts, part, high_current, 0.0, t_high, sign, **options)
    return np.minimum(low_a, low_b), np.maximum(high_a, high_b)


def _cell_edges(bottom: float, top: float, cell_ratio: float) -> np.ndarray:
    """Cell edges from ``bottom`` to ``top`` [A]: coarse below :data:`FINE_CELLS_FROM_A`."""
    middle = min(max(FINE_CELLS_FROM_A, bottom), top)
    pieces = []
    for low, high, ratio in ((bottom, middle, COARSE_CELL_RATIO), (middle, top, cell_ratio)):
        if high > low:
            count = max(int(np.ceil(np.log(high / low) / np.log(ratio))), 1)
            pieces.append(low * np.exp(np.linspace(0.0, np.log(high / low), count + 1)))
    if not pieces:
        return np.array([bottom, bottom * cell_ratio])
    return np.unique(np.concatenate(pieces))


def cell_bound_tables(
    parts: PartSet,
    spec: RailSpec,
    resistor_low_ohm: float,
    cell_ratio: float = CELL_RATIO,
    part_caps_a: np.ndarray | None = None,
    part_mask: np.ndarray | None = None,
) -> CellBoundTables:
    """Tabulate every part's voltage envelopes over the current cells (points 1–3, 5).

    Parameters
    ----------
    parts : PartSet
    spec : RailSpec
    resistor_low_ohm : float [Ω]
        Least series value the search may use (sets the top cell edge).
    cell_ratio : float [1]
        Ratio of each cell's ends.
    part_caps_a : array (4, n_parts) [A], optional
        Each part's current cap per corner class
        (:func:`selector.search.stack_bounds.part_current_caps`); cells above it are left out.
    part_mask : array (n_parts,) of bool, optional
        Parts to tabulate (so that two processes can share the work). The rows of the
        others hold the trivial bounds ``∓D``, true of any voltage.
    """
    count = len(parts)
    part_floor = np.maximum(np.maximum(spec.min_current_a, parts.i_min_a), CURRENT_FLOOR_A)
    bottom = max(SOLVER_CURRENT_FLOOR_A, float(part_floor.min()))
    # The most a forward element's voltage can fall below 0 V: its tolerance, and its TC
    # spread over the widest junction swing the tool allows (from −273 °C to the ceiling).
    negative = float(np.max(parts.vf_tol_v + parts.tc_tol_v_per_k * (JUNCTION_CEILING_C + 273.15), initial=0.0))
    reach = spec.supply_max_v + spec.max_parts * negative + 1.0
    top = 2.0 * reach / (resistor_low_ohm * float(class_resistor_factors(spec)[0].min()))
    currents = _cell_edges(bottom, top, cell_ratio)
    cells = currents.size - 1

    ambient, t_top, _ = _junction_ranges(parts, spec)
    shape = (4, count, cells)
    caps = np.full((4, count), np.inf) if part_caps_a is None else np.asarray(part_caps_a, dtype=float)
    wanted = np.ones(count, dtype=bool) if part_mask is None else np.asarray(part_mask, dtype=bool)
    live = (currents[None, None, 1:] >= part_floor[None, :, None]) & (currents[None, None, :-1] <= caps[:, :, None])
    live &= wanted[None, :, None]
    corner_class, part, cell = np.nonzero(live)
    sign = np.array(CLASS_SIGNS)[corner_class]
    ta = ambient[corner_class, part]
    ceiling = t_top[corner_class, part]
    low_current = currents[cell]
    high_current = currents[cell + 1]
    theta = parts.theta_ja_k_per_w[part]
    t_low = lowest_junction_c(parts, part, high_current, ta)
    t_high = np.maximum(ceiling, t_low)
    low, high = _cell_range(parts, part, low_current, high_current, t_low, t_high, sign)
    for _ in range(NARROWING_PASSES):
        finite = np.isfinite(low) & np.isfinite(high)
        narrow_low = ta + theta * np.minimum(low * low_current, low * high_current)
        narrow_high = ta + theta * np.maximum(high * low_current, high * high_current)
        t_low = np.where(finite, np.maximum(t_low, narrow_low), t_low)
        t_high = np.where(finite, np.minimum(t_high, narrow_high), t_high)
        empty = t_low > t_high
        t_high = np.where(empty, t_low, t_high)
        next_low, next_high = _cell_range(parts, part, low_current, high_current, t_low, t_high, sign)
        # A cell whose range came out empty holds no solution: no element conducts there.
        low = np.where(empty, np.inf, np.maximum(low, next_low))
        high = np.where(empty, -np.inf, np.minimum(high, next_high))
    low_grid = np.full(shape, DEAD_CELL_V)
    high_grid = np.full(shape, -DEAD_CELL_V)
    low_grid[live] = low - VOLTAGE_SLACK_V
    high_grid[live] = high + VOLTAGE_SLACK_V
    low, high = low_grid, high_grid
    lower = np.zeros((4, count + 1, cells))
    upper = np.zeros((4, count + 1, cells))
    lower[:, :count] = np.minimum.accumulate(low[:, :, ::-1], axis=2)[:, :, ::-1]
    upper[:, :count] = np.maximum.accumulate(high, axis=2)
    lower[:, :count][:, ~wanted] = -DEAD_CELL_V
    upper[:, :count][:, ~wanted] = DEAD_CELL_V
    return CellBoundTables(
        currents_a=currents,
        lower_v=lower,
        upper_v=upper,
        floor_a=np.append(part_floor, max(spec.min_current_a, CURRENT_FLOOR_A)),
    )


def _load_line(spec: RailSpec, supply_v, resistor_ohm, most_load: bool):
    """``λ(I) = (Vin − R_c·(I + I_Lc))/(1 + R_c·G_L)`` as (intercept [V], slope [Ω])."""
    if spec.load_kind == "resistance":
        conductance = 1.0 / (spec.load_min if most_load else spec.load_max)
        scale = 1.0 + resistor_ohm * conductance
        return supply_v / scale, resistor_ohm / scale
    load = spec.load_max if most_load else spec.load_min
    return supply_v - resistor_ohm * load, resistor_ohm


def _crossings(envelope, elements, currents, intercept, slope, lower_side: bool):
    """Bisection for ``k*`` (``lower_side``) or ``k₊`` of point 4, over many designs.

    Returns the cell index (−1 … K for ``k*``, 0 … K for ``k₊``, K meaning none) and the
    summed envelope there (∓inf outside the table).
    """
    cells = envelope.shape[1]
    count = intercept.shape[0]
    flat = envelope.ravel()
    # Row offsets of each element in the flattened table: one take per column is far
    # cheaper than a fancy-indexed 2-d gather and a sum over a short axis.
    offsets = [elements[:, column] * cells for column in range(elements.shape[1])]

    def summed_at(cell):
        total = flat.take(offsets[0] + cell)
        for offset in offsets[1:]:
            total += flat.take(offset + cell)
        return total

    if lower_side:
        good, bad = np.full(count, -1), np.full(count, cells)
    else:
        bad, good = np.full(count, -1), np.full(count, cells)
    while True:
        open_ = np.abs(good - bad) > 1
        if not open_.any():
            break
        middle = (good + bad) // 2
        safe = np.clip(middle, 0, cells - 1)
        summed = summed_at(safe)
        edge = currents[safe] if lower_side else currents[safe + 1]
        line = intercept - slope * edge
        holds = line >= summed if lower_side else line <= summed
        good = np.where(open_ & holds, middle, good)
        bad = np.where(open_ & ~holds, middle, bad)
    safe = np.clip(good, 0, cells - 1)
    inside = (good >= 0) & (good < cells)
    summed = np.where(inside, summed_at(safe), -np.inf if lower_side else np.inf)
    return good, summed


def design_bounds(tables: CellBoundTables, stacks: np.ndarray, resistor_ohm: np.ndarray, spec: RailSpec):
    """Lower bound on ``error_v`` of each design, and where it is provably infeasible.

    Parameters
    ----------
    tables : CellBoundTables
        From :func:`cell_bound_tables` for the same parts and spec.
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    resistor_ohm : array (n,) [Ω]
    spec : RailSpec

    Returns
    -------
    error_lower_v : array (n,) [V]
        ``error_v ≥ error_lower_v`` at every feasible design (point 6).
    infeasible : array (n,) of bool
        The current bound proves some corner short of the stack's floor.
    """
    return range_bounds(tables, stacks, resistor_ohm, resistor_ohm, spec)


def range_bounds(tables: CellBoundTables, stacks: np.ndarray, resistor_first_ohm, resistor_last_ohm, spec: RailSpec):
    """Lower bound on ``error_v`` over every resistor of a range, and a proven shortfall (point 7).

    Parameters
    ----------
    tables : CellBoundTables
    stacks : int array (n, max_len)
    resistor_first_ohm, resistor_last_ohm : array (n,) [Ω]
        Ends of each range, ``first ≤ last``.
    spec : RailSpec

    Returns
    -------
    error_lower_v : array (n,) [V]
        ``error_v ≥ error_lower_v`` at every feasible design of the stack in the range.
    infeasible : array (n,) of bool
        Every design of the range is proven short of current at some corner.
    """
    padding = tables.floor_a.size - 1
    elements = np.where(stacks >= 0, stacks, padding)
    floor = tables.floor_a[elements].max(axis=1)
    edges = tables.currents_a
    padded_edges = np.append(edges, edges[-1])
    factor_low, factor_high = class_resistor_factors(spec)
    high_lower = np.full(stacks.shape[0], -np.inf)
    low_upper = np.full(stacks.shape[0], np.inf)
    infeasible = np.zeros(stacks.shape[0], dtype=bool)
    for corner_class, sign in enumerate(CLASS_SIGNS):
        if sign > 0:
            intercept, slope = _load_line(spec, spec.supply_max_v, resistor_last_ohm * factor_low[corner_class],
                                          most_load=False)  # fmt: skip
            cell, summed = _crossings(tables.lower_v[corner_class], elements, padded_edges, intercept, slope, True)
            high_lower = np.maximum(high_lower, np.maximum(summed, intercept - slope * edges[cell + 1]))
            continue
        intercept, slope = _load_line(spec, spec.supply_min_v, resistor_first_ohm * factor_high[corner_class],
                                      most_load=True)  # fmt: skip
        cell, summed = _crossings(tables.upper_v[corner_class], elements, padded_edges, intercept, slope, False)
        low_upper = np.minimum(low_upper, np.minimum(summed, intercept - slope * edges[cell]))
        cell, _ = _crossings(tables.lower_v[corner_class], elements, padded_edges, intercept, slope, True)
        infeasible |= edges[cell + 1] < floor
    with np.errstate(invalid="ignore"):
        error_lower = np.maximum.reduce([high_lower - spec.target_v, spec.target_v - low_upper, np.zeros(stacks.shape[0])])
    # Stack bounds, point 8: a design that may have its stack off at a corner; the first
    # cell's upper envelope (from 1 fA) bounds the off rail.
    off = may_be_off(floor)
    if off.any():
        off_rail = np.max([tables.upper_v[c].take(elements[off] * tables.upper_v.shape[2]).sum(axis=1)
                           for c in range(4)], axis=0)  # fmt: skip
        error_lower[off] = np.minimum(error_lower[off], off_error_floor(spec, off_rail))
    # The load line's own rounding gets the same slack as the tables.
    error_lower = np.maximum(np.nan_to_num(error_lower, nan=0.0) - VOLTAGE_SLACK_V, 0.0)
    return error_lower, infeasible
