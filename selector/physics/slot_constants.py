"""Per-slot constant rows of the rail solver: one element kind with its multiplicity folded
in, gathered for a block of points (solver internals of :mod:`selector.physics.circuit`)."""

from __future__ import annotations

import numpy as np

from selector.physics.devices import BOLTZMANN_OVER_CHARGE_V_PER_K, ZERO_CELSIUS_K
from selector.physics.partset import PartSet
from selector.physics.solver_settings import NO_ALLOWED_POWER_W

# Rows of the per-key constant tables (one element with multiplicity m folded in).
F_LOG_IS, F_XTI_N, F_EG_NKQ, F_NKQ, F_XTI_KQ, F_EG, F_RS, F_OFFSET, F_THETA, F_PD, F_TJ_MAX = range(11)
Z_OFFSET, Z_TOL_V, Z_TC, Z_A, Z_RZ, Z_LOOP, Z_THETA, Z_PD, Z_TJ_MAX = range(9)
# Appended per block by the constant builders: 1/P_max at the point's ambient.
F_INVERSE_P_MAX, Z_INVERSE_P_MAX = 11, 9



def key_tables(parts: PartSet, multiplicity: int) -> tuple[np.ndarray, np.ndarray]:
    """Per-key constants of ``multiplicity`` equal elements in series, forward and breakdown.

    Keys are those of :func:`stack_layout`: key ``k`` names part ``k mod P`` (``P`` parts;
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


def inverse_allowed_power(pd, tj_max, theta, ambient_c):
    """``1/P_max`` [1/W], ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3), of one element or,
    from rows of :func:`key_tables`, of a slot's elements together; a limit at or below 0 W
    counts as :data:`NO_ALLOWED_POWER_W`, which any power exceeds."""
    allowed = np.subtract(tj_max, ambient_c)
    allowed /= theta
    np.minimum(allowed, pd, out=allowed)
    np.maximum(allowed, NO_ALLOWED_POWER_W, out=allowed)
    return np.divide(1.0, allowed, out=allowed)


def block_constants(tables, slots, part_keys, signs, ambient_c):
    """Each slot's constant rows for one block (:func:`key_tables`), tolerance signs applied,
    each zener's voltage offset taken to the ambient ``ambient_c`` [°C], and ``1/P_max`` there
    appended."""
    forward, breakdown = [], []
    for (_, multiplicity), key, sign in zip(slots[0], part_keys[0], signs[0], strict=True):
        constants = list(np.take(tables[multiplicity][0], key, axis=1))
        constants[F_OFFSET] *= sign
        constants.append(inverse_allowed_power(constants[F_PD], constants[F_TJ_MAX], constants[F_THETA], ambient_c))
        forward.append(constants)
    for (_, multiplicity), key, sign in zip(slots[1], part_keys[1], signs[1], strict=True):
        constants = list(np.take(tables[multiplicity][1], key, axis=1))
        tolerance_v, offset = constants[Z_TOL_V], constants[Z_OFFSET]
        tolerance_v *= sign
        offset += tolerance_v
        offset += np.multiply(constants[Z_TC], ambient_c, out=tolerance_v)
        constants.append(inverse_allowed_power(constants[Z_PD], constants[Z_TJ_MAX], constants[Z_THETA], ambient_c))
        breakdown.append(constants)
    return forward, breakdown


def stack_constants(tables, slots, part_keys, sign, ambient_c):
    """Each slot's constant rows for a block of whole stacks (:func:`key_tables`): one value
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
        inverse = inverse_allowed_power(pd, tj_max, theta, ambient_values)
        return inverse if corner_value is None else np.take(inverse, corner_value, axis=0)

    forward, breakdown = [], []
    for (_, multiplicity), key in zip(slots[0], part_keys[0], strict=True):
        rows = list(np.take(tables[multiplicity][0], key, axis=1))
        rows[F_OFFSET] = sign * rows[F_OFFSET]
        rows.append(inverse_allowed(rows[F_PD], rows[F_TJ_MAX], rows[F_THETA]))
        forward.append(rows)
    for (_, multiplicity), key in zip(slots[1], part_keys[1], strict=True):
        rows = list(np.take(tables[multiplicity][1], key, axis=1))
        offset = sign * rows[Z_TOL_V]
        offset += rows[Z_OFFSET]
        offset += rows[Z_TC] * ambient_c
        rows[Z_OFFSET] = offset
        rows.append(inverse_allowed(rows[Z_PD], rows[Z_TJ_MAX], rows[Z_THETA]))
        breakdown.append(rows)
    return forward, breakdown


def slot_arrays(part_count, slots, part_keys, signs, chosen):
    """The chosen points' slots as :func:`family_slots` rows, for :func:`solve_block`."""
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
