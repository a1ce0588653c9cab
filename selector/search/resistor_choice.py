"""Series-resistor choice of the physics contract, vectorised over many stacks.

DESIGN §3: unless the user fixes R, it is the value of the spec's IEC 60063 series
between 1 Ω and 10 MΩ (narrowed by the spec's resistor range), among feasible ones, with
the least ``error_v``; ties within 1 nV go to the larger R.

Only values inside each stack's provable resistor range
(:func:`selector.search.stack_bounds.bound_stacks`, point 7) can be feasible. Each of them gets
a provable lower bound on its error (:func:`selector.search.design_bounds.design_bounds`); the
values are solved per stack in order of that bound, in rounds of growing size, and a
value is left unsolved only once a feasible design of the same stack has an error more
than the tie window below its bound — it can then neither win nor tie, so the choice
needs no assumption about the shape of ``error_v(R)``. Values the bounds prove infeasible
are never solved. A stack with no feasible value gets the least-error design among those
solved (the values nearest its range when the range is empty), so callers can report
why it fails.

Corner screen
-------------
Before a value is solved at all 32 corners it is solved at the few corners of
:data:`SCREEN_CORNERS`, and the table bound on its error is raised to the error over
those corners. This needs no assumption about where the extremes lie: the screen's
corners are some of the 32, so its highest rail is at most ``vout_high``, its lowest at
least ``vout_low``, and since ``|v − target|`` is convex in ``v`` its largest value on
``[vout_low, vout_high]`` is at an end, whence the screen's error is at most ``error_v``.
Likewise a screened corner whose current is below the stack's need, above a forward
element's ``if_max_a``, or whose margin is below ``min_margin`` proves the design
infeasible (feasibility holds at every corner, DESIGN §3). A screened corner the solver
does not solve is left out of the screen, never taken as proof. The corners are chosen
where the rail's extremes and the current's least value usually sit (supply, load,
resistor and tolerance all pushing one way, both ambients), so the screen's error is
usually the exact ``error_v`` and only the value that wins is solved in full.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from selector.errors import SearchError
from selector.physics.circuit import solve_stack_corners
from selector.physics.corners import evaluate_designs, stack_current_limits, worst_case_corners
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_allowed_power_w, resistor_margin
from selector.search.design_bounds import CellBoundTables, cell_bound_tables, range_bounds
from selector.search.stack_bounds import (
    StackBounds,
    bound_stacks,
    part_bound_tables,
    part_current_caps,
)
from selector.spec.eseries import series_values
from selector.spec.rail_spec import RailSpec
from selector.spec.units import format_quantity

#: Ties in error closer than this go to the larger resistor (DESIGN §3) [V].
TIE_WINDOW_V = 1e-9
#: Contract limits of the resistor choice [Ω].
CONTRACT_RESISTOR_RANGE_OHM = (1.0, 10e6)
#: Designs per call of the corner evaluation (each is 32 operating points).
DESIGNS_PER_CALL = 4096
#: Corners of the screen (module docstring), by index into
#: :func:`selector.physics.corners.worst_case_corners` (16·supply + 8·load + 4·ambient + 2·resistor
#: + sign): lowest rail (10, 14: supply min, most load, R high, parts low), least current
#: (11, 15: the same with parts high), highest rail (17, 21: supply max, least load, R low,
#: parts high) and most current (16, 20: the same with parts low), each at both ambients.
SCREEN_CORNERS = (10, 14, 11, 15, 17, 21, 16, 20)
#: Widening of the screen's error bound [V], far above the solver's residual (as
#: :data:`selector.search.stack_bounds.VOLTAGE_SLACK_V`).
SCREEN_SLACK_V = 1e-7
#: Consecutive series values bounded together before each gets its own bound.
RANGE_BLOCK = 8
#: Relative slack of the screen's current and margin tests [1].
SCREEN_RELATIVE_SLACK = 1e-9


def candidate_resistors(spec: RailSpec) -> np.ndarray:
    """The series values the choice may use, ascending [Ω] (one value if R is fixed)."""
    if spec.resistor_fixed_ohm is not None:
        return np.array([float(spec.resistor_fixed_ohm)])
    low = max(CONTRACT_RESISTOR_RANGE_OHM[0], spec.resistor_min_ohm)
    high = min(CONTRACT_RESISTOR_RANGE_OHM[1], spec.resistor_max_ohm)
    values = series_values(spec.resistor_series, low, high)
    if values.size == 0:
        raise SearchError(
            f"no {spec.resistor_series} value lies between {format_quantity(low, 'Ω')} and {format_quantity(high, 'Ω')}"
        )
    return values


def resistor_slots(bounds: StackBounds, values: np.ndarray, error_cut_v: float = np.inf) -> tuple[np.ndarray, np.ndarray]:
    """First and last index into ``values`` inside each stack's provable range (for a
    search that keeps only designs with an error bound of at most ``error_cut_v``).

    ``first > last`` where no value can be feasible.
    """
    first = np.searchsorted(values, bounds.resistor_low_ohm * (1 - 1e-12), side="left")
    last = np.searchsorted(values, bounds.resistor_high_within(error_cut_v) * (1 + 1e-12), side="right") - 1
    last = np.where(bounds.window_empty, first - 1, last)
    return first, last


def take_designs(evaluation, rows: np.ndarray):
    """The evaluation restricted to some designs (every per-design array indexed)."""
    count = len(evaluation.feasible)
    taken = {}
    for field in dataclasses.fields(evaluation):
        value = getattr(evaluation, field.name)
        if isinstance(value, np.ndarray) and value.ndim >= 1 and value.shape[0] == count:
            value = value[rows]
        taken[field.name] = value
    return type(evaluation)(**taken)


def concatenate_designs(evaluations: list):
    """One evaluation holding the designs of several, in order."""
    first = evaluations[0]
    count = len(first.feasible)
    joined = {}
    for field in dataclasses.fields(first):
        value = getattr(first, field.name)
        if isinstance(value, np.ndarray) and value.ndim >= 1 and value.shape[0] == count:
            value = np.concatenate([getattr(e, field.name) for e in evaluations], axis=0)
        joined[field.name] = value
    return type(first)(**joined)


def evaluate_in_calls(parts: PartSet, stacks: np.ndarray, resistor_ohm: np.ndarray, spec: RailSpec):
    """:func:`selector.physics.corners.evaluate_designs` over many designs, a bounded batch at a time."""
    pieces = [
        evaluate_designs(parts, stacks[start : start + DESIGNS_PER_CALL], resistor_ohm[start : start + DESIGNS_PER_CALL], spec)
        for start in range(0, len(stacks), DESIGNS_PER_CALL)
    ]
    return pieces[0] if len(pieces) == 1 else concatenate_designs(pieces)


def screen_designs(parts: PartSet, stacks: np.ndarray, resistor_ohm: np.ndarray, spec: RailSpec,
                   corner_index=SCREEN_CORNERS) -> tuple[np.ndarray, np.ndarray]:
    """Lower bound on ``error_v`` and proof of infeasibility from a few corners (module docstring).

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    resistor_ohm : array (n,) [Ω]
    spec : RailSpec
    corner_index : sequence of int
        Corners to solve, indices into :func:`selector.physics.corners.worst_case_corners`.

    Returns
    -------
    error_lower_v : array (n,) [V]
        ``error_v ≥ error_lower_v`` for every design (0 where no screened corner solved).
    infeasible : array (n,) of bool
        A screened corner proves the design infeasible.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count = stacks.shape[0]
    if count == 0:
        return np.zeros(0), np.zeros(0, dtype=bool)
    corners = worst_case_corners(spec)
    pick = np.asarray(corner_index, dtype=np.intp)

    def row(values):
        return values[pick][None, :]

    points = solve_stack_corners(
        parts, stacks, row(corners.supply_v),
        np.asarray(resistor_ohm, dtype=float)[:, None] * row(corners.resistor_factor),
        row(corners.ambient_c), row(corners.tolerance_sign), row(corners.load_current_a),
        row(corners.load_conductance_s),
    )
    solved, vout, current = points.solved, points.vout_v, points.stack_current_a
    high = np.where(solved, vout, -np.inf).max(axis=1)
    low = np.where(solved, vout, np.inf).min(axis=1)
    any_solved = solved.any(axis=1)
    with np.errstate(invalid="ignore"):
        error = np.maximum(np.abs(high - spec.target_v), np.abs(low - spec.target_v))
    error = np.where(any_solved, np.maximum(error - SCREEN_SLACK_V, 0.0), 0.0)
    need, limit = stack_current_limits(parts, stacks, spec)
    slack = SCREEN_RELATIVE_SLACK
    least = np.where(solved, current, np.inf).min(axis=1)
    most = np.where(solved, current, -np.inf).max(axis=1)
    element_margin = np.where(solved, points.worst_element_margin, np.inf).min(axis=1)
    allowed = resistor_allowed_power_w(spec, corners.ambient_c[pick])[None, :]
    margin_r = resistor_margin(np.where(solved, points.resistor_power_w, 0.0), allowed).min(axis=1)
    margin = np.minimum(element_margin, margin_r)
    infeasible = any_solved & (
        (least < need * (1.0 - slack) - 1e-18)
        | (most > limit * (1.0 + slack))
        | (margin < spec.min_margin - slack)
    )
    return error, infeasible


