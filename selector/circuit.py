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

Points without a physical solution are flagged, never NaN: the load draws more than the
supply can give through ``R``; the stack current would be below 1 fA; an element reaches
electro-thermal loop gain ``θ·I·∂V/∂T ≥ 1`` (thermal runaway); or the iteration did not
converge.

References
----------
.. [1] DESIGN §3, physics contract (circuit, self-heating).
.. [2] J. E. Dennis and R. B. Schnabel, *Numerical Methods for Unconstrained Optimization
       and Nonlinear Equations*, SIAM, 1996, §6.1 (safeguarded Newton with bisection).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.devices import (
    BOLTZMANN_OVER_CHARGE_V_PER_K,
    RUNAWAY_LOOP_GAIN,
    ZERO_CELSIUS_K,
    self_heated_element,
)
from selector.partset import PartSet

#: Least stack current the model is solved for [A].
LEAST_CURRENT_A = 1e-15
#: KCL residual at which a point counts as solved [V].
KCL_TOLERANCE_V = 1e-10
#: Thermal residual at which a forward junction counts as settled [K].
THERMAL_TOLERANCE_K = 1e-7
#: Iterations before a point is given up as not converged.
MAX_ITERATIONS = 120
#: Points solved together; keeps the working set in cache and memory proportional to it.
DEFAULT_CHUNK_POINTS = 16384

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
        Least ``1 − P/P_max`` over the stack's elements, ``P_max = min(pd, (Tjmax − Ta)/θ)``
        (DESIGN §3); −inf where not solved.
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
    slots = family_slots(parts, stacks, element_sign if per_element else None)
    # Points with the same number of distinct forward and breakdown parts share a layout,
    # so each block computes no empty slot.
    signature = _slot_signature(slots[1], slots[4])
    order = np.argsort(signature, kind="stable")
    boundaries = np.flatnonzero(np.diff(signature[order])) + 1
    for group in np.split(order, boundaries):
        for start in range(0, group.size, chunk_points):
            chosen = group[start : start + chunk_points]
            if not per_element:
                slots[2][chosen] = element_sign[chosen]
                slots[5][chosen] = element_sign[chosen]
            block = [slot[chosen] for slot in slots] + [c[chosen] for c in conditions]
            outcome = _newton_block(parts, *block)
            hard = outcome[2] < 0
            if hard.any():
                rescued = _solve_block(parts, *(value[hard] for value in block))
                for value, fallback in zip(outcome, rescued, strict=True):
                    value[hard] = fallback
            log_current[chosen], vout[chosen], status[chosen], worst_margin[chosen], hottest[chosen] = outcome
    solved = status == STATUS_SOLVED
    supply, resistor, ambient, load_fixed, load_conductance = conditions
    current = np.where(solved, np.exp(log_current), 0.0)
    vout = np.where(solved, vout, 0.0)
    load = np.where(solved, load_fixed + load_conductance * vout, 0.0)
    residual = np.where(solved, supply - resistor * (current + load) - vout, 0.0)
    result = dict(
        vout_v=vout,
        stack_current_a=current,
        load_current_a=load,
        resistor_power_w=resistor * (current + load) ** 2,
        kcl_residual_v=residual,
        status=status,
        worst_element_margin=np.where(solved, worst_margin, -np.inf),
        hottest_junction_c=np.where(solved, hottest, ambient),
    )
    if detail:
        result.update(_element_detail(parts, stacks, log_current, ambient, element_sign, solved))
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
    if element_sign is None:
        return _distinct_family_slots(parts, stacks)
    ordered, sign = stacks, np.asarray(element_sign, dtype=float)
    first = ordered >= 0
    multiplicity = first.astype(np.intp)
    safe_part = np.maximum(ordered, 0)
    zener = parts.is_zener[safe_part]
    result = []
    for chosen in (first & ~zener, first & zener):
        column = np.cumsum(chosen, axis=1) - 1
        rows, slots = np.nonzero(chosen)
        part_out = np.zeros(ordered.shape, dtype=np.intp)
        count_out = np.zeros(ordered.shape, dtype=np.intp)
        sign_out = np.zeros(ordered.shape)
        target = column[rows, slots]
        part_out[rows, target] = safe_part[rows, slots]
        count_out[rows, target] = multiplicity[rows, slots]
        sign_out[rows, target] = sign[rows, slots]
        result += [part_out, count_out, sign_out]
    return tuple(result)


