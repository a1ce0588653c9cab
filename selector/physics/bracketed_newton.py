"""The solver's safeguarded path: coupled Newton kept inside a bracket, with bisection,
for every point the fast path could not verify; it owns every non-solved status code
(solver internals of :mod:`selector.physics.circuit`; see :func:`solve_block`)."""

from __future__ import annotations

import numpy as np

from selector.physics.devices import (
    BOLTZMANN_OVER_CHARGE_V_PER_K,
    JUNCTION_CEILING_C,
    RUNAWAY_LOOP_GAIN,
    ZERO_CELSIUS_K,
    forward_junction_floor_c,
)
from selector.physics.slot_constants import inverse_allowed_power
from selector.physics.solver_settings import (
    KCL_TOLERANCE_V,
    LEAST_CURRENT_A,
    MAX_ITERATIONS,
    STATUS_BELOW_LEAST_CURRENT,
    STATUS_NOT_CONVERGED,
    STATUS_RUNAWAY,
    STATUS_SOLVED,
    STATUS_SUPPLY_EXHAUSTED,
    THERMAL_TOLERANCE_K,
)


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
        inverse = inverse_allowed_power(parts.pd_w[part_index], parts.tj_max_c[part_index], theta, self.ambient)
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


def solve_block(parts, forward_part, forward_count, forward_sign, breakdown_part, breakdown_count,
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
            # An ambient at or above Tjmax leaves no allowed power (NO_ALLOWED_POWER_W); the
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
