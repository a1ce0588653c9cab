"""Operating point of the rail circuit, with every element's self-heating coupled in.

The circuit of the physics contract (DESIGN §3): supply ``Vin`` — series resistor ``R`` —
stack (elements in series, one current ``I``), the load across the stack. The load is a
current ``I_L`` or a resistance ``R_L``; both are written as ``I_L = I_Lc + G_L·Vout``
(``G_L = 1/R_L``), so one equation covers them:

    F(I) = Vin − R·(I + I_Lc) − (1 + R·G_L)·V_stack(I) = 0,   Vout = V_stack(I).

Each element's junction obeys ``Tj = Ta + θ·V·I``. The solver iterates on
``u = ln I`` (the stack voltage is close to linear in it, and ``F`` is concave in it, so
Newton's method overshoots at most once) together with every forward element's junction
temperature: one coupled Newton step updates ``u`` through the Schur complement of the
thermal equations and then every ``Tj``. Breakdown elements' junctions are closed-form in
``I``. Each point keeps a bracket ``[u_lo, u_hi]`` with ``F(u_lo) > 0 > F(u_hi)``; a Newton
step that leaves it is replaced by bisection, so every point converges or is flagged.

Most points never need the bracket: a fast path
(:func:`selector.physics.fast_newton.newton_block`) groups the points
by stack layout (distinct parts in the same columns with the same multiplicities), starts
from the cold stack's load line, takes the same coupled Newton steps without a bracket and
keeps each point only once it passes the same acceptance test; the rest go to the
bracketed solver (:func:`selector.physics.bracketed_newton.solve_block`).

:func:`solve_stack_corners` solves each stack at many corners (the worst-case corners of
a design): the layout, the grouping and every slot's constants are worked out once per
stack, and each block is laid out (corners, stacks) with those constants broadcast along
the corners; the same fast path and fallback then run on it, point for point the same
arithmetic as :func:`solve_operating_points`.

When even a vanishing current (1 fA) leaves the supply side below the stack's voltage,
the stack is **off**: ``I = 0`` and ``Vout = (Vin − R·I_Lc)/(1 + R·G_L)``, a solution
marked "stack off" (DESIGN §3); the feasibility rules decide about it. Element voltages
may be negative (a negative tolerance, or a zener's curve extrapolated far below its
knee), so the current bracket is widened upward wherever ``F`` is still positive at its
top; "load takes all the supply can give" means the load alone takes it all
(``Vin ≤ R·I_Lc``). Points without a solution are flagged, never NaN: that; an element
reaching electro-thermal loop gain ``θ·I·∂V/∂T ≥ 1``, or a junction that would settle
above :data:`~selector.physics.self_heating.JUNCTION_CEILING_C` (thermal runaway); or the
iteration not converging.

References
----------
.. [1] DESIGN §3, physics contract version 2 (circuit, self-heating, stack off).
.. [2] J. E. Dennis and R. B. Schnabel, *Numerical Methods for Unconstrained Optimization
       and Nonlinear Equations*, SIAM, 1996, §6.1 (safeguarded Newton with bisection).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from selector.physics.bracketed_newton import solve_block
from selector.physics.fast_iterate import Workspace
from selector.physics.fast_newton import newton_block
from selector.physics.partset import PartSet
from selector.physics.self_heating import JUNCTION_CEILING_C, ElementState, self_heated_element
from selector.physics.slot_constants import (
    block_constants,
    key_tables,
    slot_arrays,
    stack_constants,
)
from selector.physics.slot_layout import decode_layout, layout_groups, stack_layout
from selector.physics.solver_settings import (
    DEFAULT_CHUNK_POINTS,
    KCL_TOLERANCE_V,
    NO_ALLOWED_POWER_MARGIN,
    SOLUTION_STATUSES,
    STACK_CORNER_CHUNK_POINTS,
    STATUS_NAMES,  # noqa: F401  (re-exported: the names OperatingPoints.status indexes)
    STATUS_RUNAWAY,
    STATUS_SOLVED,
    STATUS_STACK_OFF,
)


@dataclass(frozen=True)
class OperatingPoints:
    """Solved operating points, one entry per (stack, condition) point.

    Attributes
    ----------
    vout_v : array [V]
        Rail voltage (the stack voltage; with the stack off, what the supply, R and the load
        make); 0 where the circuit has no solution.
    stack_current_a : array [A]
        Current through the stack; 0 where the stack is off or there is no solution.
    load_current_a : array [A]
        ``I_Lc + G_L·Vout``.
    resistor_power_w : array [W]
        ``R·(I + I_L)²``.
    kcl_residual_v : array [V]
        ``Vin − R·(I + I_L) − Vout`` at the solution.
    kcl_tolerance_v : array [V]
        What ``|kcl_residual_v|`` was solved to: 0.1 nV, or, where the circuit equation's
        terms are so large that double precision cannot resolve that (a load gain of
        thousands over a zener deep below its knee), 32 rounding units of them plus the
        slope times the closed bracket's width; never more than 1 µV of rail (1 µV times
        the load gain ``1 + R·G_L``).
    status : int array
        Index into :data:`STATUS_NAMES`.
    worst_element_margin : array [1]
        Least ``1 − max(P, 0)/P_max`` over the stack's elements, ``P_max = min(pd, (Tjmax −
        Ta)/θ)`` (DESIGN §3); 1 with the stack off; −inf where there is no solution, or
        where an element dissipates with nothing allowed (the ambient at or past its Tjmax).
    hottest_junction_c : array [°C]
        Hottest element junction; the ambient where not solved.
    junction_c, element_voltage_v, element_power_w, element_loop_gain : array (n, max_len) or None
        Per element (``detail=True``), padding slots 0 (junction: the ambient).
    """

    vout_v: np.ndarray
    stack_current_a: np.ndarray
    load_current_a: np.ndarray
    resistor_power_w: np.ndarray
    kcl_residual_v: np.ndarray
    status: np.ndarray
    worst_element_margin: np.ndarray
    hottest_junction_c: np.ndarray
    kcl_tolerance_v: np.ndarray | None = None
    junction_c: np.ndarray | None = None
    element_voltage_v: np.ndarray | None = None
    element_power_w: np.ndarray | None = None
    element_loop_gain: np.ndarray | None = None

    @property
    def solved(self) -> np.ndarray:
        """Points with a circuit solution: conducting, or with the stack off."""
        return np.isin(self.status, SOLUTION_STATUSES)

    @property
    def conducting(self) -> np.ndarray:
        """Points solved with current through the stack."""
        return self.status == STATUS_SOLVED


def solve_operating_points(
    parts: PartSet,
    stacks: np.ndarray,
    supply_v: np.ndarray,
    resistor_ohm: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray,
    load_current_a: np.ndarray | float = 0.0,
    load_conductance_s: np.ndarray | float = 0.0,
    *,
    detail: bool = False,
    chunk_points: int = DEFAULT_CHUNK_POINTS,
    tc_spread_sign: np.ndarray | None = None,
) -> OperatingPoints:
    """Solve ``Vin − R·(I + I_L) = V_stack(I)`` at many points at once.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices of each point's stack, padded with −1.
    supply_v : array (n,) [V]
    resistor_ohm : array (n,) [Ω]
        Series resistance at this point (its tolerance already applied); > 0.
    ambient_c : array (n,) [°C]
    tolerance_sign : array (n,) or (n, max_len) [1]
        −1, 0 or +1 applied to every element of the point, or one value per element
        (any value in [−1, 1], as the Monte Carlo draws them).
    load_current_a : array (n,) [A]
        Constant-current part of the load (0 for a resistive load).
    load_conductance_s : array (n,) [S]
        ``1/R_L`` for a resistive load (0 for a current load).
    detail : bool
        Also return per-element junction temperature, voltage and power.
    chunk_points : int
        Points solved together.
    tc_spread_sign : array (n,) or (n, max_len) [1], optional
        Position in each element's TC spread, shaped like ``tolerance_sign`` (default: the
        same as ``tolerance_sign``, as at the worst-case corners).

    Returns
    -------
    OperatingPoints
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count = stacks.shape[0]
    conditions = [
        np.broadcast_to(np.asarray(value, dtype=float), (count,))
        for value in (supply_v, resistor_ohm, ambient_c, load_current_a, load_conductance_s)
    ]
    tolerance_sign = np.asarray(tolerance_sign, dtype=float)
    spread_sign = tolerance_sign if tc_spread_sign is None else np.asarray(tc_spread_sign, dtype=float)
    per_element = tolerance_sign.ndim == 2
    if spread_sign.ndim != tolerance_sign.ndim:
        raise ValueError("tc_spread_sign must be shaped like tolerance_sign")

    def per_element_signs(sign):
        return np.broadcast_to(sign if per_element else sign.reshape(-1, 1) if sign.ndim else sign, stacks.shape)

    element_sign, element_spread = per_element_signs(tolerance_sign), per_element_signs(spread_sign)
    log_current = np.zeros(count)
    status = np.zeros(count, dtype=np.int8)
    tolerance = np.full(count, KCL_TOLERANCE_V)
    vout = np.zeros(count)
    worst_margin = np.zeros(count)
    hottest = np.zeros(count)
    width = stacks.shape[1]
    merge = not per_element
    point_sign = None if per_element else np.broadcast_to(tolerance_sign.reshape(-1), (count,))
    point_spread = None if per_element else np.broadcast_to(spread_sign.reshape(-1), (count,))
    keys, signature = stack_layout(parts, stacks, merge)
    work = Workspace(min(chunk_points, count))
    for slots, tables, chosen in _layout_blocks(parts, signature, width, merge, chunk_points):
        block = [c[chosen] for c in conditions]
        if per_element:
            signs = [[element_sign[chosen, column] for column, _ in family] for family in slots]
            spreads = [[element_spread[chosen, column] for column, _ in family] for family in slots]
        else:
            chunk_sign, chunk_spread = point_sign[chosen], point_spread[chosen]
            signs = [[chunk_sign] * len(family) for family in slots]
            spreads = [[chunk_spread] * len(family) for family in slots]
        part_keys = [[keys[column][chosen] for column, _ in family] for family in slots]
        forward, breakdown = block_constants(tables, slots, part_keys, signs, spreads, block[2])
        outcome = newton_block(forward, breakdown, *block, work)
        hard = outcome[2] < 0
        if hard.any():
            arrays = slot_arrays(len(parts), slots, part_keys, signs, spreads, hard)
            *rescued, rescued_tolerance = solve_block(parts, *arrays, *(value[hard] for value in block))
            for value, fallback in zip(outcome, rescued, strict=True):
                value[hard] = fallback
            block_tolerance = tolerance[chosen]
            block_tolerance[hard] = rescued_tolerance
            tolerance[chosen] = block_tolerance
        block_u, block_v, block_status, block_margin, block_hottest = outcome
        log_current[chosen], vout[chosen], worst_margin[chosen], hottest[chosen] = (
            block_u, block_v, block_margin, block_hottest
        )
        if block_status.any():  # status starts at STATUS_SOLVED (0)
            status[chosen] = block_status
    result = _assembled(log_current, vout, status, worst_margin, hottest, *conditions)
    result["kcl_tolerance_v"] = tolerance
    if detail:
        conducting = status == STATUS_SOLVED
        result.update(_element_detail(parts, stacks, log_current, conditions[2], element_sign, element_spread,
                                      conducting, result["hottest_junction_c"]))  # fmt: skip
    return OperatingPoints(**result)


