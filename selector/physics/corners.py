"""The 32 worst-case corners, the nominal point, and the contract metrics of whole arrays of designs.

A *design* is a stack and a series resistor. :func:`evaluate_designs` solves every design
at all 32 corners and the nominal point in one vectorised call and reduces the results to
the metrics of the physics contract (DESIGN §3): ``vout_low_v``, ``vout_high_v``,
``error_v``, ``i_min_a``, ``margin``, ``feasible`` and ``meets``.

Corner order (index = 16·supply + 8·load + 4·ambient + 2·resistor + sign, each bit 0 for
the first value): supply {min, max} × load current {least, most} × ambient {min, max} ×
resistor {R(Ta, −1), R(Ta, +1)} × element sign {−1, +1}. For a resistive load the least
current is at the largest resistance. Corners are numbered from 1 wherever a user sees
them (corner 1 is index 0).

Version 2 of the contract (DESIGN §3) adds the resistor's TCR to its corner values
(:func:`selector.physics.series_resistor.resistor_factor`), its derating with the ambient
to the margin, every element's TC spread to the element sign's reach, and a zener
current limit (``[search] zener_izt_limit``) to the feasibility rules. A corner whose stack
is off is solved (no stack current, the rail the supply, R and load make) and the rules
decide about it: a stack current of 0 fails any positive current floor.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import solve_stack_corners
from selector.physics.partset import PartSet
from selector.physics.series_resistor import (
    resistor_allowed_power_w,
    resistor_factor,
    resistor_margin,
)
from selector.spec.rail_spec import RailSpec

#: Infeasibility reasons, indexed by :attr:`DesignEvaluation.reason`.
REASON_NAMES: tuple[str, ...] = ("ok", "bias", "current limit", "dissipation", "no solution")
REASON_OK, REASON_BIAS, REASON_CURRENT_LIMIT, REASON_DISSIPATION, REASON_NO_SOLUTION = range(5)

CORNER_COUNT = 32


@dataclass(frozen=True)
class CornerSet:
    """Operating conditions, one entry per corner (or per Monte Carlo sample).

    Attributes
    ----------
    supply_v : array [V]
    load_current_a : array [A]
        Constant-current load (0 for a resistive load).
    load_conductance_s : array [S]
        ``1/R_L`` for a resistive load (0 for a current load).
    load_value : array [A] or [Ω]
        The load as written in the spec (current or resistance).
    ambient_c : array [°C]
    resistor_factor : array [1]
        The series resistor is ``R·resistor_factor`` here: ``1 + r·(tol + tcr·|Ta − 25 °C|)``.
    resistor_sign : array [1]
        The resistor's position ``r`` in its tolerance, −1 … +1.
    tolerance_sign : array [1]
        Element tolerance position, −1 … +1.
    labels : tuple of str
        Short description of each corner.
    """

    supply_v: np.ndarray
    load_current_a: np.ndarray
    load_conductance_s: np.ndarray
    load_value: np.ndarray
    ambient_c: np.ndarray
    resistor_factor: np.ndarray
    resistor_sign: np.ndarray
    tolerance_sign: np.ndarray
    labels: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.supply_v.shape[0])


def load_terms(spec: RailSpec, load_value: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The load as (constant current [A], conductance [S]) from its value as written."""
    load_value = np.asarray(load_value, dtype=float)
    if spec.load_kind == "resistance":
        return np.zeros(load_value.shape), 1.0 / load_value
    return load_value, np.zeros(load_value.shape)


def worst_case_corners(spec: RailSpec) -> CornerSet:
    """The 32 contract corners (DESIGN §3) in the documented order (see the module docstring).

    Parameters
    ----------
    spec : RailSpec

    Returns
    -------
    CornerSet
        32 corners.
    """
    least, most = (spec.load_max, spec.load_min) if spec.load_kind == "resistance" else (spec.load_min, spec.load_max)
    rows = list(
        itertools.product(
            ((spec.supply_min_v, "Vin min"), (spec.supply_max_v, "Vin max")),
            ((least, "load least"), (most, "load most")),
            ((spec.ambient_min_c, "Ta min"), (spec.ambient_max_c, "Ta max")),
            ((-1.0, "R low"), (1.0, "R high")),
            ((-1.0, "parts low"), (1.0, "parts high")),
        )
    )
    columns = [np.array([row[i][0] for row in rows], dtype=float) for i in range(5)]
    supply, load_value, ambient, resistor_sign, sign = columns
    load_current, conductance = load_terms(spec, load_value)
    labels = tuple(", ".join(item[1] for item in row) for row in rows)
    factor = resistor_factor(spec, ambient, resistor_sign)
    return CornerSet(supply, load_current, conductance, load_value, ambient, factor, resistor_sign, sign, labels)