def screened_bounds(parts: PartSet, stacks: np.ndarray, spec: RailSpec, stack_of_design, resistor_ohm, error_lower_v, wanted=None):
    """Design error bounds raised by the corner screen; inf where it proves infeasibility.

    Only designs with a finite bound (and ``wanted``, when given) are screened; the others
    keep their bound.
    """
    chosen = np.isfinite(error_lower_v)
    if wanted is not None:
        chosen &= wanted
    rows = np.flatnonzero(chosen)
    sharpened = np.array(error_lower_v, dtype=float, copy=True)
    for start in range(0, rows.size, DESIGNS_PER_CALL):
        piece = rows[start : start + DESIGNS_PER_CALL]
        error, infeasible = screen_designs(parts, stacks[stack_of_design[piece]], resistor_ohm[piece], spec)
        sharpened[piece] = np.where(infeasible, np.inf, np.maximum(sharpened[piece], error))
    return sharpened


def design_slots(first: np.ndarray, last: np.ndarray, value_count: int) -> tuple[np.ndarray, np.ndarray]:
    """The (stack, series index) designs to solve: every index of each stack's range.

    A stack whose range is empty still gets designs to report: the two values nearest the
    ends of its range (one when they coincide).
    """
    empty = first > last
    top = value_count - 1
    widths = np.where(empty, 0, last - first + 1)
    ranged = np.repeat(np.arange(first.size), widths)
    offsets = np.arange(ranged.size) - np.repeat(np.cumsum(widths) - widths, widths)
    ranged_slot = first[ranged] + offsets
    lonely = np.flatnonzero(empty)
    ends = np.stack([np.clip(first[lonely], 0, top), np.clip(last[lonely], 0, top)], axis=1)
    ends[:, 1] = np.where(ends[:, 1] == ends[:, 0], -1, ends[:, 1])
    keep = ends.ravel() >= 0
    stack_of_design = np.concatenate([ranged, np.repeat(lonely, 2)[keep]])
    slot = np.concatenate([ranged_slot, ends.ravel()[keep]])
    order = np.argsort(stack_of_design, kind="stable")
    return stack_of_design[order], slot[order]