def _layout_blocks(parts: PartSet, signature: np.ndarray, width: int, merge: bool, block_size: int):
    """Yield ``(slots, tables, points)`` for every block of at most ``block_size`` points of
    one layout: its slots (:func:`~selector.physics.slot_layout.decode_layout`), the per-key
    constant tables by multiplicity (made once, when a layout first needs them) and the
    block's points (a slice or an index array).

    Points of one layout have their distinct parts in the same columns with the same
    multiplicities, so each block computes no empty slot."""
    tables: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    for layout, group in layout_groups(signature):
        slots = decode_layout(layout, width, merge)
        for multiplicity in {m for family in slots for _, m in family} - tables.keys():
            tables[multiplicity] = key_tables(parts, multiplicity)
        if isinstance(group, slice):
            for start in range(group.start, group.stop, block_size):
                yield slots, tables, slice(start, min(start + block_size, group.stop))
        else:
            for start in range(0, group.size, block_size):
                yield slots, tables, group[start : start + block_size]


def _assembled(log_current, vout, status, worst_margin, hottest, supply, resistor, ambient, load_fixed, load_conductance):
    """The fields of :class:`OperatingPoints` from the solved state (in place; any shape):
    load ``I_Lc + G_L·Vout``, resistor power ``R·(I + I_L)²`` and the KCL residual, with
    every point without a solution set to its flagged values, and every stack-off point to
    ``I = 0``, ``Vout = (Vin − R·I_Lc)/(1 + R·G_L)`` (DESIGN §3). A junction above
    :data:`~selector.physics.self_heating.JUNCTION_CEILING_C` is no physical steady state: runaway."""
    status[(status == STATUS_SOLVED) & (hottest > JUNCTION_CEILING_C)] = STATUS_RUNAWAY
    # A slot with no allowed power (ambient at or past its Tjmax) carries NO_ALLOWED_POWER_W
    # in for 0 W, so its margin lands far below −1e250, where no real P/P_max can reach: −∞.
    worst_margin[worst_margin < NO_ALLOWED_POWER_MARGIN] = -np.inf
    # Most workloads solve every point: the fix-ups below then have nothing to do.
    every_point_solved = not status.any()  # STATUS_SOLVED is 0
    off = None if every_point_solved else np.nonzero(status == STATUS_STACK_OFF)
    if off is not None and off[0].size:
        supply_off, resistor_off = np.broadcast_to(supply, vout.shape)[off], np.broadcast_to(resistor, vout.shape)[off]
        fixed_off = np.broadcast_to(load_fixed, vout.shape)[off]
        gain_off = 1.0 + resistor_off * np.broadcast_to(load_conductance, vout.shape)[off]
        vout[off] = (supply_off - resistor_off * fixed_off) / gain_off
        worst_margin[off] = 1.0
        hottest[off] = np.broadcast_to(ambient, hottest.shape)[off]
    if not every_point_solved:
        log_current[status != STATUS_SOLVED] = 0.0
    current = np.exp(log_current)
    if off is not None and off[0].size:
        current[off] = 0.0
    unsolved = None
    if not every_point_solved:
        without_solution = (status != STATUS_SOLVED) & (status != STATUS_STACK_OFF)
        unsolved = without_solution.nonzero() if without_solution.any() else None
    if unsolved is not None:
        vout[unsolved] = 0.0
    load = load_conductance * vout
    load += load_fixed
    through_resistor = current + load
    residual = supply - resistor * through_resistor
    residual -= vout
    if unsolved is not None:
        for value in (current, load, through_resistor, residual):
            value[unsolved] = 0.0
        worst_margin[unsolved] = -np.inf
        hottest[unsolved] = np.broadcast_to(ambient, hottest.shape)[unsolved]
    return dict(
        vout_v=vout,
        stack_current_a=current,
        load_current_a=load,
        resistor_power_w=resistor * through_resistor**2,
        kcl_residual_v=residual,
        status=status,
        worst_element_margin=worst_margin,
        hottest_junction_c=hottest,
    )


