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

Most points never need the bracket: a fast path (:func:`_newton_block`) groups the points
by stack layout (distinct parts in the same columns with the same multiplicities), starts
from the cold stack's load line, takes the same coupled Newton steps without a bracket and
keeps each point only once it passes the same acceptance test; the rest go to the
bracketed solver.

:func:`solve_stack_corners` solves each stack at many corners (the worst-case corners of
a design): the layout, the grouping and every slot's constants are worked out once per
stack, and each block is laid out (corners, stacks) with those constants broadcast along
the corners; the same fast path and fallback then run on it, point for point the same
arithmetic as :func:`solve_operating_points`.

Points without a physical solution are flagged, never NaN: the load draws more than the
supply can give through ``R``; the stack current would be below 1 fA; an element reaches
electro-thermal loop gain ``θ·I·∂V/∂T ≥ 1``, or a junction would settle above
:data:`~selector.physics.devices.JUNCTION_CEILING_C` (thermal runaway); or the iteration did not
converge.

References
----------
.. [1] DESIGN §3, physics contract (circuit, self-heating).
.. [2] J. E. Dennis and R. B. Schnabel, *Numerical Methods for Unconstrained Optimization
       and Nonlinear Equations*, SIAM, 1996, §6.1 (safeguarded Newton with bisection).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from selector.physics.devices import (
    BOLTZMANN_OVER_CHARGE_V_PER_K,
    JUNCTION_CEILING_C,
    RUNAWAY_LOOP_GAIN,
    ZERO_CELSIUS_K,
    forward_junction_floor_c,
    self_heated_element,
)
from selector.physics.partset import PartSet

#: Least stack current the model is solved for [A].
LEAST_CURRENT_A = 1e-15
#: KCL residual at which a point counts as solved [V].
KCL_TOLERANCE_V = 1e-10
#: Thermal residual at which a forward junction counts as settled [K].
THERMAL_TOLERANCE_K = 1e-7
#: Allowed power a slot with none is given [W], so that 1/P_max stays finite (and
#: 0·1/P_max is no NaN) while any real dissipation exceeds it.
_NO_ALLOWED_POWER_W = 1e-300
#: Margins below this can only come from such a slot (see _assembled).
_NO_ALLOWED_POWER_MARGIN = -1e250
#: Iterations before a point is given up as not converged.
MAX_ITERATIONS = 120
#: Points solved together; keeps the working set in cache and memory proportional to it.
DEFAULT_CHUNK_POINTS = 8192
#: Stack-corner points solved together by :func:`solve_stack_corners` (measured: its
#: blocks run along the stacks, which longer rows serve better).
STACK_CORNER_CHUNK_POINTS = 16384

#: Status codes of :class:`OperatingPoints`.
STATUS_SOLVED = 0
STATUS_SUPPLY_EXHAUSTED = 1
STATUS_BELOW_LEAST_CURRENT = 2
STATUS_RUNAWAY = 3
STATUS_NOT_CONVERGED = 4
STATUS_NAMES: tuple[str, ...] = (
    "solved",
    "load takes all the supply can give",
    "stack current below 1 fA",
    "thermal runaway",
    "did not converge",
)


