"""The solver's safeguarded path: coupled Newton kept inside a bracket, with bisection,
for every point the fast path could not verify; it owns every status code but "solved"
and the ceiling's runaway (solver internals of :mod:`selector.physics.circuit`; see
:func:`solve_block`).

Each point keeps a bracket ``[u_lo, u_hi]`` on ``u = ln I`` with ``F(u_lo) > 0 > F(u_hi)``
once both ends are tried; a Newton step that leaves it is replaced by bisection. Element
voltages may be negative (a negative tolerance or TC spread; a zener's curve far below its
knee), so where ``F`` is still positive at the top the bracket is widened tenfold in
current, up to :data:`~selector.physics.solver_settings.CURRENT_CEILING_A`. A point whose
``F`` is not positive even at 1 fA has its stack off.

References
----------
.. [1] J. E. Dennis and R. B. Schnabel, *Numerical Methods for Unconstrained Optimization
       and Nonlinear Equations*, SIAM, 1996, §6.1 (safeguarded Newton with bisection).
.. [2] DESIGN §3, physics contract version 2 (element models, self-heating, stack off).
"""

from __future__ import annotations

import numpy as np

from selector.physics.devices import (
    BOLTZMANN_OVER_CHARGE_V_PER_K,
    ZERO_CELSIUS_K,
    breakdown_curve_terms,
)
from selector.physics.self_heating import (
    JUNCTION_CEILING_C,
    RUNAWAY_LOOP_GAIN,
    breakdown_junction_side,
    forward_junction_floor_c,
)
from selector.physics.slot_constants import inverse_allowed_power
from selector.physics.solver_settings import (
    CURRENT_CEILING_A,
    KCL_TOLERANCE_V,
    LEAST_CURRENT_A,
    LOWEST_JUNCTION_K,
    MAX_ITERATIONS,
    STATUS_NOT_CONVERGED,
    STATUS_RUNAWAY,
    STATUS_SOLVED,
    STATUS_STACK_OFF,
    STATUS_SUPPLY_EXHAUSTED,
    THERMAL_TOLERANCE_K,
)

#: Rounding units of ``F``'s terms within which a closed bracket's residual counts as solved.
ROUNDING_ULPS = 32.0
#: Newton steps of the junction settling in the second, settled pass.
MAX_SETTLE_STEPS = 60
#: Largest residual a closed bracket may be accepted with [V].
ROUNDING_FLOOR_CEILING_V = 1e-6
#: How far the bracket's top moves up when ``F`` is still positive there [ln A].
_WIDENING = np.log(10.0)


class _Family:
    """Per-slot constants of one family for a block of points, slot-major ``(slots, points)``.

    Empty slots carry multiplicity 0 and θ = 0 (no heating), so they add nothing and
    never signal runaway.
    """

    def __init__(self, parts, part_index, multiplicity, sign, spread_sign, ambient, forward):
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
        self.tnom_c = parts.tnom_c[part_index]
        self.spread = spread_sign.T * parts.tc_tol_v_per_k[part_index]
        if forward:
            n = parts.n[part_index]
            nominal_k = self.tnom_c + ZERO_CELSIUS_K
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
            self.vz = parts.vz_v[part_index] * (1.0 + sign * parts.vz_tol_pct[part_index] / 100.0)
            self.izt = parts.izt_a[part_index]
            self.zzt = parts.zzt_ohm[part_index]
            self.knee = parts.zener_knee_exponent[part_index]
            self.tc = parts.tc_v_per_k[part_index]

    def keep(self, point_mask: np.ndarray) -> None:
        """Drop the points no longer solved."""
        for name, value in list(vars(self).items()):
            setattr(self, name, value[:, point_mask])