def solve_stack_corners(
    parts: PartSet,
    stacks: np.ndarray,
    supply_v: np.ndarray,
    resistor_ohm: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray,
    load_current_a: np.ndarray | float = 0.0,
    load_conductance_s: np.ndarray | float = 0.0,
    *,
    detail: bool = False,
    chunk_points: int = STACK_CORNER_CHUNK_POINTS,
    tc_spread_sign: np.ndarray | None = None,
) -> OperatingPoints:
    """Each stack at many conditions (corners): the same equations and acceptance test as
    :func:`solve_operating_points`, results shaped (stacks, corners).

    Every corner of a stack shares its parts, so the layout, the grouping and each slot's
    constants are worked out once per stack and broadcast along the corners; a block holds
    whole stacks, laid out (corners, stacks) so each whole-array operation runs along the
    stacks.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices of each stack, padded with −1.
    supply_v, resistor_ohm, ambient_c : arrays broadcasting to (n, corners) [V], [Ω], [°C]
        A (1, corners) row (or a 1-D array of the corners) is shared by every stack.
    tolerance_sign : array broadcasting to (n, corners) [1]
        −1 … +1, applied to every element of the stack at that corner.
    load_current_a, load_conductance_s : arrays broadcasting to (n, corners) [A], [S]
    detail : bool
        Also per-element junction temperature, voltage and power, (n, corners, max_len).
    chunk_points : int
        Stack-corner points solved together (at least one stack's corners).
    tc_spread_sign : array broadcasting to (n, corners) [1], optional
        Position in every element's TC spread (default: ``tolerance_sign``).

    Returns
    -------
    OperatingPoints
        Every field (n, corners).
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count, width = stacks.shape
    values = [
        np.asarray(value, dtype=float)
        for value in (supply_v, resistor_ohm, ambient_c, load_current_a, load_conductance_s, tolerance_sign,
                      tolerance_sign if tc_spread_sign is None else tc_spread_sign)
    ]
    values = [v.reshape(1, 1) if v.ndim == 0 else v.reshape(1, -1) if v.ndim == 1 else v for v in values]
    corners = np.broadcast_shapes((count, 1), *(v.shape for v in values))[1]
    # Condition rows kept at their own size: a shared (1, corners) row stays one row.
    per_stack = [v.shape[0] != 1 for v in values]
    log_current, vout, worst_margin, hottest = (np.zeros((count, corners)) for _ in range(4))
    status = np.zeros((count, corners), dtype=np.int8)
    tolerance = np.full((count, corners), KCL_TOLERANCE_V)
    keys, signature = stack_layout(parts, stacks, True)
    stacks_per_block = max(1, chunk_points // max(corners, 1))
    work = Workspace(min(stacks_per_block, count) * corners)
    for slots, tables, chosen in _layout_blocks(parts, signature if corners else signature[:0], width, True,
                                                stacks_per_block):  # fmt: skip
        grid = (corners, chosen.stop - chosen.start if isinstance(chosen, slice) else chosen.size)
        # Corner-major (corners, stacks); a condition shared by every stack stays (corners, 1).
        block = [np.ascontiguousarray(v[chosen].T) if own else v.T for v, own in zip(values, per_stack, strict=True)]
        # The resistor spans the block, so every point array of the Newton block does too.
        block[1] = np.broadcast_to(block[1], grid)
        supply, resistor, ambient, load_fixed, load_conductance, sign, spread = block
        part_keys = [[keys[column][chosen] for column, _ in family] for family in slots]
        forward, breakdown = stack_constants(tables, slots, part_keys, sign, spread, ambient)
        outcome = newton_block(forward, breakdown, supply, resistor, ambient, load_fixed, load_conductance, work,
                                heated_start=True)  # fmt: skip
        hard = np.flatnonzero(outcome[2] < 0)
        if hard.size:
            corner_of, stack_of = np.unravel_index(hard, grid)
            point_keys = [[key[stack_of] for key in family] for family in part_keys]
            point_sign = np.broadcast_to(sign, grid)[corner_of, stack_of]
            point_spread = np.broadcast_to(spread, grid)[corner_of, stack_of]
            signs = [[point_sign] * len(family) for family in slots]
            spreads = [[point_spread] * len(family) for family in slots]
            arrays = slot_arrays(len(parts), slots, point_keys, signs, spreads, np.ones(hard.size, dtype=bool))
            conditions = (np.broadcast_to(v, grid)[corner_of, stack_of] for v in block[:5])
            *rescued, rescued_tolerance = solve_block(parts, *arrays, *conditions)
            for value, fallback in zip(outcome, rescued, strict=True):
                value[hard] = fallback
            block_tolerance = np.full(grid, KCL_TOLERANCE_V)
            block_tolerance.reshape(-1)[hard] = rescued_tolerance
            tolerance[chosen] = block_tolerance.T
        for output, value in zip((log_current, vout, status, worst_margin, hottest), outcome, strict=True):
            output[chosen] = value.reshape(grid).T
    full = (count, corners)
    conditions = [np.broadcast_to(v, full) for v in values[:5]]
    result = _assembled(log_current, vout, status, worst_margin, hottest, *conditions)
    result["kcl_tolerance_v"] = tolerance
    if detail:
        flat_stacks = np.repeat(stacks, corners, axis=0)
        element_sign, element_spread = (
            np.broadcast_to(np.broadcast_to(v, full).reshape(-1, 1), flat_stacks.shape) for v in values[5:7]
        )
        conducting = (status == STATUS_SOLVED).reshape(-1)
        per_element = _element_detail(parts, flat_stacks, log_current.reshape(-1), conditions[2].reshape(-1),
                                      element_sign, element_spread, conducting,
                                      result["hottest_junction_c"].reshape(-1))  # fmt: skip
        result.update({name: value.reshape(count, corners, width) for name, value in per_element.items()})
    return OperatingPoints(**result)


def _element_detail(parts, stacks, log_current, ambient, sign, spread, conducting, hottest_c):
    """Per-element state at the solved currents (exact junction solve per element); an
    element carrying no current (stack off, or no solution) shows 0 V, 0 W, the ambient.

    A forward element whose tempco is positive near the ambient and negative when hot can
    leave the Newton solve from ``Tj = Ta`` on a false runaway; it is solved again from the
    stack's hottest junction (``hottest_c`` [°C]), next to the steady state the stack found."""
    shape = stacks.shape
    junction = np.broadcast_to(ambient[:, None], shape).copy()
    voltage = np.zeros(shape)
    power = np.zeros(shape)
    gain = np.zeros(shape)
    rows, slots = np.nonzero((stacks >= 0) & conducting[:, None])
    if rows.size:
        state = self_heated_element(
            parts, stacks[rows, slots], log_current[rows], ambient[rows], sign[rows, slots],
            tc_spread_sign=spread[rows, slots],
        )
        if state.runaway.any():
            again = np.nonzero(state.runaway)[0]
            retried = self_heated_element(
                parts, stacks[rows[again], slots[again]], log_current[rows[again]], ambient[rows[again]],
                sign[rows[again], slots[again]], junction_guess_c=hottest_c[rows[again]],
                tc_spread_sign=spread[rows[again], slots[again]],
            )
            state = ElementState(**{field.name: _replaced(getattr(state, field.name), getattr(retried, field.name), again)
                                    for field in fields(ElementState)})
        junction[rows, slots] = state.junction_c
        voltage[rows, slots] = state.voltage_v
        power[rows, slots] = state.voltage_v * np.exp(log_current[rows])
        gain[rows, slots] = state.loop_gain
    return dict(junction_c=junction, element_voltage_v=voltage, element_power_w=power, element_loop_gain=gain)


def _replaced(values: np.ndarray, replacements: np.ndarray, where: np.ndarray) -> np.ndarray:
    values = values.copy()
    values[where] = replacements
    return values
