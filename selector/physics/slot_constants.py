"""Per-slot constant rows of the rail solver: one element kind with its multiplicity folded
in, gathered for a block of points (solver internals of :mod:`selector.physics.circuit`)."""

from __future__ import annotations

import numpy as np

from selector.physics.devices import (
    BOLTZMANN_OVER_CHARGE_V_PER_K,
    KNEE_EXPONENT_NEAR_ONE,
    ZERO_CELSIUS_K,
)
from selector.physics.partset import PartSet
from selector.physics.solver_settings import NO_ALLOWED_POWER_W

# Rows of the per-key constant tables (one element with multiplicity m folded in).
(F_LOG_IS, F_XTI_N, F_EG_NKQ, F_NKQ, F_XTI_KQ, F_EG, F_RS, F_OFFSET, F_THETA, F_PD, F_TJ_MAX, F_SPREAD,
 F_TNOM_K) = range(13)  # fmt: skip
(Z_OFFSET, Z_TOL_V, Z_TC, Z_CQ, Z_Q, Z_LOG_IZT, Z_C, Z_START_SHIFT, Z_START_A, Z_START_RZ, Z_SPREAD, Z_TNOM,
 Z_LOOP, Z_THETA, Z_PD, Z_TJ_MAX) = range(16)  # fmt: skip
# Appended per block by the constant builders: 1/P_max at the point's ambient; for a zener
# also Ta − tnom (the side of tnom its junction settles on, when it has a TC spread).
F_INVERSE_P_MAX = 13
Z_INVERSE_P_MAX, Z_AMBIENT_OVER_TNOM = 16, 17


def key_tables(parts: PartSet, multiplicity: int) -> tuple[np.ndarray, np.ndarray]:
    """Per-key constants of ``multiplicity`` equal elements in series, forward and breakdown.

    Keys are those of :func:`selector.physics.slot_layout.stack_layout`: key ``k`` names
    part ``k mod P`` (``P`` parts; forward parts ``0…P−1``, breakdown parts ``P…2P−1``,
    padding ``2P``), so one column gather gives a slot every constant it needs.

    Forward rows (SPICE3 scaling rearranged):
    ``ln Is(T) = log_is + (xti/n)·ln T − eg·q/(n·k)/T`` per element; then m·n·k/q,
    m·xti·k/q, m·eg, m·rs, m·vf_tol (signed later), θ/m (one element's heating from the
    slot's voltage), m·pd, tj_max, m·tc_tol (signed later), tnom [K].

    Breakdown rows (DESIGN §3 version 2): with ``c = zzt·izt`` and ``q = 1 − m_knee``
    (:func:`selector.physics.devices.breakdown_curve_terms`), m·vz (the offset, later with
    ``s·row1`` and ``tc·(Ta − tnom)`` folded in), m·vz·vz_tol/100, m·tc, m·c/q, q, ln izt,
    m·c; then the cold start's tangent form of the curve at izt
    (``a·ln(I/izt) + rz·(I − izt)`` with ``a + rz·izt = c`` and ``rz = max(c·q/izt, 0)``:
    the same value and slope there) as its shift from the offset, m·a and m·rz;
    m·tc_tol (signed later), tnom [°C], θ·(tc + tc_tol) (per element, the steeper side's
    loop gain per ampere), θ/m, m·pd, tj_max. At ``Tj`` on the side of tnom with slope
    ``k`` (``tc ± tc_tol``) the slot voltage is
    ``(offset ± spread·(Ta − tnom) + m·c/q·expm1(q·ln(I/izt)))/(1 − θ·k·I)`` — the expm1
    form, so that ``q`` near 0 (where ``c/q`` is huge) loses no digits.
    """
    part = np.arange(2 * len(parts) + 1) % len(parts)
    m = float(multiplicity)
    n = parts.n[part]
    nkq = n * BOLTZMANN_OVER_CHARGE_V_PER_K
    nominal_k = parts.tnom_c[part] + ZERO_CELSIUS_K
    xti_over_n = parts.xti[part] / n
    eg_over_nkq = parts.eg_ev[part] / nkq
    theta = parts.theta_ja_k_per_w[part]
    spread = parts.tc_tol_v_per_k[part]
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
        m * spread,
        nominal_k,
    ])  # fmt: skip
    izt = parts.izt_a[part]
    tc = parts.tc_v_per_k[part]
    q = 1.0 - parts.zener_knee_exponent[part]
    q = np.where(np.abs(q) < KNEE_EXPONENT_NEAR_ONE, KNEE_EXPONENT_NEAR_ONE, q)
    c = parts.zzt_ohm[part] * izt
    start_rz = np.maximum(c * q / izt, 0.0)
    start_a = c - start_rz * izt
    breakdown = np.stack([
        m * parts.vz_v[part],
        m * parts.vz_v[part] * parts.vz_tol_pct[part] / 100.0,
        m * tc,
        m * c / q,
        q,
        np.log(izt),
        m * c,
        -m * (start_a * np.log(izt) + start_rz * izt),
        m * start_a,
        m * start_rz,
        m * spread,
        parts.tnom_c[part],
        theta * (tc + spread),
        theta / m,
        m * parts.pd_w[part],
        parts.tj_max_c[part],
    ])  # fmt: skip
    return forward, breakdown