def _sort_columns(columns: list[np.ndarray]) -> None:
    """Sort each row across a short list of column arrays, in place (odd-even transposition
    network: ``width`` passes of compare-exchange; D. E. Knuth, *The Art of Computer
    Programming* vol. 3, 2nd ed., §5.3.4)."""
    width = len(columns)
    for rank in range(width):
        for i in range(rank % 2, width - 1, 2):
            low = np.minimum(columns[i], columns[i + 1])
            np.maximum(columns[i], columns[i + 1], out=columns[i + 1])
            columns[i] = low


def _distinct_family_slots(parts: PartSet, stacks: np.ndarray) -> tuple[np.ndarray, ...]:
    """:func:`family_slots` for one tolerance sign per point, column by column.

    Sorting each row's part keys puts equal parts side by side; the first of each run
    carries the run's length, and a second sort per family moves those firsts to the front.
    Whole columns are sorted with a network, so no per-row work is done in Python or by a
    per-row sort call.
    """
    count, width = stacks.shape
    part_count = len(parts.is_zener)
    pad = 2 * part_count
    # Index −1 (padding) reads the last entry.
    key_of_part = np.append(np.arange(part_count) + parts.is_zener * part_count, pad)
    columns = [key_of_part[stacks[:, j]] for j in range(width)]
    _sort_columns(columns)
    first = [columns[0] < pad] + [(columns[j] < pad) & (columns[j] != columns[j - 1]) for j in range(1, width)]
    boundary = np.full(count, width)
    runs = [boundary] * width
    for j in range(width - 1, -1, -1):
        runs[j] = boundary - j
        boundary = np.where(first[j] | (columns[j] == pad), j, boundary)
    shift = width.bit_length()
    result = []
    for is_breakdown in (False, True):
        encoded = []
        for j in range(width):
            wanted = first[j] & ((columns[j] >= part_count) if is_breakdown else (columns[j] < part_count))
            encoded.append(np.where(wanted, (columns[j] << shift) | runs[j], pad << shift))
        _sort_columns(encoded)
        key = np.stack(encoded, axis=1)
        part = key >> shift
        present = part < pad
        result += [
            np.where(present, part - part_count * is_breakdown, 0),
            np.where(present, key & ((1 << shift) - 1), 0),
            np.zeros(stacks.shape),
        ]
    return tuple(result)