@dataclass(frozen=True)
class OperatingPoints:
    """Solved operating points, one entry per (stack, condition) point.

    Attributes
    ----------
    vout_v : array [V]
        Rail voltage (the stack voltage); 0 where not solved.
    stack_current_a : array [A]
        Current through the stack; 0 where not solved.
    load_current_a : array [A]
        ``I_Lc + G_L·Vout``.
    resistor_power_w : array [W]
        ``R·(I + I_L)²``.
    kcl_residual_v : array [V]
        ``Vin − R·(I + I_L) − Vout`` at the solution.
    status : int array
        Index into :data:`STATUS_NAMES`.
    worst_element_margin : array [1]
        Least ``1 − max(P, 0)/P_max`` over the stack's elements, ``P_max = min(pd, (Tjmax −
        Ta)/θ)`` (DESIGN §3); −inf where not solved, or where an element dissipates with
        nothing allowed (the ambient at or past its Tjmax).
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
    junction_c: np.ndarray | None = None
    element_voltage_v: np.ndarray | None = None
    element_power_w: np.ndarray | None = None
    element_loop_gain: np.ndarray | None = None

    @property
    def solved(self) -> np.ndarray:
        """Points with a physical, converged solution."""
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
    per_element = tolerance_sign.ndim == 2
    element_sign = np.broadcast_to(
        tolerance_sign if per_element else tolerance_sign.reshape(-1, 1) if tolerance_sign.ndim else tolerance_sign,
        stacks.shape,
    )
    log_current = np.zeros(count)
    status = np.zeros(count, dtype=np.int8)
    vout = np.zeros(count)
    worst_margin = np.zeros(count)
    hottest = np.zeros(count)
    width = stacks.shape[1]
    merge = not per_element
    point_sign = None if per_element else np.broadcast_to(tolerance_sign.reshape(-1), (count,))
    keys, signature = _stack_layout(parts, stacks, merge)
    tables: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    work = _Workspace(min(chunk_points, count))
    # Points of one layout have their distinct parts in the same columns with the same
    # multiplicities, so each block computes no empty slot.
    for layout, group in _layout_groups(signature):
        slots = _decode_layout(layout, width, merge)
        for multiplicity in {m for family in slots for _, m in family} - tables.keys():
            tables[multiplicity] = _key_tables(parts, multiplicity)
        size = count if isinstance(group, slice) else group.size
        for start in range(0, size, chunk_points):
            if isinstance(group, slice):
                chosen = slice(start, min(start + chunk_points, size))
            else:
                chosen = group[start : start + chunk_points]
            block = [c[chosen] for c in conditions]
            if per_element:
                signs = [[element_sign[chosen, column] for column, _ in family] for family in slots]
            else:
                chunk_sign = point_sign[chosen]
                signs = [[chunk_sign] * len(family) for family in slots]
            part_keys = [[keys[column][chosen] for column, _ in family] for family in slots]
            forward, breakdown = _block_constants(tables, slots, part_keys, signs, block[2])
            outcome = _newton_block(forward, breakdown, *block, work)
            hard = outcome[2] < 0
            if hard.any():
                arrays = _slot_arrays(len(parts), slots, part_keys, signs, hard)
                rescued = _solve_block(parts, *arrays, *(value[hard] for value in block))
                for value, fallback in zip(outcome, rescued, strict=True):
                    value[hard] = fallback
            block_u, block_v, block_status, block_margin, block_hottest = outcome
            log_current[chosen], vout[chosen], worst_margin[chosen], hottest[chosen] = (
                block_u, block_v, block_margin, block_hottest
            )
            if block_status.any():  # status starts at STATUS_SOLVED (0)
                status[chosen] = block_status
    result = _assembled(log_current, vout, status, worst_margin, hottest, *conditions)
    if detail:
        solved = status == STATUS_SOLVED
        result.update(_element_detail(parts, stacks, log_current, conditions[2], element_sign, solved))
    return OperatingPoints(**result)


def _assembled(log_current, vout, status, worst_margin, hottest, supply, resistor, ambient, load_fixed, load_conductance):
    """The fields of :class:`OperatingPoints` from the solved state (in place; any shape):
    load ``I_Lc + G_L·Vout``, resistor power ``R·(I + I_L)²`` and the KCL residual, with
    every unsolved point set to its flagged values. A junction above
    :data:`~selector.physics.devices.JUNCTION_CEILING_C` is no physical steady state: runaway."""
    status[(status == STATUS_SOLVED) & (hottest > JUNCTION_CEILING_C)] = STATUS_RUNAWAY
    # A slot with no allowed power (ambient at or past its Tjmax) carries _NO_ALLOWED_POWER_W
    # in for 0 W, so its margin lands far below −1e250, where no real P/P_max can reach: −∞.
    worst_margin[worst_margin < _NO_ALLOWED_POWER_MARGIN] = -np.inf
    unsolved = np.nonzero(status != STATUS_SOLVED)
    log_current[unsolved] = 0.0
    current = np.exp(log_current)
    vout[unsolved] = 0.0
    load = load_conductance * vout
    load += load_fixed
    through_resistor = current + load
    residual = supply - resistor * through_resistor
    residual -= vout
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

    Returns
    -------
    OperatingPoints
        Every field (n, corners).
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count, width = stacks.shape
    values = [
        np.asarray(value, dtype=float)
        for value in (supply_v, resistor_ohm, ambient_c, load_current_a, load_conductance_s, tolerance_sign)
    ]
    values = [v.reshape(1, 1) if v.ndim == 0 else v.reshape(1, -1) if v.ndim == 1 else v for v in values]
    corners = np.broadcast_shapes((count, 1), *(v.shape for v in values))[1]
    # Condition rows kept at their own size: a shared (1, corners) row stays one row.
    per_stack = [v.shape[0] != 1 for v in values]
    log_current, vout, worst_margin, hottest = (np.zeros((count, corners)) for _ in range(4))
    status = np.zeros((count, corners), dtype=np.int8)
    keys, signature = _stack_layout(parts, stacks, True)
    tables: dict[int, tuple[np.ndarray, np.ndarray]] = {}
    stacks_per_block = max(1, chunk_points // max(corners, 1))
    work = _Workspace(min(stacks_per_block, count) * corners)
    for layout, group in _layout_groups(signature if corners else signature[:0]):
        slots = _decode_layout(layout, width, True)
        for multiplicity in {m for family in slots for _, m in family} - tables.keys():
            tables[multiplicity] = _key_tables(parts, multiplicity)
        size = count if isinstance(group, slice) else group.size
        for start in range(0, size, stacks_per_block):
            if isinstance(group, slice):
                chosen = slice(start, min(start + stacks_per_block, size))
            else:
                chosen = group[start : start + stacks_per_block]
            grid = (corners, chosen.stop - chosen.start if isinstance(chosen, slice) else chosen.size)
            # Corner-major (corners, stacks); a condition shared by every stack stays (corners, 1).
            block = [np.ascontiguousarray(v[chosen].T) if own else v.T for v, own in zip(values, per_stack, strict=True)]
            # The resistor spans the block, so every point array of the Newton block does too.
            block[1] = np.broadcast_to(block[1], grid)
            supply, resistor, ambient, load_fixed, load_conductance, sign = block
            part_keys = [[keys[column][chosen] for column, _ in family] for family in slots]
            forward, breakdown = _stack_constants(tables, slots, part_keys, sign, ambient)
            outcome = _newton_block(forward, breakdown, supply, resistor, ambient, load_fixed, load_conductance, work,
                                    heated_start=True)  # fmt: skip
            hard = np.flatnonzero(outcome[2] < 0)
            if hard.size:
                corner_of, stack_of = np.unravel_index(hard, grid)
                point_keys = [[key[stack_of] for key in family] for family in part_keys]
                point_sign = np.broadcast_to(sign, grid)[corner_of, stack_of]
                signs = [[point_sign] * len(family) for family in slots]
                arrays = _slot_arrays(len(parts), slots, point_keys, signs, np.ones(hard.size, dtype=bool))
                conditions = (np.broadcast_to(v, grid)[corner_of, stack_of] for v in block[:5])
                rescued = _solve_block(parts, *arrays, *conditions)
                for value, fallback in zip(outcome, rescued, strict=True):
                    value[hard] = fallback
            for output, value in zip((log_current, vout, status, worst_margin, hottest), outcome, strict=True):
                output[chosen] = value.reshape(grid).T
    full = (count, corners)
    conditions = [np.broadcast_to(v, full) for v in values[:5]]
    result = _assembled(log_current, vout, status, worst_margin, hottest, *conditions)
    if detail:
        flat_stacks = np.repeat(stacks, corners, axis=0)
        element_sign = np.broadcast_to(np.broadcast_to(values[5], full).reshape(-1, 1), flat_stacks.shape)
        solved = (status == STATUS_SOLVED).reshape(-1)
        per_element = _element_detail(parts, flat_stacks, log_current.reshape(-1), conditions[2].reshape(-1),
                                      element_sign, solved)  # fmt: skip
        result.update({name: value.reshape(count, corners, width) for name, value in per_element.items()})
    return OperatingPoints(**result)


def _element_detail(parts, stacks, log_current, ambient, sign, solved):
    """Per-element state at the solved currents (exact junction solve per element)."""
    shape = stacks.shape
    junction = np.broadcast_to(ambient[:, None], shape).copy()
    voltage = np.zeros(shape)
    power = np.zeros(shape)
    gain = np.zeros(shape)
    rows, slots = np.nonzero((stacks >= 0) & solved[:, None])
    if rows.size:
        state = self_heated_element(
            parts, stacks[rows, slots], log_current[rows], ambient[rows], sign[rows, slots]
        )
        junction[rows, slots] = state.junction_c
        voltage[rows, slots] = state.voltage_v
        power[rows, slots] = state.voltage_v * np.exp(log_current[rows])
        gain[rows, slots] = state.loop_gain
    return dict(junction_c=junction, element_voltage_v=voltage, element_power_w=power, element_loop_gain=gain)


def family_slots(parts: PartSet, stacks: np.ndarray, element_sign: np.ndarray | None = None) -> tuple[np.ndarray, ...]:
    """Forward and breakdown parts of each stack in separate slot rows, with multiplicities.

    Equal parts in one stack carry one current at one ambient, so they share one junction
    temperature and one voltage: solving each distinct part once is exact. With
    per-element tolerance signs (``element_sign``) equal parts differ and are kept apart.
    This is the solver's own layout (:func:`_stack_layout`), spelled out per row.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len), padded with −1

    Returns
    -------
    forward_part, forward_count, forward_sign : arrays (n, max_len)
        Distinct forward parts first in each row, their multiplicity (0 = empty slot), and
        their tolerance sign (0 unless ``element_sign`` is given).
    breakdown_part, breakdown_count, breakdown_sign : arrays (n, max_len)
        The same for breakdown parts.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    merge = element_sign is None
    keys, signature = _stack_layout(parts, stacks, merge)
    sign = None if merge else np.broadcast_to(np.asarray(element_sign, dtype=float), stacks.shape)
    result = []
    for _ in range(2):
        result += [np.zeros(stacks.shape, dtype=np.intp), np.zeros(stacks.shape, dtype=np.intp), np.zeros(stacks.shape)]
    for layout, rows in _layout_groups(signature):
        for family, slots in enumerate(_decode_layout(layout, stacks.shape[1], merge)):
            part_out, count_out, sign_out = result[3 * family : 3 * family + 3]
            for slot, (column, multiplicity) in enumerate(slots):
                part_out[rows, slot] = keys[column][rows] - family * len(parts)
                count_out[rows, slot] = multiplicity
                if sign is not None:
                    sign_out[rows, slot] = sign[rows, column]
    return tuple(result)


def _layout_groups(signature: np.ndarray):
    """Yield ``(signature, points)`` for each layout; ``points`` is a slice when all share one."""
    if signature.size == 0:
        return
    first, last = int(signature.min()), int(signature.max())
    if first == last:
        yield first, slice(0, signature.size)
        return
    # A stable sort on 16-bit keys is a radix sort: linear in the number of points.
    narrow = signature.astype(np.uint16) if last < 1 << 16 else signature
    order = np.argsort(narrow, kind="stable")
    ordered = narrow[order]
    boundaries = np.flatnonzero(ordered[1:] != ordered[:-1]) + 1
    for begin, end in zip(np.r_[0, boundaries], np.r_[boundaries, order.size], strict=True):
        yield int(ordered[begin]), order[begin:end]


def _sort_columns(columns: list[np.ndarray]) -> None:
    """Sort each row across a short list of column arrays, in place (odd-even transposition
    network: ``width`` passes of compare-exchange; D. E. Knuth, *The Art of Computer
    Programming* vol. 3, 2nd ed., §5.3.4)."""
    width = len(columns)
    spare = np.empty_like(columns[0]) if width > 1 else None
    for rank in range(width):
        for i in range(rank % 2, width - 1, 2):
            low = np.minimum(columns[i], columns[i + 1], out=spare)
            np.maximum(columns[i], columns[i + 1], out=columns[i + 1])
            spare, columns[i] = columns[i], low