def inverse_allowed_power(pd, tj_max, theta, ambient_c):
    """``1/P_max`` [1/W], ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3), of one element or,
    from rows of :func:`key_tables`, of a slot's elements together; a limit at or below 0 W
    counts as :data:`NO_ALLOWED_POWER_W`, which any power exceeds."""
    allowed = np.subtract(tj_max, ambient_c)
    allowed /= theta
    np.minimum(allowed, pd, out=allowed)
    np.maximum(allowed, NO_ALLOWED_POWER_W, out=allowed)
    return np.divide(1.0, allowed, out=allowed)


def _zener_rows(rows, sign, spread_sign, ambient_c):
    """A zener slot's offset with its tolerance sign and ``tc·(Ta − tnom)`` folded in, its
    spread signed, and ``Ta − tnom`` appended (after ``1/P_max``, appended by the caller)."""
    over_tnom = np.subtract(ambient_c, rows[Z_TNOM])
    offset = sign * rows[Z_TOL_V]
    offset += rows[Z_OFFSET]
    offset += rows[Z_TC] * over_tnom
    rows[Z_OFFSET] = offset
    rows[Z_SPREAD] = spread_sign * rows[Z_SPREAD]
    return over_tnom


def block_constants(tables, slots, part_keys, signs, spread_signs, ambient_c):
    """Each slot's constant rows for one block (:func:`key_tables`), tolerance and TC-spread
    signs applied, each zener's voltage offset taken to the ambient ``ambient_c`` [°C], and
    ``1/P_max`` there appended (and, for a zener, ``Ta − tnom``)."""
    forward, breakdown = [], []
    for (_, multiplicity), key, sign, spread in zip(slots[0], part_keys[0], signs[0], spread_signs[0], strict=True):
        constants = list(np.take(tables[multiplicity][0], key, axis=1))
        constants[F_OFFSET] *= sign
        constants[F_SPREAD] *= spread
        constants.append(inverse_allowed_power(constants[F_PD], constants[F_TJ_MAX], constants[F_THETA], ambient_c))
        forward.append(constants)
    for (_, multiplicity), key, sign, spread in zip(slots[1], part_keys[1], signs[1], spread_signs[1], strict=True):
        constants = list(np.take(tables[multiplicity][1], key, axis=1))
        over_tnom = _zener_rows(constants, sign, spread, ambient_c)
        constants.append(inverse_allowed_power(constants[Z_PD], constants[Z_TJ_MAX], constants[Z_THETA], ambient_c))
        constants.append(over_tnom)
        breakdown.append(constants)
    return forward, breakdown


def stack_constants(tables, slots, part_keys, sign, spread_sign, ambient_c):
    """Each slot's constant rows for a block of whole stacks (:func:`key_tables`): one value
    per stack, (stacks,), except the voltage offsets, which take each corner's tolerance sign
    ``sign``, TC-spread sign ``spread_sign`` and (zeners) ambient ``ambient_c`` [°C], and the
    appended ``1/P_max`` at each corner's ambient, (corners, stacks). A shared ambient row
    takes few values (the corners repeat them), so ``1/P_max`` is worked out once per value
    and stack."""
    if ambient_c.shape[1] == 1:
        ambient_values, corner_value = np.unique(ambient_c[:, 0], return_inverse=True)
        ambient_values = ambient_values[:, None]
    else:
        ambient_values, corner_value = ambient_c, None

    def inverse_allowed(pd, tj_max, theta):
        inverse = inverse_allowed_power(pd, tj_max, theta, ambient_values)
        return inverse if corner_value is None else np.take(inverse, corner_value, axis=0)

    forward, breakdown = [], []
    for (_, multiplicity), key in zip(slots[0], part_keys[0], strict=True):
        rows = list(np.take(tables[multiplicity][0], key, axis=1))
        rows[F_OFFSET] = sign * rows[F_OFFSET]
        rows[F_SPREAD] = spread_sign * rows[F_SPREAD]
        rows.append(inverse_allowed(rows[F_PD], rows[F_TJ_MAX], rows[F_THETA]))
        forward.append(rows)
    for (_, multiplicity), key in zip(slots[1], part_keys[1], strict=True):
        rows = list(np.take(tables[multiplicity][1], key, axis=1))
        over_tnom = _zener_rows(rows, sign, spread_sign, ambient_c)
        rows.append(inverse_allowed(rows[Z_PD], rows[Z_TJ_MAX], rows[Z_THETA]))
        rows.append(over_tnom)
        breakdown.append(rows)
    return forward, breakdown


def slot_arrays(part_count, slots, part_keys, signs, spread_signs, chosen):
    """The chosen points' slots as :func:`selector.physics.slot_layout.family_slots` rows (part,
    multiplicity, tolerance sign, TC-spread sign per family), for the bracketed solver."""
    arrays = []
    rows = int(np.count_nonzero(chosen))
    for family, family_slots in enumerate(slots):
        part = np.zeros((rows, len(family_slots)), dtype=np.intp)
        multiplicity = np.zeros(part.shape, dtype=np.intp)
        sign = np.zeros(part.shape)
        spread = np.zeros(part.shape)
        for slot, (_, m) in enumerate(family_slots):
            part[:, slot] = part_keys[family][slot][chosen] - family * part_count
            multiplicity[:, slot] = m
            sign[:, slot] = signs[family][slot][chosen]
            spread[:, slot] = spread_signs[family][slot][chosen]
        arrays += [part, multiplicity, sign, spread]
    return arrays