def nominal_point(spec: RailSpec) -> CornerSet:
    """The nominal point (DESIGN §3): nominal supply, midpoint load as written, midpoint ambient, R exact, s = 0."""
    load_value = np.array([(spec.load_min + spec.load_max) / 2.0])
    load_current, conductance = load_terms(spec, load_value)
    return CornerSet(
        supply_v=np.array([spec.supply_nominal_v]),
        load_current_a=load_current,
        load_conductance_s=conductance,
        load_value=load_value,
        ambient_c=np.array([(spec.ambient_min_c + spec.ambient_max_c) / 2.0]),
        resistor_factor=np.array([1.0]),
        resistor_sign=np.array([0.0]),
        tolerance_sign=np.array([0.0]),
        labels=("nominal",),
    )


@dataclass(frozen=True)
class DesignEvaluation:
    """Contract metrics of many designs; arrays over designs, per-corner arrays (designs, 32).

    Attributes
    ----------
    vout_nom_v, vout_low_v, vout_high_v : array [V]
        NaN where the nominal point has no solution; 0 where a corner has none.
    error_v : array [V]
        ``max(|vout_high − target|, |vout_low − target|)``; inf where a corner has no solution.
    margin : array [1]
        Least of ``1 − P/P_max`` over every element and corner and ``1 − P_R/P_R,max(Ta)``.
    resistor_margin : array (designs, 32) [1]
        ``1 − P_R/P_R,max(Ta)`` at each corner (DESIGN §3 derating).
    i_min_a : array [A]
        Least stack current over the corners.
    feasible, meets, solved : arrays of bool
    reason : int array
        Most binding infeasibility, an index into :data:`REASON_NAMES`.
    vout_v, stack_current_a, load_current_a, resistor_power_w : arrays (designs, 32)
    junction_c, element_power_w, element_margin : arrays (designs, 32, max_len) or None
        Per element, with ``detail=True`` (padding slots: ambient, 0, 1).
    hottest_junction_c : array (designs, 32) [°C]
    corner_solved : array (designs, 32) of bool
        The circuit has a solution there (conducting, or with the stack off).
    corner_status : int array (designs, 32)
        Each corner's solver status, an index into :data:`selector.physics.circuit.STATUS_NAMES`
        (why a corner has no solution).
    nominal : dict or None
        With ``detail=True``: the nominal point's ``stack_current_a``, ``load_current_a``,
        ``resistor_power_w``, ``junction_c`` and ``element_power_w`` per design.
    reason_names : tuple of str
    """

    vout_nom_v: np.ndarray
    vout_low_v: np.ndarray
    vout_high_v: np.ndarray
    error_v: np.ndarray
    margin: np.ndarray
    i_min_a: np.ndarray
    feasible: np.ndarray
    meets: np.ndarray
    solved: np.ndarray
    reason: np.ndarray
    vout_v: np.ndarray
    stack_current_a: np.ndarray
    load_current_a: np.ndarray
    resistor_power_w: np.ndarray
    resistor_margin: np.ndarray
    hottest_junction_c: np.ndarray
    corner_solved: np.ndarray
    corner_status: np.ndarray
    junction_c: np.ndarray | None = None
    element_power_w: np.ndarray | None = None
    element_margin: np.ndarray | None = None
    nominal: dict | None = None
    reason_names: tuple[str, ...] = REASON_NAMES

    def reason_name(self, design: int) -> str:
        """The named reason of one design."""
        return self.reason_names[int(self.reason[design])]