def _slot_signature(forward_count: np.ndarray, breakdown_count: np.ndarray) -> np.ndarray:
    width = forward_count.shape[1] + 1
    return (forward_count > 0).sum(axis=1) * width + (breakdown_count > 0).sum(axis=1)


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
        allowed = np.minimum(parts.pd_w[part_index], (parts.tj_max_c[part_index] - self.ambient) / theta)
        # Empty slots get no limit that could bind: their power is 0 and 1/inverse stays finite.
        self.inverse_p_max = np.where(present, 1.0 / np.where(allowed > 0, allowed, 1e-300), 0.0)
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
    """Forward voltage and its slopes: :func:`selector.devices.forward_voltage_slopes` with
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
    headroom_current = (supply - resistor * load_fixed) / resistor
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
        # Coupled Newton update of the forward junctions (Schur complement of the thermal rows).
        junction_f = np.maximum(junction_f - (thermal_residual + dr_du * (new_u - u)) / headroom_f, fw.ambient)
        work.update(u=new_u, lo=lo_w, hi=hi_w, seen_positive=seen_positive, seen_negative=seen_negative)

        if finished.any():
            where = index[finished]
            out_u[where] = u[finished]
            out_v[where] = stack_v[finished]
            # Element margin 1 − V·I/P_max and the hottest junction, at the solution.
            i_done = current[finished]
            load_f = (v_settled[:, finished] * i_done * fw.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
            load_z = (v_z[:, finished] * i_done * zn.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
            out_margin[where] = 1.0 - np.maximum(load_f, load_z)
            out_hottest[where] = np.maximum(
                np.maximum(settled_junction_f[:, finished].max(axis=0, initial=-np.inf), ambient[where]),
                tj_z[:, finished].max(axis=0, initial=-np.inf),
            )
            outcome = np.full(where.size, STATUS_NOT_CONVERGED, dtype=np.int8)
            outcome[done[finished]] = STATUS_SOLVED
            failed = ~done[finished]
            outcome[failed & ~seen_negative[finished]] = STATUS_SUPPLY_EXHAUSTED
            outcome[failed & ~seen_positive[finished]] = STATUS_BELOW_LEAST_CURRENT
            outcome[failed & runaway[finished]] = STATUS_RUNAWAY
            status[where] = outcome
            active &= ~finished
    return out_u, out_v, status, out_margin, out_hottest


#: Newton evaluations the fast path spends on a point before handing it to the safeguarded solver.
FAST_EVALUATIONS = 8
#: Zener loop gain ``θ·tc·I`` the fast path stays below, so ``1/(1 − g)`` stays modest.
_FAST_LOOP_GAIN = 0.999
#: Current at which the fast path's starting stack voltage is taken [A].
_REFERENCE_CURRENT_A = 1e-3


def _inverse_allowed_power(parts, part, multiplicity, ambient):
    """``1/(m·P_max)`` per slot, ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3); 0 for empty slots."""
    allowed = np.minimum(parts.pd_w[part], (parts.tj_max_c[part] - ambient) / parts.theta_ja_k_per_w[part])
    scaled = multiplicity * np.where(allowed > 0, allowed, 1e-300)
    return np.divide(1.0, scaled, out=np.zeros(part.shape), where=multiplicity > 0)


def _forward_slot_constants(parts, part, count, sign, ambient):
    """Forward constants per slot with the multiplicity ``m`` folded in, shape (10, slots, points).

    Rows: ``ln Is`` offset, xti/n, eg·q/(n·k) (per element, SPICE3 scaling rearranged as in
    :class:`_Family`); m·n·k/q, m·xti·k/q, m·eg, m·rs, m·s·vf_tol (whole slot); θ/m (one
    element's heating from the slot's voltage); 1/(m·P_max).
    """
    m = count.T.astype(float)
    p = part.T
    n = parts.n[p]
    nominal_k = parts.tnom_c[p] + ZERO_CELSIUS_K
    xti_over_n = parts.xti[p] / n
    eg_over_nkq = parts.eg_ev[p] / (n * BOLTZMANN_OVER_CHARGE_V_PER_K)
    out = np.empty((10,) + p.shape)
    out[0] = np.log(parts.is_a[p]) - xti_over_n * np.log(nominal_k) + eg_over_nkq / nominal_k
    out[1] = xti_over_n
    out[2] = eg_over_nkq
    out[3] = m * n * BOLTZMANN_OVER_CHARGE_V_PER_K
    out[4] = m * parts.xti[p] * BOLTZMANN_OVER_CHARGE_V_PER_K
    out[5] = m * parts.eg_ev[p]
    out[6] = m * parts.rs_ohm[p]
    out[7] = m * sign.T * parts.vf_tol_v[p]
    out[8] = np.divide(parts.theta_ja_k_per_w[p], m, out=np.zeros(p.shape), where=m > 0)
    out[9] = _inverse_allowed_power(parts, p, m, ambient)
    return out


def _breakdown_slot_constants(parts, part, count, sign, ambient):
    """Zener constants per slot with the multiplicity ``m`` folded in, shape (6, slots, points).

    The slot voltage at junction ``Tj = Ta + θ·I·V/m`` is ``(c + a'·ln I + rz'·I)/(1 − k·I)``
    (DESIGN §3 breakdown element; ``V`` is linear in ``Tj``). Rows: ``c`` (the voltage at
    1 A with the junction at the ambient, ``a'·ln I`` and ``rz'·I`` left out), ``a' = m·a``,
    ``rz' = m·rz``, ``k = θ·tc``, θ/m, 1/(m·P_max).
    """
    m = count.T.astype(float)
    p = part.T
    izt = parts.izt_a[p]
    tc = parts.tc_v_per_k[p]
    a = parts.zener_a_v[p]
    rz = parts.zener_rz_ohm[p]
    vz = parts.vz_v[p] * (1.0 + sign.T * parts.vz_tol_pct[p] / 100.0)
    theta = parts.theta_ja_k_per_w[p] * (m > 0)
    out = np.empty((6,) + p.shape)
    out[0] = m * (vz + tc * (ambient - parts.tnom_c[p]) - a * np.log(izt) - rz * izt)
    out[1] = m * a
    out[2] = m * rz
    out[3] = theta * tc
    out[4] = np.divide(theta, m, out=np.zeros(p.shape), where=m > 0)
    out[5] = _inverse_allowed_power(parts, p, m, ambient)
    return out


def _newton_block(parts, forward_part, forward_count, forward_sign, breakdown_part, breakdown_count,
                  breakdown_sign, supply, resistor, ambient, load_fixed, load_conductance):  # fmt: skip
    """Fast path: coupled Newton without a bracket, from a close start; keeps what it verifies.

    The equations, the coupled thermal step and the acceptance test are those of
    :func:`_solve_block`. The current step is Newton's for the resistor's exponential term
    and the stack's linear one blended to second order: with ``δ = F/|F'|`` and ``p`` the
    resistor's share of ``|F'|``, ``Δu = (1 − p)·δ + p·ln(1 + δ)``, exact to second order
    when ``F = K − R·e^u − S·u`` (Taylor expansion of ``R·I·(e^Δu − 1) + S·Δu = F``).
    Points not verified within :data:`FAST_EVALUATIONS` come back with status −1.
    """
    count = supply.shape[0]
    lf = int((forward_count > 0).sum(axis=1).max(initial=0))
    lz = int((breakdown_count > 0).sum(axis=1).max(initial=0))
    fw = _forward_slot_constants(parts, forward_part[:, :lf], forward_count[:, :lf], forward_sign[:, :lf], ambient)
    zn = _breakdown_slot_constants(
        parts, breakdown_part[:, :lz], breakdown_count[:, :lz], breakdown_sign[:, :lz], ambient
    )
    ambient_k = ambient + ZERO_CELSIUS_K
    drive = supply - resistor * load_fixed
    load_gain = 1.0 + resistor * load_conductance
    current_cap = drive / resistor
    for j in range(lz):
        cap = np.divide(_FAST_LOOP_GAIN, zn[3, j], out=np.full(count, np.inf), where=zn[3, j] > 0)
        np.minimum(current_cap, cap, out=current_cap)
    status = np.full(count, -1, dtype=np.int8)
    out_u = np.zeros(count)
    out_v = np.zeros(count)
    out_margin = np.full(count, -np.inf)
    out_hottest = ambient.copy()

    index = np.flatnonzero(current_cap > 2 * LEAST_CURRENT_A)
    if index.size < count:
        fw, zn = fw[:, :, index], zn[:, :, index]
        ambient_k, drive, load_gain, current_cap = ambient_k[index], drive[index], load_gain[index], current_cap[index]
        resistor = resistor[index]
    lo = np.log(LEAST_CURRENT_A)
    hi = np.log(current_cap)

    # Start: the stack voltage at 1 mA with every junction at the ambient, then two
    # fixed-point steps of the resistor line on the stack's log-linear slope there.
    reference_u = np.log(_REFERENCE_CURRENT_A)
    log_ambient_k = np.log(ambient_k)
    stack_v = np.zeros(index.size)
    stack_slope = np.zeros(index.size)
    for j in range(lf):
        x = reference_u - (fw[0, j] + fw[1, j] * log_ambient_k - fw[2, j] / ambient_k)
        n_vt = fw[3, j] * ambient_k
        stack_v += n_vt * np.maximum(x, 0.0) + fw[6, j] * _REFERENCE_CURRENT_A + fw[7, j]
        stack_slope += n_vt * (x > 0.0)
    for j in range(lz):
        stack_v += zn[0, j] + zn[1, j] * reference_u + zn[2, j] * _REFERENCE_CURRENT_A
        stack_slope += zn[1, j]
    u = np.full(index.size, reference_u)
    for _ in range(2):
        guess_v = stack_v + stack_slope * (u - reference_u)
        current = (drive - load_gain * guess_v) / resistor
        u = np.log(np.clip(current, 2 * LEAST_CURRENT_A, current_cap))
    current = np.exp(u)
    junction = np.empty((lf, index.size))
    for j in range(lf):
        junction[j] = ambient_k + fw[8, j] * current * (fw[3, j] * ambient_k * np.maximum(u - reference_u, 0.0)
                                                        + fw[6, j] * current + fw[7, j])  # fmt: skip
    np.maximum(junction, ambient_k, out=junction)

    residual_t = np.empty((lf, index.size))
    dr_du = np.empty((lf, index.size))
    inverse_headroom = np.empty((lf, index.size))
    settled_v = np.empty((lf, index.size))
    zener_v = np.empty((lz, index.size))
    for evaluation in range(FAST_EVALUATIONS):
        current = np.exp(u)
        stack_v = np.zeros(index.size)
        stack_slope = np.zeros(index.size)
        worst_residual_t = np.zeros(index.size)
        worst_gain = np.zeros(index.size)
        for j in range(lf):
            log_is_offset, xti_over_n, eg_over_nkq, nkq, xti_kq, eg, rs, offset, theta, _ = fw[:, j]
            temperature = junction[j]
            inverse_t = 1.0 / temperature
            minus_x = log_is_offset + xti_over_n * np.log(temperature) - eg_over_nkq * inverse_t - u
            np.clip(minus_x, -700.0, 700.0, out=minus_x)
            tail = np.exp(minus_x)
            fraction = 1.0 / (1.0 + tail)
            n_vt = nkq * temperature
            n_vt_log = n_vt * (np.log1p(tail) - minus_x)
            ohmic = rs * current
            voltage = n_vt_log + ohmic + offset
            dv_du = n_vt * fraction + ohmic
            dv_dt = (n_vt_log - fraction * (xti_kq * temperature + eg)) * inverse_t
            heating = theta * current
            r = temperature - ambient_k - heating * voltage
            gain = heating * dv_dt
            np.maximum(worst_gain, gain, out=worst_gain)
            np.maximum(worst_residual_t, np.abs(r), out=worst_residual_t)
            inverse = 1.0 / np.maximum(1.0 - gain, 1.0 - RUNAWAY_LOOP_GAIN)
            slope_r = -heating * (voltage + dv_du)
            settled = voltage - dv_dt * r * inverse
            stack_v += settled
            stack_slope += dv_du - dv_dt * slope_r * inverse
            residual_t[j], dr_du[j], inverse_headroom[j], settled_v[j] = r, slope_r, inverse, settled
        for j in range(lz):
            offset, a, rz, k, _, _ = zn[:, j]
            ohmic = rz * current
            loop = k * current
            inverse = 1.0 / (1.0 - loop)
            voltage = (offset + a * u + ohmic) * inverse
            stack_v += voltage
            stack_slope += (a + ohmic + voltage * loop) * inverse
            zener_v[j] = voltage
        resistor_slope = resistor * current
        residual = drive - resistor_slope - load_gain * stack_v
        falling = resistor_slope + load_gain * stack_slope
        done = (np.abs(residual) <= KCL_TOLERANCE_V) & (worst_residual_t <= THERMAL_TOLERANCE_K)
        done &= (worst_gain < RUNAWAY_LOOP_GAIN) & (falling > 0.0)
        last = evaluation == FAST_EVALUATIONS - 1
        if done.any() or last:
            where = index[done]
            out_u[where] = u[done]
            out_v[where] = stack_v[done]
            status[where] = STATUS_SOLVED
            power = np.zeros(where.size)
            hottest = ambient_k[done]
            for j in range(lf):
                np.maximum(power, settled_v[j, done] * fw[9, j, done], out=power)
                np.maximum(hottest, junction[j, done] - residual_t[j, done] * inverse_headroom[j, done], out=hottest)
            for j in range(lz):
                np.maximum(power, zener_v[j, done] * zn[5, j, done], out=power)
                np.maximum(hottest, ambient_k[done] + zn[4, j, done] * current[done] * zener_v[j, done], out=hottest)
            out_margin[where] = 1.0 - power * current[done]
            out_hottest[where] = hottest - ZERO_CELSIUS_K
            if last:
                break
            keep = ~done
            index, u, current, residual, falling, hi = (a[keep] for a in (index, u, current, residual, falling, hi))
            ambient_k, drive, load_gain, resistor, resistor_slope = (
                a[keep] for a in (ambient_k, drive, load_gain, resistor, resistor_slope)
            )
            fw, zn = fw[:, :, keep], zn[:, :, keep]
            junction, residual_t, dr_du, inverse_headroom = (
                a[:, keep] for a in (junction, residual_t, dr_du, inverse_headroom)
            )
            settled_v, zener_v = settled_v[:, keep], zener_v[:, keep]
            if index.size == 0:
                break
        denominator = np.maximum(falling, 0.5 * resistor_slope)
        delta = residual / denominator
        share = np.minimum(resistor_slope / denominator, 1.0)
        step = delta + share * (np.log1p(np.maximum(delta, -0.9)) - delta)
        new_u = np.clip(u + step, lo, hi)
        step = new_u - u
        u = new_u
        for j in range(lf):
            junction[j] -= (residual_t[j] + dr_du[j] * step) * inverse_headroom[j]
        np.maximum(junction, ambient_k, out=junction)
    return out_u, out_v, status, out_margin, out_hottest