class _Family:
    """Per-slot constants of one family for a block of points, slot-major ``(slots, points)``.

    Empty slots carry multiplicity 0 and θ = 0 (no heating), so they add nothing and
    never signal runaway.
    """

    def __init__(self, parts, part_index, multiplicity, sign, ambient, forward):
        part_index = part_index.T
        sign = sign.T
        self.multiplicity = multiplicity.T.astype(float)
        present = self.multiplicity > 0
        theta = parts.theta_ja_k_per_w[part_index]
        self.theta = theta * present
        self.ambient = np.broadcast_to(ambient, part_index.shape)
        # Empty slots get no limit that could bind: their power is 0.
        inverse = _inverse_allowed_power(parts.pd_w[part_index], parts.tj_max_c[part_index], theta, self.ambient)
        self.inverse_p_max = np.where(present, inverse, 0.0)
        if forward:
            n = parts.n[part_index]
            nominal_k = parts.tnom_c[part_index] + ZERO_CELSIUS_K
            self.n_k_over_q = n * BOLTZMANN_OVER_CHARGE_V_PER_K
            self.xti_over_n = parts.xti[part_index] / n
            self.eg_over_nkq = parts.eg_ev[part_index] / self.n_k_over_q
            # ln Is(T) = log_is_offset + (xti/n)·ln T − eg·q/(n·k)/T  (SPICE3 scaling, rearranged)
            self.log_is_offset = (
                np.log(parts.is_a[part_index])
                - self.xti_over_n * np.log(nominal_k)
                + self.eg_over_nkq / nominal_k
            )
            self.eg = parts.eg_ev[part_index]
            self.xti_k_over_q = parts.xti[part_index] * BOLTZMANN_OVER_CHARGE_V_PER_K
            self.rs = parts.rs_ohm[part_index]
            self.offset = sign * parts.vf_tol_v[part_index]
        else:
            izt = parts.izt_a[part_index]
            tc = parts.tc_v_per_k[part_index]
            a = parts.zener_a_v[part_index]
            rz = parts.zener_rz_ohm[part_index]
            vz = parts.vz_v[part_index] * (1.0 + sign * parts.vz_tol_pct[part_index] / 100.0)
            self.offset = vz - tc * parts.tnom_c[part_index] - a * np.log(izt) - rz * izt
            self.a, self.rz, self.tc = a, rz, tc

    def keep(self, point_mask: np.ndarray) -> None:
        """Drop the points no longer solved."""
        for name, value in list(vars(self).items()):
            setattr(self, name, value[:, point_mask])


def _forward_terms(fam: _Family, u, current, junction_c):
    """Forward voltage and its slopes: :func:`selector.physics.devices.forward_voltage_slopes` with
    per-slot constants folded in (same formulas, SPICE3 diode model, DESIGN §3).

    ``ln(1 + I/Is) = x + log1p(exp(−x))`` and ``I/(I + Is) = 1/(1 + exp(−x))``; ``x`` is
    clipped to ±700 so the exponential stays finite (beyond that the terms are exact anyway).
    """
    temperature_k = junction_c + ZERO_CELSIUS_K
    inverse_t = 1.0 / temperature_k
    n_vt = fam.n_k_over_q * temperature_k
    x = u - (fam.log_is_offset + fam.xti_over_n * np.log(temperature_k) - fam.eg_over_nkq * inverse_t)
    np.clip(x, -700.0, 700.0, out=x)
    tail = np.exp(-x)
    fraction = 1.0 / (1.0 + tail)
    n_vt_log = n_vt * (x + np.log1p(tail))
    ohmic = current * fam.rs
    voltage = n_vt_log + ohmic + fam.offset
    dv_du = n_vt * fraction + ohmic
    dv_dt = (n_vt_log - fraction * (fam.xti_k_over_q * temperature_k + fam.eg)) * inverse_t
    return voltage, dv_du, dv_dt