def stack_current_limits(parts: PartSet, stacks: np.ndarray, spec: RailSpec) -> tuple[np.ndarray, np.ndarray]:
    """Least and most stack current each design's parts allow (DESIGN §3 feasibility).

    Returns
    -------
    need_a : array [A]
        ``max(spec min_current, each element's i_min_a)``.
    limit_a : array [A]
        Least :func:`part_current_limit` of the stack's elements (inf when none applies).
    """
    present = stacks >= 0
    safe = np.maximum(stacks, 0)
    need = np.where(present, parts.i_min_a[safe], 0.0).max(axis=1, initial=0.0)
    limit = np.where(present, part_current_limit(parts, spec)[safe], np.inf).min(axis=1, initial=np.inf)
    return np.maximum(need, spec.min_current_a), limit


def part_current_limit(parts: PartSet, spec: RailSpec) -> np.ndarray:
    """Most current each part may carry at a feasible design [A]: a forward part's
    ``if_max_a``; a zener's ``zener_izt_limit × izt_a`` when the spec sets that limit (its
    tolerance and TC hold near its test current); inf otherwise."""
    zener_limit = np.inf if spec.zener_izt_limit is None else spec.zener_izt_limit * parts.izt_a
    return np.where(parts.is_zener, zener_limit, parts.if_max_a)


def allowed_power_w(parts: PartSet, part_index: np.ndarray, ambient_c: np.ndarray) -> np.ndarray:
    """``P_max = min(pd_w, (tj_max_c − Ta)/θ)`` (DESIGN §3; θ-derating is common datasheet practice)."""
    return np.minimum(parts.pd_w[part_index], (parts.tj_max_c[part_index] - ambient_c) / parts.theta_ja_k_per_w[part_index])