def pick_per_stack(stack_of_design: np.ndarray, resistor_ohm: np.ndarray, feasible: np.ndarray, error_v: np.ndarray, stack_count: int) -> np.ndarray:
    """Index of the chosen design of each stack among solved (stack, resistor) designs.

    Feasible designs first; among them the least error, and of those within
    :data:`TIE_WINDOW_V` of it the largest resistor. A stack with no feasible design gets
    its least-error design (ties again to the larger resistor).
    """
    has_feasible = np.zeros(stack_count, dtype=bool)
    np.logical_or.at(has_feasible, stack_of_design, feasible)
    eligible = feasible | ~has_feasible[stack_of_design]
    best_error = np.full(stack_count, np.inf)
    np.minimum.at(best_error, stack_of_design[eligible], error_v[eligible])
    tied = eligible & (error_v <= best_error[stack_of_design] + TIE_WINDOW_V)
    order = np.lexsort((-resistor_ohm, ~tied, stack_of_design))
    first_of_stack = np.ones(order.size, dtype=bool)
    first_of_stack[1:] = stack_of_design[order[1:]] != stack_of_design[order[:-1]]
    chosen = np.full(stack_count, -1, dtype=np.intp)
    chosen[stack_of_design[order[first_of_stack]]] = order[first_of_stack]
    return chosen