def _solve_block(parts, forward_part, forward_count, forward_sign, breakdown_part, breakdown_count,
                 breakdown_sign, supply, resistor, ambient, load_fixed, load_conductance):  # fmt: skip
    """Solve one block of points that share a slot layout; see the module docstring."""
    count = supply.shape[0]
    lf = int((forward_count > 0).sum(axis=1).max(initial=0))
    lz = int((breakdown_count > 0).sum(axis=1).max(initial=0))
    fw = _Family(parts, forward_part[:, :lf], forward_count[:, :lf], forward_sign[:, :lf], ambient, True)
    zn = _Family(parts, breakdown_part[:, :lz], breakdown_count[:, :lz], breakdown_sign[:, :lz], ambient, False)

    status = np.full(count, STATUS_NOT_CONVERGED, dtype=np.int8)
    out_u = np.zeros(count)
    out_v = np.zeros(count)
    out_margin = np.full(count, -np.inf)
    out_hottest = ambient.copy()
    load_gain = 1.0 + resistor * load_conductance
    # The most current the supply can drive: with the stack at its least voltage, which a
    # negative forward tolerance can make negative (V ≥ s·vf_tol per forward element).
    least_stack_v = (fw.multiplicity * np.minimum(fw.offset, 0.0)).sum(axis=0)
    headroom_current = (supply - resistor * load_fixed - load_gain * least_stack_v) / resistor
    exhausted = headroom_current <= LEAST_CURRENT_A
    status[exhausted] = STATUS_SUPPLY_EXHAUSTED
    lo = np.full(count, np.log(LEAST_CURRENT_A))
    hi = np.log(np.maximum(headroom_current, 2 * LEAST_CURRENT_A))

    # Initial guess: the stack voltage at 1 mA, Is at TNOM, no self-heating, gives the current.
    guess_u = np.log(1e-3)
    cold_f = fw.n_k_over_q * (ambient + ZERO_CELSIUS_K) * np.maximum(
        guess_u - fw.log_is_offset - fw.xti_over_n * np.log(ZERO_CELSIUS_K + 25.0) + fw.eg_over_nkq / (ZERO_CELSIUS_K + 25.0),
        0.0,
    )
    cold_z = zn.offset + zn.tc * ambient + zn.a * guess_u + zn.rz * 1e-3
    stack_guess = (fw.multiplicity * cold_f).sum(axis=0) + (zn.multiplicity * cold_z).sum(axis=0)
    first_current = (supply - resistor * load_fixed - load_gain * stack_guess) / resistor
    u = np.clip(np.log(np.maximum(first_current, 1e-9)), lo, hi)
    junction_f = fw.ambient + fw.theta * np.exp(u) * cold_f

    work = {
        "u": u, "lo": lo, "hi": hi, "supply": supply, "resistor": resistor,
        "load_fixed": load_fixed, "load_gain": load_gain,
        "seen_positive": np.zeros(count, dtype=bool), "seen_negative": np.zeros(count, dtype=bool),
    }  # fmt: skip
    index = np.arange(count)
    active = ~exhausted

    for _ in range(MAX_ITERATIONS):
        if not active.any():
            break
        if active.sum() < 0.6 * active.size:
            fw.keep(active)
            zn.keep(active)
            junction_f = junction_f[:, active]
            work = {name: value[active] for name, value in work.items()}
            index = index[active]
            active = np.ones(index.size, dtype=bool)
        u = work["u"]
        current = np.exp(u)

        # Forward slots: linearise the thermal equation r = Tj − Ta − θ·I·V = 0.
        v_f, du_f, dt_f = _forward_terms(fw, u, current, junction_f)
        heating = fw.theta * current
        thermal_residual = junction_f - fw.ambient - heating * v_f
        gain_f = heating * dt_f
        headroom_f = np.maximum(1.0 - gain_f, 1.0 - RUNAWAY_LOOP_GAIN)
        dr_du = -heating * (v_f + du_f)
        # Voltage and slope along the thermally settled curve, to first order in r.
        v_settled = v_f - dt_f * thermal_residual / headroom_f
        slope_f = du_f - dt_f * dr_du / headroom_f

        # Breakdown slots: junction closed-form in the current.
        heating_z = zn.theta * current
        gain_z = heating_z * zn.tc
        headroom_z = np.maximum(1.0 - gain_z, 1.0 - RUNAWAY_LOOP_GAIN)
        cold = zn.offset + zn.a * u + zn.rz * current
        tj_z = (zn.ambient + heating_z * cold) / headroom_z
        v_z = cold + zn.tc * tj_z
        du_z = zn.a + zn.rz * current
        slope_z = du_z + zn.tc * heating_z * (v_z + du_z) / headroom_z

        stack_v = (fw.multiplicity * v_settled).sum(axis=0) + (zn.multiplicity * v_z).sum(axis=0)
        stack_slope = (fw.multiplicity * slope_f).sum(axis=0) + (zn.multiplicity * slope_z).sum(axis=0)
        worst_gain = np.maximum(gain_f.max(axis=0, initial=-np.inf), gain_z.max(axis=0, initial=-np.inf))
        runaway = worst_gain >= RUNAWAY_LOOP_GAIN
        # A junction iterate held at the ceiling: one that would settle above it if the
        # point ends there (a transient stay is corrected by the next coupled step).
        pinned = (junction_f >= JUNCTION_CEILING_C).any(axis=0) if junction_f.size else np.zeros(u.size, bool)
        unsettled = np.abs(thermal_residual).max(axis=0, initial=0.0) > THERMAL_TOLERANCE_K

        load_gain_w = work["load_gain"]
        residual = work["supply"] - work["resistor"] * (current + work["load_fixed"]) - load_gain_w * stack_v
        residual[runaway] = -1.0  # runaway means too much current: the root is below
        slope = -work["resistor"] * current - load_gain_w * stack_slope

        positive = residual > 0.0
        lo_w = np.where(positive, u, work["lo"])
        hi_w = np.where(positive, work["hi"], u)
        seen_positive = work["seen_positive"] | positive
        seen_negative = work["seen_negative"] | ~positive

        descending = slope < 0.0
        newton = u - residual / np.where(descending, slope, -1.0)
        inside = descending & ~runaway & (newton > lo_w) & (newton < hi_w)
        new_u = np.where(inside, newton, 0.5 * (lo_w + hi_w))
        if not inside.all():
            # A Newton step past an end not yet tried goes to that end: a point whose root
            # lies outside the range is then settled at once instead of by long bisection.
            past_lo = ~inside & descending & (newton <= lo_w) & ~seen_positive
            past_hi = ~inside & descending & (newton >= hi_w) & ~seen_negative
            new_u = np.where(past_lo, lo_w, np.where(past_hi, hi_w, new_u))

        done = (np.abs(residual) <= KCL_TOLERANCE_V) & ~unsettled & ~runaway
        collapsed = (hi_w - lo_w) < 1e-13
        finished = (done | collapsed) & active

        # The junctions the finished points are reported with: settled at this current, taken
        # before the update below, which follows the next trial current (a bisection step for
        # a converged point) and so no longer belongs to the solution.
        settled_junction_f = junction_f - thermal_residual / headroom_f
        # Coupled Newton update of the forward junctions (Schur complement of the thermal rows),
        # kept between the least junction possible at the next current and the ceiling.
        floor_f = forward_junction_floor_c(fw.ambient, fw.theta * np.exp(new_u), fw.offset)
        junction_f = np.clip(junction_f - (thermal_residual + dr_du * (new_u - u)) / headroom_f,
                             floor_f, JUNCTION_CEILING_C)
        work.update(u=new_u, lo=lo_w, hi=hi_w, seen_positive=seen_positive, seen_negative=seen_negative)

        if finished.any():
            where = index[finished]
            out_u[where] = u[finished]
            out_v[where] = stack_v[finished]
            # Element margin 1 − V·I/P_max and the hottest junction, at the solution.
            i_done = current[finished]
            # An ambient at or above Tjmax leaves no allowed power (_NO_ALLOWED_POWER_W); the
            # margin may overflow there, and _assembled makes it −inf.
            with np.errstate(over="ignore"):
                load_f = (v_settled[:, finished] * i_done * fw.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
                load_z = (v_z[:, finished] * i_done * zn.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
            out_margin[where] = 1.0 - np.maximum(load_f, load_z)
            # The hottest element's junction, which a negative tolerance can put below the
            # ambient (so the ambient is no floor); empty slots take no part.
            out_hottest[where] = np.maximum(
                np.where(fw.multiplicity > 0, settled_junction_f, -np.inf)[:, finished].max(axis=0, initial=-np.inf),
                np.where(zn.multiplicity > 0, tj_z, -np.inf)[:, finished].max(axis=0, initial=-np.inf),
            )
            outcome = np.full(where.size, STATUS_NOT_CONVERGED, dtype=np.int8)
            outcome[done[finished]] = STATUS_SOLVED
            failed = ~done[finished]
            outcome[failed & ~seen_negative[finished]] = STATUS_SUPPLY_EXHAUSTED
            outcome[failed & ~seen_positive[finished]] = STATUS_BELOW_LEAST_CURRENT
            outcome[failed & (runaway | pinned)[finished]] = STATUS_RUNAWAY
            status[where] = outcome
            active &= ~finished
    if active.any():
        # Out of iterations with a junction held at the ceiling: it would settle above it.
        status[index[active & pinned]] = STATUS_RUNAWAY
    return out_u, out_v, status, out_margin, out_hottest


#: Newton evaluations the fast path spends on a point before handing it to the safeguarded solver.
FAST_EVALUATIONS = 8
#: How far below the ambient the fast path lets a forward junction go [K]. A negative
#: tolerance can settle one a little colder (:func:`selector.physics.devices.forward_junction_floor_c`;
#: by microkelvins at the small currents where it happens); a point colder still goes to
#: the bracketed solver, which uses that floor itself.
_FAST_BELOW_AMBIENT_K = 1.0
#: Zener loop gain ``θ·tc·I`` the fast path stays below, so ``1/(1 − g)`` stays modest.
_FAST_LOOP_GAIN = 0.999
#: Blended Newton steps on the cold stack's load line that give the fast path its start.
_START_STEPS = 1
#: First fast evaluation at which points are checked. From the cold start the second
#: evaluation (after one coupled step) is almost never within the tolerances (measured:
#: 0.01–0.03 % of points), so checking it would cost more than it saves; from the heated
#: start the first never is (its junctions are only estimates).
_FIRST_CHECK_COLD, _FIRST_CHECK_HEATED = 2, 1

# Rows of the per-key constant tables (one element with multiplicity m folded in).
_F_LOG_IS, _F_XTI_N, _F_EG_NKQ, _F_NKQ, _F_XTI_KQ, _F_EG, _F_RS, _F_OFFSET, _F_THETA, _F_PD, _F_TJ_MAX = range(11)
_Z_OFFSET, _Z_TOL_V, _Z_TC, _Z_A, _Z_RZ, _Z_LOOP, _Z_THETA, _Z_PD, _Z_TJ_MAX = range(9)
# Appended per block by the constant builders: 1/P_max at the point's ambient.
_F_INVERSE_P_MAX, _Z_INVERSE_P_MAX = 11, 9


class _Workspace:
    """Named work rows reused by every block of one solve: arithmetic into fresh memory costs
    about twice as much as into memory already in cache."""

    def __init__(self, length: int):
        self.length = length
        self.rows: dict[object, np.ndarray] = {}
        self.views: dict[tuple[object, object], np.ndarray] = {}

    def __call__(self, name: object, shape: int | tuple[int, ...]) -> np.ndarray:
        view = self.views.get((name, shape))
        if view is None:
            row = self.rows.get(name)
            if row is None:
                row = self.rows[name] = np.empty(self.length)
            view = row[:shape] if isinstance(shape, int) else row[: math.prod(shape)].reshape(shape)
            if len(self.views) < 4096:  # block shapes repeat; bound the cache all the same
                self.views[name, shape] = view
        return view


def _taker(keep: np.ndarray, shape: tuple[int, ...]):
    """A function giving the kept points (flat indices into ``shape``) of any array that
    broadcasts to ``shape``, as a flat array: per-stack (stacks,) and per-corner (corners, 1)
    rows of a (corners, stacks) block are read where they are, never spread first."""
    if len(shape) == 1:
        return lambda value: value[keep]
    corner, stack = np.unravel_index(keep, shape)

    def take(value: np.ndarray) -> np.ndarray:
        if value.shape == shape:
            return value.reshape(-1)[keep]
        if value.ndim == 1:
            return value[stack]
        if value.shape == (shape[0], 1):
            return value[corner, 0]
        return np.broadcast_to(value, shape)[corner, stack]

    return take


def _key_tables(parts: PartSet, multiplicity: int) -> tuple[np.ndarray, np.ndarray]:
    """Per-key constants of ``multiplicity`` equal elements in series, forward and breakdown.

    Keys are those of :func:`_stack_layout`: key ``k`` names part ``k mod P`` (``P`` parts;
    forward parts ``0…P−1``, breakdown parts ``P…2P−1``, padding ``2P``), so one column
    gather gives a slot every constant it needs.

    Forward rows (SPICE3 scaling rearranged, as in :class:`_Family`):
    ``ln Is(T) = log_is + (xti/n)·ln T − eg·q/(n·k)/T`` per element; then m·n·k/q,
    m·xti·k/q, m·eg, m·rs, m·vf_tol (signed later), θ/m (one element's heating from the
    slot's voltage), m·pd, tj_max.

    Breakdown rows (DESIGN §3 breakdown element): m·(vz − tc·tnom − a·ln Izt − rz·Izt),
    m·vz·vz_tol/100, m·tc, m·a, m·rz, θ·tc (per element), θ/m, m·pd, tj_max. With
    ``c = row0 + s·row1 + row2·Ta`` the slot voltage at ``Tj = Ta + θ·I·V/m`` is
    ``(c + m·a·ln I + m·rz·I)/(1 − θ·tc·I)`` (``V`` is linear in ``Tj``).
    """
    part = np.arange(2 * len(parts) + 1) % len(parts)
    m = float(multiplicity)
    n = parts.n[part]
    nkq = n * BOLTZMANN_OVER_CHARGE_V_PER_K
    nominal_k = parts.tnom_c[part] + ZERO_CELSIUS_K
    xti_over_n = parts.xti[part] / n
    eg_over_nkq = parts.eg_ev[part] / nkq
    theta = parts.theta_ja_k_per_w[part]
    forward = np.stack([
        np.log(parts.is_a[part]) - xti_over_n * np.log(nominal_k) + eg_over_nkq / nominal_k,
        xti_over_n,
        eg_over_nkq,
        m * nkq,
        m * parts.xti[part] * BOLTZMANN_OVER_CHARGE_V_PER_K,
        m * parts.eg_ev[part],
        m * parts.rs_ohm[part],
        m * parts.vf_tol_v[part],
        theta / m,
        m * parts.pd_w[part],
        parts.tj_max_c[part],
    ])  # fmt: skip
    izt = parts.izt_a[part]
    tc = parts.tc_v_per_k[part]
    a = parts.zener_a_v[part]
    rz = parts.zener_rz_ohm[part]
    breakdown = np.stack([
        m * (parts.vz_v[part] - tc * parts.tnom_c[part] - a * np.log(izt) - rz * izt),
        m * parts.vz_v[part] * parts.vz_tol_pct[part] / 100.0,
        m * tc,
        m * a,
        m * rz,
        theta * tc,
        theta / m,
        m * parts.pd_w[part],
        parts.tj_max_c[part],
    ])  # fmt: skip
    return forward, breakdown


def _inverse_allowed_power(pd, tj_max, theta, ambient_c):
    """``1/P_max`` [1/W], ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3), of one element or,
    from rows of :func:`_key_tables`, of a slot's elements together; a limit at or below 0 W
    counts as :data:`_NO_ALLOWED_POWER_W`, which any power exceeds."""
    allowed = np.subtract(tj_max, ambient_c)
    allowed /= theta
    np.minimum(allowed, pd, out=allowed)
    np.maximum(allowed, _NO_ALLOWED_POWER_W, out=allowed)
    return np.divide(1.0, allowed, out=allowed)


def _block_constants(tables, slots, part_keys, signs, ambient_c):
    """Each slot's constant rows for one block (:func:`_key_tables`), tolerance signs applied,
    each zener's voltage offset taken to the ambient ``ambient_c`` [°C], and ``1/P_max`` there
    appended."""
    forward, breakdown = [], []
    for (_, multiplicity), key, sign in zip(slots[0], part_keys[0], signs[0], strict=True):
        constants = list(np.take(tables[multiplicity][0], key, axis=1))
        constants[_F_OFFSET] *= sign
        constants.append(_inverse_allowed_power(constants[_F_PD], constants[_F_TJ_MAX], constants[_F_THETA], ambient_c))
        forward.append(constants)
    for (_, multiplicity), key, sign in zip(slots[1], part_keys[1], signs[1], strict=True):
        constants = list(np.take(tables[multiplicity][1], key, axis=1))
        tolerance_v, offset = constants[_Z_TOL_V], constants[_Z_OFFSET]
        tolerance_v *= sign
        offset += tolerance_v
        offset += np.multiply(constants[_Z_TC], ambient_c, out=tolerance_v)
        constants.append(_inverse_allowed_power(constants[_Z_PD], constants[_Z_TJ_MAX], constants[_Z_THETA], ambient_c))
        breakdown.append(constants)
    return forward, breakdown


def _stack_constants(tables, slots, part_keys, sign, ambient_c):
    """Each slot's constant rows for a block of whole stacks (:func:`_key_tables`): one value
    per stack, (stacks,), except the voltage offsets, which take each corner's tolerance sign
    ``sign`` and (zeners) ambient ``ambient_c`` [°C], and the appended ``1/P_max`` at each
    corner's ambient, (corners, stacks). A shared ambient row takes few values (the corners
    repeat them), so ``1/P_max`` is worked out once per value and stack."""
    if ambient_c.shape[1] == 1:
        ambient_values, corner_value = np.unique(ambient_c[:, 0], return_inverse=True)
        ambient_values = ambient_values[:, None]
    else:
        ambient_values, corner_value = ambient_c, None

    def inverse_allowed(pd, tj_max, theta):
        inverse = _inverse_allowed_power(pd, tj_max, theta, ambient_values)
        return inverse if corner_value is None else np.take(inverse, corner_value, axis=0)

    forward, breakdown = [], []
    for (_, multiplicity), key in zip(slots[0], part_keys[0], strict=True):
        rows = list(np.take(tables[multiplicity][0], key, axis=1))
        rows[_F_OFFSET] = sign * rows[_F_OFFSET]
        rows.append(inverse_allowed(rows[_F_PD], rows[_F_TJ_MAX], rows[_F_THETA]))
        forward.append(rows)
    for (_, multiplicity), key in zip(slots[1], part_keys[1], strict=True):
        rows = list(np.take(tables[multiplicity][1], key, axis=1))
        offset = sign * rows[_Z_TOL_V]
        offset += rows[_Z_OFFSET]
        offset += rows[_Z_TC] * ambient_c
        rows[_Z_OFFSET] = offset
        rows.append(inverse_allowed(rows[_Z_PD], rows[_Z_TJ_MAX], rows[_Z_THETA]))
        breakdown.append(rows)
    return forward, breakdown


def _slot_arrays(part_count, slots, part_keys, signs, chosen):
    """The chosen points' slots as :func:`family_slots` rows, for :func:`_solve_block`."""
    arrays = []
    rows = int(np.count_nonzero(chosen))
    for family, (family_slots, family_keys, family_signs) in enumerate(zip(slots, part_keys, signs, strict=True)):
        part = np.zeros((rows, len(family_slots)), dtype=np.intp)
        multiplicity = np.zeros(part.shape, dtype=np.intp)
        sign = np.zeros(part.shape)
        for slot, ((_, m), key, slot_sign) in enumerate(zip(family_slots, family_keys, family_signs, strict=True)):
            part[:, slot] = key[chosen] - family * part_count
            multiplicity[:, slot] = m
            sign[:, slot] = slot_sign[chosen]
        arrays += [part, multiplicity, sign]
    return arrays


def _stack_layout(parts: PartSet, stacks: np.ndarray, merge: bool) -> tuple[np.ndarray, np.ndarray]:
    """Element keys per stack position and a layout signature per point.

    Keys: forward part ``p`` → ``p``, breakdown part ``p`` → ``P + p``, padding → ``2P``.
    With ``merge`` each row's keys are sorted (forward, then breakdown, then padding) and
    the signature packs the forward count, the breakdown count and where each run of
    equal keys starts, so every point of one signature has its distinct parts in the same
    columns with the same multiplicities. Without ``merge`` (one tolerance sign per
    element) the columns stay in place and the signature is their family pattern.

    Returns
    -------
    keys : int array (max_len, n)
    signature : int array (n,)
    """
    count, width = stacks.shape
    part_count = len(parts)
    pad = 2 * part_count
    # Narrow integers: this pass touches every element of every stack.
    key_type = np.int16 if pad < 1 << 15 else np.int32
    key_of_part = np.append(np.arange(part_count) + parts.is_zener * part_count, pad).astype(key_type)
    columns = [key_of_part[stacks[:, j]] for j in range(width)]
    if merge:
        _sort_columns(columns)
        forward = np.zeros(count, dtype=np.int32)
        filled = np.zeros(count, dtype=np.int32)
        for column in columns:
            forward += column < part_count
            filled += column < pad
        forward *= width + 1
        forward += filled
        signature = np.left_shift(forward, width - 1, out=forward)
        for j in range(1, width):
            head = (columns[j] != columns[j - 1]).astype(np.int32)
            signature |= np.left_shift(head, j - 1, out=head)
    else:
        signature = np.zeros(count, dtype=np.int64)
        for j in range(width):
            signature += ((columns[j] >= part_count).astype(np.int64) + (columns[j] == pad)) * 3**j
    return np.stack(columns), signature


def _decode_layout(signature: int, width: int, merge: bool) -> tuple[list[tuple[int, int]], list[tuple[int, int]]]:
    """(column, multiplicity) of each forward and each breakdown slot of a signature."""
    if not merge:
        codes = [(signature // 3**j) % 3 for j in range(width)]
        return [(j, 1) for j in range(width) if codes[j] == 0], [(j, 1) for j in range(width) if codes[j] == 1]
    forward, filled = divmod(signature >> (width - 1), width + 1)
    starts = [0] + [j for j in range(1, width) if signature >> (j - 1) & 1]
    slots: list[list[tuple[int, int]]] = [[], []]
    for family, (begin, end) in enumerate(((0, forward), (forward, filled))):
        if end > begin:
            heads = [begin] + [j for j in starts if begin < j < end]
            slots[family] = [(j, following - j) for j, following in zip(heads, heads[1:] + [end], strict=True)]
    return slots[0], slots[1]


def _newton_block(forward, breakdown, supply, resistor, ambient, load_fixed, load_conductance, work,
                  heated_start=False):  # fmt: skip
    """Fast path: coupled Newton without a bracket, from a close start; keeps what it verifies.

    ``forward`` and ``breakdown`` hold one constant array per slot (rows as in
    :func:`_key_tables`, signs applied, shape (rows, points)). The equations, the coupled
    thermal step and the acceptance test are those of :func:`_solve_block`. The current
    step is Newton's for the resistor's exponential term and the stack's linear one
    blended to second order: with ``δ = F/|F'|`` and ``p`` the resistor's share of
    ``|F'|``, ``Δu = (1 − p)·δ + p·ln(1 + δ)``, exact to second order when
    ``F = K − R·e^u − S·u`` (Taylor expansion of ``R·I·(e^Δu − 1) + S·Δu = F``).

    The start solves that same form for the stack with every junction at the ambient —
    ``V ≈ A + B·ln I + C·I`` (each forward element conducting, SPICE3 diode; each zener's
    curve of DESIGN §3 exactly). Without ``heated_start`` the first evaluation is taken there
    with every junction at the ambient, so it needs no logarithm per slot, and points are
    checked from the third. With it, the start adds self-heating to first order: each
    slot's settled rise ``θ·I·V/(1 − θ·I·∂V/∂T)`` moves its voltage by ``∂V/∂T`` times it, a
    term in ``I`` that joins ``C``; one more step on that line, the junctions start at
    ``Ta + θ·I·V``, and points are checked from the second evaluation. Measured on
    ``benchmarks/bench_solver.py``: the heated start verifies 96 % of its corner workload
    after one coupled step (and pays), but only 35 % of its wider random points (and does
    not). Points not verified within :data:`FAST_EVALUATIONS` come back with status −1.
    """
    grid = np.broadcast_shapes(supply.shape, resistor.shape, ambient.shape, load_fixed.shape, load_conductance.shape)
    count = math.prod(grid)
    drive = np.multiply(resistor, load_fixed, out=work("drive", grid))
    np.subtract(supply, drive, out=drive)
    load_gain = np.multiply(resistor, load_conductance, out=work("load_gain", grid))
    load_gain += 1.0
    current_cap = np.divide(drive, resistor, out=work("hi", grid))
    for z in breakdown:
        # Where θ·tc ≤ 0 the bound is beyond any current (1e-300 stands in for 0).
        bound = np.maximum(z[_Z_LOOP], 1e-300, out=work(0, z[_Z_LOOP].shape))
        np.minimum(current_cap, np.divide(_FAST_LOOP_GAIN, bound, out=bound), out=current_cap)
    # Every point is either stored by _record or left at status −1 for the safeguarded
    # solver, which overwrites it, so the outputs need no initial values.
    status = np.full(count, -1, dtype=np.int8)
    out_u, out_v, out_margin, out_hottest = (work(("out", name), count) for name in range(4))

    viable = current_cap > 2 * LEAST_CURRENT_A
    if viable.all():
        index = slice(None)
    else:
        index = np.flatnonzero(viable)
        take = _taker(index, grid)
        forward = [[take(row) for row in f] for f in forward]
        breakdown = [[take(row) for row in z] for z in breakdown]
        ambient, drive, load_gain, current_cap, resistor = (
            take(a) for a in (ambient, drive, load_gain, current_cap, resistor)
        )
    size = current_cap.shape
    # At its own shape: a (corners, 1) ambient row stays one value per corner.
    ambient_k = np.add(ambient, ZERO_CELSIUS_K, out=work("ambient_k", ambient.shape))
    coldest_k = ambient_k - _FAST_BELOW_AMBIENT_K
    lo = np.log(LEAST_CURRENT_A)
    hi = np.log(current_cap, out=current_cap)

    log_ambient = np.log(ambient_k, out=work("log_ambient", ambient.shape))
    inverse_ambient = np.divide(1.0, ambient_k, out=work("inverse_ambient", ambient.shape))
    cold_v, cold_log_slope, cold_ohmic, n_vt, log_is, scratch = (work(name, size) for name in range(6))
    for buffer in (cold_v, cold_log_slope, cold_ohmic):
        buffer.fill(0.0)
    # Each forward slot's n·Vt and ln Is at the ambient, kept for the first evaluation or the
    # heated start.
    cold = [(work(("cold n_vt", j), size), work(("cold ln Is", j), size)) for j in range(len(forward))]
    for f, (slot_n_vt, slot_log_is) in zip(forward, cold, strict=True):
        np.multiply(f[_F_NKQ], ambient_k, out=slot_n_vt)
        np.multiply(f[_F_XTI_N], log_ambient, out=slot_log_is)
        slot_log_is -= np.multiply(f[_F_EG_NKQ], inverse_ambient, out=scratch)
        slot_log_is += f[_F_LOG_IS]
        cold_v += f[_F_OFFSET]
        cold_v -= np.multiply(slot_n_vt, slot_log_is, out=scratch)
        cold_log_slope += slot_n_vt
        cold_ohmic += f[_F_RS]
    for z in breakdown:
        cold_v += z[_Z_OFFSET]
        cold_log_slope += z[_Z_A]
        cold_ohmic += z[_Z_RZ]
    # Load line K − P·e^u − Q·u = 0 of that cold stack.
    line_k = np.subtract(drive, np.multiply(load_gain, cold_v, out=cold_v), out=cold_v)
    line_p = np.add(resistor, np.multiply(load_gain, cold_ohmic, out=cold_ohmic), out=cold_ohmic)
    line_q = np.multiply(load_gain, cold_log_slope, out=cold_log_slope)
    # First guess: the line with the stack's log-current term left out (kept above 0 by
    # a floor of 1e-3 of the drive where the cold stack alone would exceed the supply).
    u = np.multiply(drive, 1e-3, out=work(("u", 1), size))
    np.maximum(line_k, u, out=u)
    u /= line_p
    np.log(u, out=u)
    np.maximum(u, lo, out=u)
    np.minimum(u, hi, out=u)
    exponential, falling, delta = n_vt, log_is, scratch
    for _ in range(_START_STEPS):
        _line_step(u, line_k, line_p, line_q, lo, hi, exponential, falling, delta, work(6, size))

    if heated_start:
        junction = _heated_start(forward, breakdown, cold, u, ambient_k, inverse_ambient, load_gain, line_k, line_p,
                                 line_q, lo, hi, work, size)  # fmt: skip
    else:
        junction = [np.broadcast_to(ambient_k, size).copy() for _ in forward]
    first_check = _FIRST_CHECK_HEATED if heated_start else _FIRST_CHECK_COLD
    thermal = [None] * len(forward)  # per slot: residual, its u-slope, 1/(1 − g), settled voltage
    zener_v = [None] * len(breakdown)
    pending = np.ones(u.shape, dtype=bool)
    for evaluation in range(FAST_EVALUATIONS):
        at_ambient = evaluation == 0 and not heated_start
        checking = evaluation >= first_check
        size = u.shape
        minus_x, tail, log_term, n_vt, ohmic, dv_dt, heating, log_t, inverse_t, scratch = (
            work(name, size) for name in range(10)
        )
        current = np.exp(u, out=work("current", size))
        stack_v = work("stack_v", size)
        stack_slope = work("stack_slope", size)
        worst_residual_t = work("worst_residual_t", size)
        worst_gain = work("worst_gain", size)
        for buffer in (stack_v, stack_slope, worst_residual_t, worst_gain) if checking else (stack_v, stack_slope):
            buffer.fill(0.0)
        for j, f in enumerate(forward):
            temperature = junction[j]
            if at_ambient:
                # Junctions still at the ambient: n·Vt and ln Is are the start's (used up here).
                log_tj, inverse_tj = log_ambient, inverse_ambient
                n_vt, minus_x = cold[j]
            else:
                log_tj = np.log(temperature, out=log_t)
                inverse_tj = np.divide(1.0, temperature, out=inverse_t)
                np.multiply(f[_F_XTI_N], log_tj, out=minus_x)
                minus_x -= np.multiply(f[_F_EG_NKQ], inverse_tj, out=scratch)
                minus_x += f[_F_LOG_IS]
            minus_x -= u
            np.maximum(minus_x, -700.0, out=minus_x)
            np.minimum(minus_x, 700.0, out=minus_x)
            np.exp(minus_x, out=tail)
            np.log1p(tail, out=log_term)
            log_term -= minus_x
            fraction = np.add(tail, 1.0, out=tail)
            np.divide(1.0, fraction, out=fraction)
            if not at_ambient:
                np.multiply(f[_F_NKQ], temperature, out=n_vt)
            np.multiply(f[_F_RS], current, out=ohmic)
            residual_t, slope_r, inverse, voltage = (work((j, name), size) for name in range(4))
            np.multiply(n_vt, log_term, out=voltage)
            voltage += ohmic
            voltage += f[_F_OFFSET]
            dv_du = np.multiply(n_vt, fraction, out=n_vt)
            dv_du += ohmic
            np.multiply(f[_F_EG], inverse_tj, out=dv_dt)
            dv_dt += f[_F_XTI_KQ]
            dv_dt *= fraction
            np.subtract(np.multiply(f[_F_NKQ], log_term, out=log_term), dv_dt, out=dv_dt)
            np.multiply(f[_F_THETA], current, out=heating)
            if at_ambient:  # Tj − Ta is exactly 0 there
                np.negative(np.multiply(heating, voltage, out=residual_t), out=residual_t)
            else:
                np.subtract(temperature, ambient_k, out=residual_t)
                residual_t -= np.multiply(heating, voltage, out=ohmic)
            gain = np.multiply(heating, dv_dt, out=fraction)
            if checking:
                np.maximum(worst_gain, gain, out=worst_gain)
                np.maximum(worst_residual_t, np.abs(residual_t, out=minus_x), out=worst_residual_t)
            np.subtract(1.0, gain, out=inverse)
            np.maximum(inverse, 1.0 - RUNAWAY_LOOP_GAIN, out=inverse)
            np.divide(1.0, inverse, out=inverse)
            weight = np.multiply(dv_dt, inverse, out=dv_dt)
            np.add(voltage, dv_du, out=slope_r)
            slope_r *= heating
            voltage -= np.multiply(weight, residual_t, out=minus_x)
            stack_v += voltage
            dv_du += np.multiply(weight, slope_r, out=minus_x)
            stack_slope += dv_du
            thermal[j] = residual_t, slope_r, inverse, voltage
        for j, z in enumerate(breakdown):
            np.multiply(z[_Z_RZ], current, out=ohmic)
            loop = np.multiply(z[_Z_LOOP], current, out=heating)
            inverse = np.subtract(1.0, loop, out=scratch)
            np.divide(1.0, inverse, out=inverse)
            voltage = np.multiply(z[_Z_A], u, out=work(("z", j), size))
            voltage += z[_Z_OFFSET]
            voltage += ohmic
            voltage *= inverse
            stack_v += voltage
            ohmic += z[_Z_A]
            ohmic += np.multiply(voltage, loop, out=loop)
            ohmic *= inverse
            stack_slope += ohmic
            zener_v[j] = voltage
        resistor_slope = np.multiply(resistor, current, out=work("resistor_slope", size))
        residual = np.subtract(drive, resistor_slope, out=work("residual", size))
        residual -= np.multiply(load_gain, stack_v, out=scratch)
        falling = np.multiply(load_gain, stack_slope, out=stack_slope)
        falling += resistor_slope
        last = evaluation == FAST_EVALUATIONS - 1
        if checking:
            done = np.abs(residual, out=scratch) <= KCL_TOLERANCE_V
            done &= worst_residual_t <= THERMAL_TOLERANCE_K
            done &= worst_gain < RUNAWAY_LOOP_GAIN
            done &= falling > 0.0
            done &= pending
            if done.any():
                _record(done, bool(pending.all()), index, u, current, stack_v, ambient_k, forward, breakdown, junction, thermal, zener_v,
                        out_u, out_v, status, out_margin, out_hottest, work)  # fmt: skip
                pending &= ~done
                if not pending.any():
                    break
                if pending.sum() < 0.5 * pending.size:
                    # Integer indices: each copy below costs only the points kept.
                    keep = np.flatnonzero(pending)
                    index = (np.arange(count)[index] if isinstance(index, slice) else index)[keep]
                    take = _taker(keep, u.shape)
                    u, residual, falling, resistor_slope, current, ambient_k, drive, load_gain, resistor, hi = (
                        take(a)
                        for a in (u, residual, falling, resistor_slope, current, ambient_k, drive, load_gain, resistor, hi)
                    )
                    coldest_k = ambient_k - _FAST_BELOW_AMBIENT_K
                    forward = [[take(row) for row in f] for f in forward]
                    breakdown = [[take(row) for row in z] for z in breakdown]
                    junction = [take(t) for t in junction]
                    thermal = [tuple(take(a) for a in state) for state in thermal]
                    pending = np.ones(u.shape, dtype=bool)
        if last:
            break
        denominator = np.multiply(resistor_slope, 0.5, out=work(0, u.shape))
        np.maximum(falling, denominator, out=denominator)
        delta = np.divide(residual, denominator, out=residual)
        share = np.divide(resistor_slope, denominator, out=resistor_slope)
        np.minimum(share, 1.0, out=share)
        step = np.maximum(delta, -0.9, out=work(1, u.shape))
        np.log1p(step, out=step)
        step -= delta
        step *= share
        step += delta
        new_u = np.add(u, step, out=work(("u", evaluation % 2), u.shape))
        np.maximum(new_u, lo, out=new_u)
        np.minimum(new_u, hi, out=new_u)
        np.subtract(new_u, u, out=step)
        u = new_u
        for j, (residual_t, slope_r, inverse, _) in enumerate(thermal):
            residual_t -= np.multiply(slope_r, step, out=slope_r)
            residual_t *= inverse
            temperature = junction[j]
            temperature -= residual_t
            np.maximum(temperature, coldest_k, out=temperature)
    return out_u, out_v, status, out_margin, out_hottest


def _heated_start(forward, breakdown, cold, u, ambient_k, inverse_ambient, load_gain, line_k, line_p, line_q, lo, hi,
                  work, size):  # fmt: skip
    """Self-heating in the start of :func:`_newton_block`, in place on ``u`` and ``line_p``;
    returns each forward slot's starting junction [K].

    A slot's voltage moves by ``∂V/∂T·θ·I·V/(1 − θ·I·∂V/∂T)`` (its settled rise, DESIGN §3
    self-heating, to first order), a term in ``I`` like its ohmic one. With ``∂V/∂T`` and
    ``V`` of the start so far (SPICE3 diode at the ambient, from each slot's ``cold`` n·Vt
    and ln Is; zener tc) the load line takes it as more resistance, one more step follows,
    and each junction starts at ``Ta + θ·I·V`` instead of at the ambient.
    """
    exponential, falling, delta = work(3, size), work(4, size), work(5, size)
    start_current = np.exp(u, out=work("start_current", size))
    product, gain = work(7, size), work(8, size)
    slot_v = []
    for f, (slot_n_vt, slot_log_is) in zip(forward, cold, strict=True):
        log_part = np.subtract(u, slot_log_is, out=work(("start v", len(slot_v)), size))
        log_part *= slot_n_vt
        dv_dt = np.multiply(f[_F_XTI_KQ], ambient_k, out=product)
        dv_dt += f[_F_EG]
        np.subtract(log_part, dv_dt, out=dv_dt)
        dv_dt *= inverse_ambient
        voltage = np.add(log_part, f[_F_OFFSET], out=log_part)
        voltage += np.multiply(f[_F_RS], start_current, out=gain)
        # The junction's own loop gain g = θ·I·∂V/∂T settles the rise at θ·I·V/(1 − g).
        dv_dt *= f[_F_THETA]
        np.multiply(dv_dt, start_current, out=gain)
        np.subtract(1.0, gain, out=gain)
        np.maximum(gain, 1.0 - RUNAWAY_LOOP_GAIN, out=gain)
        dv_dt *= voltage
        dv_dt /= gain
        line_p += np.multiply(load_gain, dv_dt, out=dv_dt)
        slot_v.append(voltage)
    for z in breakdown:
        voltage = np.multiply(z[_Z_A], u, out=product)
        voltage += z[_Z_OFFSET]
        voltage += np.multiply(z[_Z_RZ], start_current, out=gain)
        voltage *= z[_Z_TC]
        voltage *= z[_Z_THETA]
        np.multiply(z[_Z_LOOP], start_current, out=gain)
        np.subtract(1.0, gain, out=gain)
        voltage /= gain
        line_p += np.multiply(load_gain, voltage, out=voltage)
    _line_step(u, line_k, line_p, line_q, lo, hi, exponential, falling, delta, work(6, size))
    np.exp(u, out=start_current)
    junction = []
    for f, voltage in zip(forward, slot_v, strict=True):
        temperature = f[_F_THETA] * start_current
        temperature *= voltage
        temperature += ambient_k
        junction.append(np.maximum(temperature, ambient_k, out=temperature))
    return junction


def _line_step(u, line_k, line_p, line_q, lo, hi, exponential, falling, delta, scratch):
    """One blended Newton step on the load line ``K − P·e^u − Q·u = 0``, in place on ``u``
    and kept within ``[lo, hi]`` (the step of :func:`_newton_block`, exact to second order)."""
    np.exp(u, out=exponential)
    exponential *= line_p
    np.add(exponential, line_q, out=falling)
    np.maximum(falling, np.multiply(exponential, 0.5, out=delta), out=falling)
    np.subtract(line_k, exponential, out=delta)
    delta -= np.multiply(line_q, u, out=scratch)
    delta /= falling
    share = np.divide(exponential, falling, out=exponential)
    u += delta
    np.maximum(delta, -0.9, out=falling)
    np.log1p(falling, out=falling)
    falling -= delta
    falling *= share
    u += falling
    np.maximum(u, lo, out=u)
    np.minimum(u, hi, out=u)


def _record(done, fresh, index, u, current, stack_v, ambient_k, forward, breakdown, junction, thermal, zener_v,
            out_u, out_v, status, out_margin, out_hottest, work):  # fmt: skip
    """Store the verified points: rail voltage, element margin ``1 − V·I/P_max`` with
    ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3), and the hottest junction.

    When most of the block is verified, margin and junction are worked out for every point
    (whole-array arithmetic is cheaper than picking the verified points first) and stored
    for those; when few are, for those alone. When nothing of the whole block is stored
    yet (``index`` a slice, ``fresh``) and most is verified, every point is stored: the
    others are overwritten later, by a later record or by the safeguarded solver, and a
    whole-array copy is cheaper than picking.
    """
    whole = isinstance(index, slice)
    if whole and (done.all() or (fresh and 2 * np.count_nonzero(done) >= done.size)):
        where, chosen = index, slice(None)
        status[done.reshape(-1)] = STATUS_SOLVED
    else:
        chosen = np.flatnonzero(done)
        where = chosen if whole else index[chosen]
        status[where] = STATUS_SOLVED
    out_u[where] = u.reshape(-1)[chosen]
    out_v[where] = stack_v.reshape(-1)[chosen]
    if not isinstance(chosen, slice) and 2 * chosen.size < u.size:
        take = _taker(chosen, u.shape)
        current, ambient_k = take(current), take(ambient_k)
        forward = [[take(row) for row in f] for f in forward]
        breakdown = [[take(row) for row in z] for z in breakdown]
        junction = [take(t) for t in junction]
        thermal = [tuple(take(a) for a in state) for state in thermal]
        zener_v = [take(v) for v in zener_v]
        chosen = slice(None)
    size = current.shape
    load = work(("record", 1), size)
    load.fill(0.0)
    hottest = work(("record", 2), size)
    hottest.fill(-np.inf)  # the hottest element's junction, even below the ambient
    scratch = work(("record", 3), size)
    # Worked out for the whole block, the points not verified included: their iterates may
    # be far out (and overflow), but only verified points, whose voltages are within the
    # supply's, are stored from here.
    with np.errstate(over="ignore", invalid="ignore"):
        _margin_load_and_hottest(forward, breakdown, junction, thermal, zener_v, current, ambient_k, load, hottest, scratch)
        load *= current
        np.subtract(1.0, load, out=load)
        hottest -= ZERO_CELSIUS_K
    out_margin[where] = load.reshape(-1)[chosen]
    out_hottest[where] = hottest.reshape(-1)[chosen]


def _margin_load_and_hottest(forward, breakdown, junction, thermal, zener_v, current, ambient_k, load, hottest, scratch):
    """Into ``load`` the most ``V/P_max`` over the slots, into ``hottest`` the hottest settled
    junction [K]; see :func:`_record`."""
    for f, temperature, (residual_t, _, inverse, settled_v) in zip(forward, junction, thermal, strict=True):
        np.maximum(load, np.multiply(settled_v, f[_F_INVERSE_P_MAX], out=scratch), out=load)
        settled_t = np.multiply(residual_t, inverse, out=scratch)
        np.maximum(hottest, np.subtract(temperature, settled_t, out=settled_t), out=hottest)
    for z, voltage in zip(breakdown, zener_v, strict=True):
        np.maximum(load, np.multiply(voltage, z[_Z_INVERSE_P_MAX], out=scratch), out=load)
        rise = np.multiply(z[_Z_THETA], current, out=scratch)
        rise *= voltage
        rise += ambient_k
        np.maximum(hottest, rise, out=hottest)