def _forward_terms(fam: _Family, u, current, junction_c):
    """Forward voltage and its slopes: :func:`selector.physics.devices.forward_voltage_slopes`
    with per-slot constants folded in (same formulas, SPICE3 diode model, DESIGN §3).

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
    above_tnom = junction_c - fam.tnom_c
    voltage = n_vt_log + ohmic + fam.offset + fam.spread * np.abs(above_tnom)
    dv_du = n_vt * fraction + ohmic
    dv_dt = (n_vt_log - fraction * (fam.xti_k_over_q * temperature_k + fam.eg)) * inverse_t
    dv_dt += fam.spread * np.sign(above_tnom)
    return voltage, dv_du, dv_dt


def _breakdown_terms(fam: _Family, u, current):
    """Each zener slot at its closed-form junction (:func:`selector.physics.devices.
    self_heated_element`): voltage, settled log-current slope, loop gain, junction, and the
    size of the terms that cancel in its voltage (for the rounding floor of ``F``)."""
    curve, du = breakdown_curve_terms(u, fam.izt, fam.zzt, fam.knee)
    at_tnom = fam.vz + curve
    heating = fam.theta * current
    above = breakdown_junction_side(heating, at_tnom, fam.tnom_c, fam.ambient)
    slope_t = fam.tc + np.where(above, fam.spread, -fam.spread)
    gain = heating * slope_t
    headroom = np.maximum(1.0 - gain, 1.0 - RUNAWAY_LOOP_GAIN)
    junction = (fam.ambient + heating * (at_tnom - slope_t * fam.tnom_c)) / headroom
    voltage = at_tnom + slope_t * (junction - fam.tnom_c)
    settled_slope = du + slope_t * heating * (voltage + du) / headroom
    # vz + c·expm1(q·ln x)/q: the two terms whose difference is the voltage.
    scale = np.abs(fam.vz) + np.abs(curve)
    return voltage, settled_slope, gain, junction, scale


def _start(fw: _Family, zn: _Family, supply, resistor, ambient, load_fixed, load_gain):
    """Bracket and first guess: ``[ln 1 fA, ln I_top]`` with ``I_top`` the most current the
    supply drives with the stack at its least voltage that the forward tolerances allow;
    the guess is the current with every element at 1 mA, Is at TNOM and no self-heating."""
    least_stack_v = (fw.multiplicity * np.minimum(fw.offset, 0.0)).sum(axis=0)
    top_current = (supply - resistor * load_fixed - load_gain * least_stack_v) / resistor
    lo = np.full(supply.shape, np.log(LEAST_CURRENT_A))
    hi = np.log(np.clip(top_current, 2 * LEAST_CURRENT_A, CURRENT_CEILING_A))
    guess_u = np.log(1e-3)
    nominal_k = ZERO_CELSIUS_K + 25.0
    cold_f = fw.n_k_over_q * (ambient + ZERO_CELSIUS_K) * np.maximum(
        guess_u - fw.log_is_offset - fw.xti_over_n * np.log(nominal_k) + fw.eg_over_nkq / nominal_k, 0.0
    )
    curve, _ = breakdown_curve_terms(np.full(zn.vz.shape, guess_u), zn.izt, zn.zzt, zn.knee)
    cold_z = zn.vz + curve + zn.tc * (zn.ambient - zn.tnom_c)
    stack_guess = (fw.multiplicity * cold_f).sum(axis=0) + (zn.multiplicity * cold_z).sum(axis=0)
    first_current = (supply - resistor * load_fixed - load_gain * stack_guess) / resistor
    u = np.clip(np.log(np.maximum(first_current, 1e-9)), lo, hi)
    junction_f = fw.ambient + fw.theta * np.exp(u) * cold_f
    return u, lo, hi, junction_f


def solve_block(parts, forward_part, forward_count, forward_sign, forward_spread, breakdown_part, breakdown_count,
                breakdown_sign, breakdown_spread, supply, resistor, ambient, load_fixed, load_conductance,
                settle_first=False):  # fmt: skip
    """Solve one block of points that share a slot layout; see the module docstring.

    A point the coupled iteration leaves unconverged is solved once more with every
    forward junction settled at each trial current before the sign of ``F`` is judged
    (``settle_first``): slower, but each bracket step is then exact. The coupled step
    judges ``F`` with junctions one Newton step behind the current, which a bisection
    far from the root can leave on the wrong side for good.

    Returns
    -------
    log_current, stack_v, status, worst_margin, hottest_junction_c : arrays (points,)
        As :func:`selector.physics.fast_newton.newton_block` returns them; every status is
        final here.
    """
    count = supply.shape[0]
    lf = int((forward_count > 0).sum(axis=1).max(initial=0))
    lz = int((breakdown_count > 0).sum(axis=1).max(initial=0))
    fw = _Family(parts, forward_part[:, :lf], forward_count[:, :lf], forward_sign[:, :lf], forward_spread[:, :lf],
                 ambient, True)  # fmt: skip
    zn = _Family(parts, breakdown_part[:, :lz], breakdown_count[:, :lz], breakdown_sign[:, :lz],
                 breakdown_spread[:, :lz], ambient, False)  # fmt: skip

    status = np.full(count, STATUS_NOT_CONVERGED, dtype=np.int8)
    out = dict(u=np.zeros(count), v=np.zeros(count), margin=np.full(count, -np.inf), hottest=ambient.copy(),
               tolerance=np.full(count, KCL_TOLERANCE_V))  # fmt: skip
    load_gain = 1.0 + resistor * load_conductance
    # The load alone takes all the supply can give through R: no solution at all.
    exhausted = supply - resistor * load_fixed <= 0.0
    status[exhausted] = STATUS_SUPPLY_EXHAUSTED
    u, lo, hi, junction_f = _start(fw, zn, supply, resistor, ambient, load_fixed, load_gain)
    work = {
        "u": u, "lo": lo, "hi": hi, "supply": supply, "resistor": resistor,
        "load_fixed": load_fixed, "load_gain": load_gain, "junction_f": junction_f.T,
        "seen_positive": np.zeros(count, dtype=bool), "seen_negative": np.zeros(count, dtype=bool),
    }  # fmt: skip
    index = np.arange(count)
    active = ~exhausted
    pinned = np.zeros(count, dtype=bool)
    for _ in range(MAX_ITERATIONS):
        if not active.any():
            break
        if active.sum() < 0.6 * active.size:
            fw.keep(active)
            zn.keep(active)
            work = {name: value[active] for name, value in work.items()}
            index = index[active]
            active = np.ones(index.size, dtype=bool)
        finished, pinned = _iteration(fw, zn, work, active, index, status, out, settle_first)
        active &= ~finished
    if active.any():
        # Out of iterations with a junction held at the ceiling: it would settle above it.
        status[index[active & pinned]] = STATUS_RUNAWAY
    retry = np.flatnonzero(status == STATUS_NOT_CONVERGED)
    if retry.size and not settle_first and lf:
        inputs = (forward_part, forward_count, forward_sign, forward_spread, breakdown_part, breakdown_count,
                  breakdown_sign, breakdown_spread, supply, resistor, ambient, load_fixed, load_conductance)
        again = solve_block(parts, *(value[retry] for value in inputs), settle_first=True)
        for target, value in zip((out["u"], out["v"], status, out["margin"], out["hottest"], out["tolerance"]), again,
                                 strict=True):  # fmt: skip
            target[retry] = value
    return out["u"], out["v"], status, out["margin"], out["hottest"], out["tolerance"]


def _settle_junctions(fw, u, current, junction_f):
    """Forward junctions settled at fixed currents: Newton on ``Tj − Ta − θ·I·V(I, Tj)``."""
    floor_f = forward_junction_floor_c(fw.ambient, fw.theta * current, fw.offset, fw.spread, fw.tnom_c)
    for _ in range(MAX_SETTLE_STEPS):
        v_f, _, dt_f = _forward_terms(fw, u, current, junction_f)
        heating = fw.theta * current
        thermal_residual = junction_f - fw.ambient - heating * v_f
        if not (np.abs(thermal_residual) > THERMAL_TOLERANCE_K).any():
            break
        headroom = np.maximum(1.0 - heating * dt_f, 1.0 - RUNAWAY_LOOP_GAIN)
        junction_f = np.clip(junction_f - thermal_residual / headroom, floor_f, JUNCTION_CEILING_C)
    return junction_f


def _iteration(fw, zn, work, active, index, status, out, settle_first=False):
    """One coupled Newton (or bisection) step of every active point, in place on ``work``;
    finished points are stored in ``status`` and ``out``. Returns (finished, pinned)."""
    u = work["u"]
    current = np.exp(u)
    junction_f = work["junction_f"].T
    if settle_first and junction_f.size:
        junction_f = _settle_junctions(fw, u, current, junction_f)

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
    v_z, slope_z, gain_z, tj_z, scale_z = _breakdown_terms(zn, u, current)

    stack_v = (fw.multiplicity * v_settled).sum(axis=0) + (zn.multiplicity * v_z).sum(axis=0)
    stack_slope = (fw.multiplicity * slope_f).sum(axis=0) + (zn.multiplicity * slope_z).sum(axis=0)
    worst_gain = np.maximum(gain_f.max(axis=0, initial=-np.inf), gain_z.max(axis=0, initial=-np.inf))
    runaway = worst_gain >= RUNAWAY_LOOP_GAIN
    # A junction iterate held at the ceiling: one that would settle above it if the
    # point ends there (a transient stay is corrected by the next coupled step).
    pinned = (junction_f >= JUNCTION_CEILING_C).any(axis=0) if junction_f.size else np.zeros(u.size, bool)
    unsettled = np.abs(thermal_residual).max(axis=0, initial=0.0) > THERMAL_TOLERANCE_K

    load_gain = work["load_gain"]
    residual = work["supply"] - work["resistor"] * (current + work["load_fixed"]) - load_gain * stack_v
    residual[runaway] = -1.0  # runaway means too much current: the root is below
    slope = -work["resistor"] * current - load_gain * stack_slope

    positive = residual > 0.0
    lo_w = np.where(positive, u, work["lo"])
    hi_w = np.where(positive, work["hi"], u)
    # Still positive at the top: some element is below 0 V there; look higher up.
    ceiling = np.log(CURRENT_CEILING_A)
    widen = positive & (u >= work["hi"]) & (work["hi"] < ceiling)
    hi_w = np.where(widen, np.minimum(hi_w + _WIDENING, ceiling), hi_w)
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
    # Where the bracket has closed, F cannot be computed more finely than the rounding of
    # its terms: a residual within that floor is as solved as double precision allows.
    terms = (work["supply"] + work["resistor"] * (current + np.abs(work["load_fixed"]))
             + load_gain * ((fw.multiplicity * np.abs(v_settled)).sum(axis=0) + (zn.multiplicity * scale_z).sum(axis=0)))
    # u itself is known to its rounding, which leaves F unresolved by its slope times that.
    # F carries the stack voltage times the load gain 1 + R·G_L, so a residual of F is
    # that gain times the rail's own: beyond a microvolt of rail no residual counts as solved.
    # And with the root inside the closed bracket, F at u is at most its slope times the
    # bracket's width away from 0 (mean value theorem).
    rounding = ROUNDING_ULPS * np.finfo(float).eps * (terms + np.abs(slope) * np.maximum(np.abs(u), 1.0))
    rounding += np.abs(slope) * (hi_w - lo_w)
    floor = np.clip(rounding, KCL_TOLERANCE_V, ROUNDING_FLOOR_CEILING_V * load_gain)
    done |= collapsed & (np.abs(residual) <= floor) & ~unsettled & ~runaway
    finished = (done | collapsed) & active

    # The junctions the finished points are reported with: settled at this current, taken
    # before the update below, which follows the next trial current (a bisection step for
    # a converged point) and so no longer belongs to the solution.
    settled_junction_f = junction_f - thermal_residual / headroom_f
    # Coupled Newton update of the forward junctions (Schur complement of the thermal rows),
    # kept between the least junction possible at the next current and the ceiling.
    floor_f = forward_junction_floor_c(fw.ambient, fw.theta * np.exp(new_u), fw.offset, fw.spread, fw.tnom_c)
    junction_f = np.clip(junction_f - (thermal_residual + dr_du * (new_u - u)) / headroom_f,
                         floor_f, JUNCTION_CEILING_C)  # fmt: skip
    work.update(u=new_u, lo=lo_w, hi=hi_w, junction_f=junction_f.T, seen_positive=seen_positive,
                seen_negative=seen_negative)  # fmt: skip

    if finished.any():
        where = index[finished]
        out["u"][where] = u[finished]
        out["v"][where] = stack_v[finished]
        # Element margin 1 − V·I/P_max and the hottest junction, at the solution.
        i_done = current[finished]
        # An ambient at or above Tjmax leaves no allowed power (NO_ALLOWED_POWER_W); the
        # margin may overflow there, and circuit._assembled makes it −inf.
        with np.errstate(over="ignore"):
            load_f = (v_settled[:, finished] * i_done * fw.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
            load_z = (v_z[:, finished] * i_done * zn.inverse_p_max[:, finished]).max(axis=0, initial=0.0)
        out["margin"][where] = 1.0 - np.maximum(load_f, load_z)
        out["tolerance"][where] = floor[finished]
        # The hottest element's junction, which a negative tolerance can put below the
        # ambient (so the ambient is no floor); empty slots take no part.
        out["hottest"][where] = np.maximum(
            np.where(fw.multiplicity > 0, settled_junction_f, -np.inf)[:, finished].max(axis=0, initial=-np.inf),
            np.where(zn.multiplicity > 0, tj_z, -np.inf)[:, finished].max(axis=0, initial=-np.inf),
        )
        outcome = np.full(where.size, STATUS_NOT_CONVERGED, dtype=np.int8)
        outcome[done[finished]] = STATUS_SOLVED
        failed = ~done[finished]
        outcome[failed & ~seen_positive[finished]] = STATUS_STACK_OFF
        outcome[failed & (runaway | pinned)[finished]] = STATUS_RUNAWAY
        frozen = (np.where(zn.multiplicity > 0, tj_z, np.inf) < LOWEST_JUNCTION_K - ZERO_CELSIUS_K).any(axis=0)
        outcome[frozen[finished]] = STATUS_RUNAWAY
        status[where] = outcome
    return finished, pinned
