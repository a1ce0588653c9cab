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
            outcome = _solve_block(parts, *(slot[chosen] for slot in slots), *(c[chosen] for c in conditions))
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
    width = stacks.shape[1]
    if element_sign is None:
        ordered = np.sort(stacks, axis=1)
        sign = np.zeros(stacks.shape)
        first = ordered >= 0
        first[:, 1:] &= ordered[:, 1:] != ordered[:, :-1]
        # Sorted rows hold equal parts in runs; a run's length is its part's multiplicity.
        multiplicity = first.astype(np.intp)
        for offset in range(1, width):
            multiplicity[:, :-offset] += first[:, :-offset] & (ordered[:, offset:] == ordered[:, :-offset])
    else:
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
                np.maximum(junction_f[:, finished].max(axis=0, initial=-np.inf), ambient[where]),
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