def dissipation_margin(power_w: np.ndarray, allowed_w: np.ndarray) -> np.ndarray:
    """``1 − max(P, 0)/P_max`` [1] (DESIGN §3), as the solver reports it: 1 for a part that
    dissipates nothing (a negative tolerance can make its voltage negative at small
    currents), −inf for one that dissipates where nothing is allowed (``P_max ≤ 0``: the
    ambient at or past its Tjmax)."""
    heat = np.maximum(power_w, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = 1.0 - heat / allowed_w
    return np.where(heat == 0, 1.0, np.where(allowed_w > 0, margin, -np.inf))


def evaluate_designs(
    parts: PartSet,
    stacks: np.ndarray,
    resistor_ohm: np.ndarray,
    spec: RailSpec,
    *,
    detail: bool = False,
) -> DesignEvaluation:
    """Solve designs at the 32 corners and the nominal point; reduce to the contract metrics.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n_designs, max_len)
        Part indices, padded with −1.
    resistor_ohm : array (n_designs,) [Ω]
        Exact resistor value; its tolerance is applied per corner.
    spec : RailSpec
    detail : bool
        Also per-element junction, power and margin at every corner, and the nominal detail.

    Returns
    -------
    DesignEvaluation
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    resistor_ohm = np.broadcast_to(np.asarray(resistor_ohm, dtype=float), (stacks.shape[0],))
    corners = worst_case_corners(spec)
    nominal = nominal_point(spec)

    def row(corner_values: np.ndarray, nominal_values: np.ndarray) -> np.ndarray:
        return np.concatenate([corner_values, nominal_values])[None, :]

    # Stack-major: each design's parts are laid out once and broadcast over its 33 points.
    points = solve_stack_corners(
        parts,
        stacks,
        row(corners.supply_v, nominal.supply_v),
        resistor_ohm[:, None] * row(corners.resistor_factor, nominal.resistor_factor),
        row(corners.ambient_c, nominal.ambient_c),
        row(corners.tolerance_sign, nominal.tolerance_sign),
        row(corners.load_current_a, nominal.load_current_a),
        row(corners.load_conductance_s, nominal.load_conductance_s),
        detail=detail,
    )
    return reduce_corners(parts, stacks, spec, corners, points, detail)


def reduce_corners(parts, stacks, spec, corners, points, detail) -> DesignEvaluation:
    """The contract metrics (DESIGN §3) of designs solved at the 32 corners and, in column
    32, the nominal point."""
    designs, width = stacks.shape

    vout_all = points.vout_v
    solved_all = points.solved
    vout, corner_solved = vout_all[:, :CORNER_COUNT], solved_all[:, :CORNER_COUNT]
    current = points.stack_current_a[:, :CORNER_COUNT]
    resistor_power = points.resistor_power_w[:, :CORNER_COUNT]
    element_margin_min = points.worst_element_margin[:, :CORNER_COUNT]

    solved = corner_solved.all(axis=1)
    vout_low = np.where(solved, vout.min(axis=1), 0.0)
    vout_high = np.where(solved, vout.max(axis=1), 0.0)
    error = np.where(
        solved, np.maximum(np.abs(vout_high - spec.target_v), np.abs(vout_low - spec.target_v)), np.inf
    )
    i_min = np.where(solved, current.min(axis=1), 0.0)
    corner_resistor_margin = resistor_margin(resistor_power, resistor_allowed_power_w(spec, corners.ambient_c)[None, :])
    margin = np.where(solved, np.minimum(element_margin_min.min(axis=1), corner_resistor_margin.min(axis=1)), -np.inf)

    need, limit = stack_current_limits(parts, stacks, spec)
    i_max = current.max(axis=1)
    # Shortfalls relative to each limit, so the most binding one can be named.
    bias_short = np.where(need > 0, (need - i_min) / np.where(need > 0, need, 1.0), -i_min)
    over_limit = np.where(np.isfinite(limit), (i_max - limit) / np.where(np.isfinite(limit), limit, 1.0), -1.0)
    margin_short = spec.min_margin - margin
    bias_bad = i_min < need
    limit_bad = i_max > limit
    margin_bad = margin < spec.min_margin
    shortfalls = np.stack(
        [
            np.where(bias_bad, bias_short, -np.inf),
            np.where(limit_bad, over_limit, -np.inf),
            np.where(margin_bad & solved, margin_short, -np.inf),
        ]
    )
    reason = np.where(
        bias_bad | limit_bad | margin_bad, 1 + np.argmax(shortfalls, axis=0), REASON_OK
    )
    reason = np.where(solved, reason, REASON_NO_SOLUTION)
    feasible = reason == REASON_OK
    meets = feasible & (error <= spec.tolerance_v)

    extra = {}
    if detail:
        junction = points.junction_c
        power = points.element_power_w
        ambient_grid = np.broadcast_to(corners.ambient_c[None, :, None], (designs, CORNER_COUNT, width))
        safe = np.broadcast_to(np.maximum(stacks, 0)[:, None, :], (designs, CORNER_COUNT, width))
        p_max = allowed_power_w(parts, safe, ambient_grid)
        present = (stacks >= 0)[:, None, :]
        extra = dict(
            junction_c=junction[:, :CORNER_COUNT],
            element_power_w=power[:, :CORNER_COUNT],
            element_margin=np.where(present, dissipation_margin(power[:, :CORNER_COUNT], p_max), 1.0),
            nominal=dict(
                stack_current_a=points.stack_current_a[:, CORNER_COUNT],
                load_current_a=points.load_current_a[:, CORNER_COUNT],
                resistor_power_w=points.resistor_power_w[:, CORNER_COUNT],
                junction_c=junction[:, CORNER_COUNT],
                element_power_w=power[:, CORNER_COUNT],
                solved=solved_all[:, CORNER_COUNT],
            ),
        )
    return DesignEvaluation(
        vout_nom_v=np.where(solved_all[:, CORNER_COUNT], vout_all[:, CORNER_COUNT], np.nan),
        vout_low_v=vout_low,
        vout_high_v=vout_high,
        error_v=error,
        margin=margin,
        i_min_a=i_min,
        feasible=feasible,
        meets=meets,
        solved=solved,
        reason=reason.astype(np.int8),
        vout_v=vout,
        stack_current_a=current,
        load_current_a=points.load_current_a[:, :CORNER_COUNT],
        resistor_power_w=resistor_power,
        resistor_margin=corner_resistor_margin,
        hottest_junction_c=points.hottest_junction_c[:, :CORNER_COUNT],
        corner_solved=corner_solved,
        corner_status=points.status[:, :CORNER_COUNT],
        **extra,
    )