def bounded_designs(cell_tables: CellBoundTables, stacks: np.ndarray, bounds: StackBounds, spec: RailSpec,
                    error_cut_v: float = np.inf):
    """Each stack's series values in its provable range, with their error bounds.

    The bounds are refined coarse to fine (:func:`selector.search.design_bounds.range_bounds`):
    first over each stack's whole range, then over blocks of :data:`RANGE_BLOCK`
    consecutive values, then per value, each level only where the last one left the
    bound at most ``error_cut_v`` and proved no shortfall. A coarse bound holds for every
    value of its range, so a value whose refinement stops early keeps a valid bound.

    Parameters
    ----------
    error_cut_v : float [V]
        Bounds above this need no refinement (the caller prunes them anyway).

    Returns
    -------
    stack_of_design : int array (d,)
        Row in ``stacks`` of each design, ascending.
    resistor_ohm : array (d,) [Ω]
    error_lower_v : array (d,) [V]
        Lower bound on each design's ``error_v``; inf where the bounds prove it infeasible.
    """
    values = candidate_resistors(spec)
    first, last = resistor_slots(bounds, values, error_cut_v)
    stack_of_design, slot = design_slots(first, last, values.size)
    error_lower = np.zeros(slot.size)
    infeasible = np.zeros(slot.size, dtype=bool)
    active = np.arange(slot.size)
    for group in (stack_of_design, stack_of_design.astype(np.int64) * values.size + slot // RANGE_BLOCK, None):
        if active.size == 0:
            break
        if group is None:
            bound, short = range_bounds(cell_tables, stacks[stack_of_design[active]], values[slot[active]], values[slot[active]], spec)
        else:
            _, first_of_group, inverse = np.unique(group[active], return_index=True, return_inverse=True)
            low_slot = np.full(first_of_group.size, values.size)
            high_slot = np.full(first_of_group.size, -1)
            np.minimum.at(low_slot, inverse, slot[active])
            np.maximum.at(high_slot, inverse, slot[active])
            group_stacks = stacks[stack_of_design[active[first_of_group]]]
            bound, short = range_bounds(cell_tables, group_stacks, values[low_slot], values[high_slot], spec)
            bound, short = bound[inverse], short[inverse]
        error_lower[active] = np.maximum(error_lower[active], bound)
        infeasible[active] |= short
        active = active[~infeasible[active] & (error_lower[active] <= error_cut_v)]
    return stack_of_design, values[slot], np.where(infeasible, np.inf, error_lower)


def choose_bounded(parts: PartSet, stacks: np.ndarray, spec: RailSpec, stack_of_design, resistor_ohm, error_lower_v):
    """DESIGN §3 choice among given designs, solving only those whose bound can still win.

    Per stack, designs are solved in order of ``error_lower_v`` (ties: larger R first),
    1, 2, 4, … per round, while the bound is within :data:`TIE_WINDOW_V` of the least
    feasible error found for the stack (module docstring). Designs with an infinite
    bound are never solved; a stack all of whose designs have one is left out.

    Returns
    -------
    rows : int array
        Stacks (rows of ``stacks``) with a chosen design, ascending.
    resistor_ohm : array [Ω]
        Their chosen values.
    evaluation : DesignEvaluation
        Their chosen designs' evaluation.
    designs_solved : int
    """
    count = stacks.shape[0]
    keep = np.isfinite(error_lower_v)
    stack_of_design, resistor_ohm, error_lower_v = stack_of_design[keep], resistor_ohm[keep], error_lower_v[keep]
    order = np.lexsort((-resistor_ohm, error_lower_v, stack_of_design))
    stack_of_design, resistor_ohm, error_lower_v = stack_of_design[order], resistor_ohm[order], error_lower_v[order]
    start = np.searchsorted(stack_of_design, np.arange(count))
    rank = np.arange(stack_of_design.size) - start[stack_of_design]
    best = np.full(count, np.inf)
    done_below = np.zeros(count, dtype=np.intp)
    pieces, solved_rows = [], []
    budget = 1
    while True:
        pending = (rank >= done_below[stack_of_design]) & (error_lower_v <= best[stack_of_design] + TIE_WINDOW_V)
        chosen = np.flatnonzero(pending & (rank < done_below[stack_of_design] + budget))
        if chosen.size == 0:
            break
        done_below += budget
        evaluation = evaluate_in_calls(parts, stacks[stack_of_design[chosen]], resistor_ohm[chosen], spec)
        feasible_error = np.where(evaluation.feasible, evaluation.error_v, np.inf)
        np.minimum.at(best, stack_of_design[chosen], feasible_error)
        pieces.append(evaluation)
        solved_rows.append(chosen)
        budget *= 2
    if not pieces:
        return np.zeros(0, dtype=np.intp), np.zeros(0), None, 0
    solved = np.concatenate(solved_rows)
    evaluation = concatenate_designs(pieces) if len(pieces) > 1 else pieces[0]
    picked = pick_per_stack(stack_of_design[solved], resistor_ohm[solved], evaluation.feasible, evaluation.error_v, count)
    rows = np.flatnonzero(picked >= 0)
    picked = picked[rows]
    return rows, resistor_ohm[solved][picked], take_designs(evaluation, picked), int(solved.size)


def choose_resistors(
    parts: PartSet,
    stacks: np.ndarray,
    spec: RailSpec,
    *,
    bounds: StackBounds | None = None,
    cell_tables: CellBoundTables | None = None,
):
    """Choose each stack's series resistor per DESIGN §3 and evaluate the result.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    spec : RailSpec
        Series, resistor range or fixed value, and everything the corners need.
    bounds : StackBounds, optional
        Bounds already computed for these stacks (the search passes them).
    cell_tables : CellBoundTables, optional
        Per-design bound tables already computed for these parts and spec.

    Returns
    -------
    resistor_ohm : array (n,) [Ω]
        The chosen value (for an infeasible stack: the value of the design returned).
    evaluation : DesignEvaluation
        The chosen designs' evaluation, one per stack, in order. A stack whose every
        value the bounds prove infeasible gets its nearest-range design solved, so it
        still has a reason.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count = stacks.shape[0]
    values = candidate_resistors(spec)
    if spec.resistor_fixed_ohm is not None:
        resistor = np.full(count, values[0])
        return resistor, evaluate_in_calls(parts, stacks, resistor, spec)
    if bounds is None or cell_tables is None:
        tables = part_bound_tables(parts, spec)
        bounds = bound_stacks(tables, stacks, spec) if bounds is None else bounds
        if cell_tables is None:
            cell_tables = cell_bound_tables(parts, spec, float(values[0]), part_caps_a=part_current_caps(tables))
    stack_of_design, resistor_of_design, error_lower = bounded_designs(cell_tables, stacks, bounds, spec)
    error_lower = screened_bounds(parts, stacks, spec, stack_of_design, resistor_of_design, error_lower)
    rows, resistor, evaluation, _ = choose_bounded(parts, stacks, spec, stack_of_design, resistor_of_design, error_lower)
    missing = np.setdiff1d(np.arange(count), rows)
    if missing.size:
        # Every value of these is proven infeasible; solve the first one to name why.
        first_design = np.searchsorted(stack_of_design, missing)
        fallback = evaluate_in_calls(parts, stacks[missing], resistor_of_design[first_design], spec)
        rows = np.concatenate([rows, missing])
        resistor = np.concatenate([resistor, resistor_of_design[first_design]])
        evaluation = fallback if evaluation is None else concatenate_designs([evaluation, fallback])
    order = np.argsort(rows)
    return resistor[order], take_designs(evaluation, order)
