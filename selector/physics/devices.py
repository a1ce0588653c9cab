"""Element models of the physics contract: voltage of one stack element versus current and junction temperature.

Two families of element (DESIGN §3):

* **forward** (``signal``, ``rectifier``, ``schottky``, ``led``): the SPICE diode
  equation with the SPICE3 temperature scaling of the saturation current,
  ``V = n·Vt·ln(1 + I/Is(T)) + I·rs + s·(vf_tol + tc_tol·|T − tnom|)``;
* **breakdown** (``zener``, conducting in reverse): a dynamic resistance that follows a
  power law through both datasheet points, ``r(I) = zzt·(I/izt)^(−m)`` with
  ``m = ln(zzk/zzt)/ln(izt/izk)``, so
  ``V = vz·(1 + s·tol) + tc·(T − tnom) + s·tc_tol·|T − tnom| + zzt·izt·L_m(I/izt)``,
  ``L_m(x) = (x^(1−m) − 1)/(1 − m)`` (``L_1 = ln``).

The sign ``s`` of the voltage tolerance and that of the TC spread are one and the same at
the worst-case corners; the Monte Carlo draws them apart, so every function here takes
the TC-spread sign separately (``tc_spread_sign``, by default the tolerance sign).

Everything is vectorised over arrays of elements. The core functions take the
natural logarithm of the current, ``log_current = ln(I/1 A)``, because the solver
iterates on it and because it keeps 1 fA … 10 A (and beyond) free of overflow and
underflow: no exponential of an unbounded argument is ever formed.

Self-heating: each element's junction temperature depends only on its own current and
the ambient, ``Tj = Ta + θ·V(I, Tj)·I``. For the breakdown element ``V`` is linear in
``Tj`` on either side of ``tnom`` (the TC spread bends it there), so ``Tj`` is closed-form
on the side where the steady state lies; for the forward element it is a scalar Newton
solve whose loop gain ``θ·I·∂V/∂T`` is negative for every physical parameter set. Where
the loop gain reaches 1 there is no thermal steady state (runaway) and the element is
flagged.

References
----------
.. [1] T. Quarles et al., *SPICE3 Version 3f3 User's Manual*, UC Berkeley, 1993,
       diode model: ``IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt))``.
.. [2] DESIGN §3, physics contract version 2 (forward and breakdown elements, self-heating).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.partset import PartSet, zener_knee_exponent

# k and e are exact since the 2019 SI, so scipy.constants' k, e and zero_Celsius are these
# very numbers; they are written out because importing scipy.constants costs about 170 ms
# at every start of a command that shows a part. tests/test_devices.py checks them bit for
# bit against scipy.constants (CODATA 2022).
_BOLTZMANN_J_PER_K = 1.380649e-23
_ELEMENTARY_CHARGE_C = 1.602176634e-19
#: k/q [V/K], equal to scipy.constants.k / scipy.constants.e.
BOLTZMANN_OVER_CHARGE_V_PER_K: float = _BOLTZMANN_J_PER_K / _ELEMENTARY_CHARGE_C
#: Offset from °C to K, equal to scipy.constants.zero_Celsius.
ZERO_CELSIUS_K: float = 273.15
#: Iterations allowed for the forward element's junction temperature (bisection alone
#: narrows the bracket below the tolerance in 43).
_THERMAL_ITERATIONS = 80
#: Highest junction temperature a solution may have [°C]. Far above every rating: a junction
#: that would settle above it has no physical steady state (the part is destroyed long
#: before), and the solvers report it as thermal runaway.
JUNCTION_CEILING_C = 5000.0
#: Convergence of that solve [K].
_THERMAL_TOLERANCE_K = 1e-9
#: Loop gains at or above this count as runaway (no thermal steady state).
RUNAWAY_LOOP_GAIN = 1.0 - 1e-9


def thermal_voltage_v(temperature_c: np.ndarray) -> np.ndarray:
    """Thermal voltage ``Vt = k·T/q``.

    Parameters
    ----------
    temperature_c : array [°C]

    Returns
    -------
    array [V]
        ``k·(T + 273.15)/q`` with k and q from ``scipy.constants`` (CODATA 2022; both
        exact since the 2019 redefinition of the SI).
    """
    return BOLTZMANN_OVER_CHARGE_V_PER_K * (np.asarray(temperature_c, dtype=float) + ZERO_CELSIUS_K)


def forward_log_saturation_current(
    junction_c: np.ndarray,
    is_a: np.ndarray,
    n: np.ndarray,
    eg_ev: np.ndarray,
    xti: np.ndarray,
    tnom_c: np.ndarray,
) -> np.ndarray:
    """Natural logarithm of the forward element's saturation current at a junction temperature.

    ``ln Is(T) = ln is_a + (xti/n)·ln(T/T0) + (T/T0 − 1)·eg/(n·Vt(T))`` — the SPICE3
    diode-model scaling [1]_; the last term is rewritten as ``eg·q/(n·k)·(1/T0 − 1/T)``
    (identical algebra) so nothing overflows.

    Parameters
    ----------
    junction_c : array [°C]
    is_a : array [A]
        Saturation current at ``tnom_c``.
    n : array [1]
        Emission coefficient.
    eg_ev : array [eV]
        Band gap energy.
    xti : array [1]
        Saturation-current temperature exponent.
    tnom_c : array [°C]
        Temperature at which ``is_a`` holds.

    Returns
    -------
    array [ln A]

    References
    ----------
    .. [1] SPICE3 Version 3f3 User's Manual (1993), diode model.
    """
    temperature_k = junction_c + ZERO_CELSIUS_K
    nominal_k = tnom_c + ZERO_CELSIUS_K
    return (
        np.log(is_a)
        + (xti / n) * np.log(temperature_k / nominal_k)
        + eg_ev / (n * BOLTZMANN_OVER_CHARGE_V_PER_K) * (1.0 / nominal_k - 1.0 / temperature_k)
    )


def temperature_spread_terms(
    junction_c: np.ndarray, tnom_c: np.ndarray, tc_tol_v_per_k: np.ndarray, tc_spread_sign: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The TC-spread term ``s·tc_tol·|T − tnom|`` [V] and its slope in ``T`` [V/K] (DESIGN §3).

    The slope is taken as ``s·tc_tol·sign(T − tnom)``, 0 exactly at ``tnom``.
    """
    offset = junction_c - tnom_c
    spread = tc_spread_sign * tc_tol_v_per_k
    return spread * np.abs(offset), spread * np.sign(offset)


def forward_voltage_slopes(
    log_current: np.ndarray,
    junction_c: np.ndarray,
    is_a: np.ndarray,
    n: np.ndarray,
    rs_ohm: np.ndarray,
    eg_ev: np.ndarray,
    xti: np.ndarray,
    tnom_c: np.ndarray,
    vf_tol_v: np.ndarray,
    tc_tol_v_per_k: np.ndarray,
    tolerance_sign: np.ndarray,
    tc_spread_sign: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Forward element voltage and its slopes in log-current and temperature.

    ``V = n·Vt(T)·ln(1 + I/Is(T)) + I·rs + s·vf_tol + s'·tc_tol·|T − tnom|`` (DESIGN §3,
    SPICE3 diode [1]_; ``s' = s`` at the corners). With ``x = ln I − ln Is``:
    ``ln(1 + I/Is) = max(x, 0) + log1p(exp(−|x|))`` and ``I/(I + Is)`` is the logistic of
    ``x``, both free of overflow.

    Parameters
    ----------
    log_current : array [ln A]
        ``ln(I)`` of the forward current.
    junction_c : array [°C]
    is_a, n, rs_ohm, eg_ev, xti, tnom_c, vf_tol_v, tc_tol_v_per_k : arrays
        Model parameters [A], [1], [Ω], [eV], [1], [°C], [V], [V/K].
    tolerance_sign : array [1]
        −1 … +1, the position in the voltage tolerance.
    tc_spread_sign : array [1], optional
        −1 … +1, the position in the TC spread (default: ``tolerance_sign``).

    Returns
    -------
    voltage_v : array [V]
    dv_dlog_current_v : array [V]
        ``∂V/∂ln I = I·∂V/∂I = n·Vt·I/(I + Is) + I·rs``.
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T = (n·Vt·ln(1 + I/Is) − I/(I + Is)·(xti·Vt + eg))/T + s'·tc_tol·sign(T − tnom)``
        at constant ``I``.
    """
    spread_sign = tolerance_sign if tc_spread_sign is None else tc_spread_sign
    temperature_k = junction_c + ZERO_CELSIUS_K
    vt = BOLTZMANN_OVER_CHARGE_V_PER_K * temperature_k
    x = log_current - forward_log_saturation_current(junction_c, is_a, n, eg_ev, xti, tnom_c)
    tail = np.exp(-np.abs(x))
    log_term = np.maximum(x, 0.0) + np.log1p(tail)
    conducting_fraction = np.where(x >= 0.0, 1.0, tail) / (1.0 + tail)
    current = np.exp(log_current)
    n_vt = n * vt
    spread_v, spread_slope = temperature_spread_terms(junction_c, tnom_c, tc_tol_v_per_k, spread_sign)
    voltage = n_vt * log_term + current * rs_ohm + tolerance_sign * vf_tol_v + spread_v
    dv_dlog_current = n_vt * conducting_fraction + current * rs_ohm
    dv_dtemperature = (n_vt * log_term - conducting_fraction * (xti * vt + eg_ev)) / temperature_k + spread_slope
    return voltage, dv_dlog_current, dv_dtemperature


#: ``|1 − m|`` below which the knee curve is evaluated at ``1 − m = ±1e-12``: the
#: logarithm ``L_1`` to within ``1e-12·ln²(I/izt)/2`` of its value, with no 0/0.
KNEE_EXPONENT_NEAR_ONE = 1e-12
#: Largest ``(1 − m)·ln(I/izt)`` evaluated; far below exp overflow, far beyond any real part.
KNEE_EXPONENT_CEILING = 600.0


def breakdown_curve_terms(
    log_current: np.ndarray, izt_a: np.ndarray, zzt_ohm: np.ndarray, knee_exponent: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """The zener's current term ``zzt·izt·L_m(I/izt)`` [V] and its log-current slope [V].

    ``L_m(x) = (x^(1−m) − 1)/(1 − m)``, ``L_1(x) = ln x`` (DESIGN §3, version 2), computed as
    ``expm1((1 − m)·ln x)/(1 − m)`` so that ``m`` near 1 loses no digits. The slope
    ``I·∂V/∂I = zzt·izt·x^(1−m) = I·r(I)``.

    Parameters
    ----------
    log_current : array [ln A]
    izt_a, zzt_ohm, knee_exponent : arrays [A], [Ω], [1]

    Returns
    -------
    curve_v : array [V]
    dv_dlog_current_v : array [V]
    """
    q = 1.0 - knee_exponent
    q = np.where(np.abs(q) < KNEE_EXPONENT_NEAR_ONE, KNEE_EXPONENT_NEAR_ONE, q)
    scale = zzt_ohm * izt_a
    exponent = np.minimum(q * (log_current - np.log(izt_a)), KNEE_EXPONENT_CEILING)
    return scale * np.expm1(exponent) / q, scale * np.exp(exponent)


def zener_curve_v(current_a: np.ndarray, vz_v: np.ndarray, izt_a: np.ndarray, zzt_ohm: np.ndarray,
                  izk_a: np.ndarray, zzk_ohm: np.ndarray) -> np.ndarray:  # fmt: skip
    """A zener's voltage at ``tnom`` and nominal values: ``vz + zzt·izt·L_m(I/izt)`` [V].

    The datasheet form of the DESIGN §3 breakdown curve, for fitting and for showing the
    curve beside a datasheet; every parameter as in :func:`zener_knee_exponent` [A], [Ω].
    """
    m = zener_knee_exponent(zzt_ohm, izt_a, zzk_ohm, izk_a)
    curve, _ = breakdown_curve_terms(np.log(current_a), izt_a, zzt_ohm, m)
    return vz_v + curve


def breakdown_voltage_slopes(
    log_current: np.ndarray,
    junction_c: np.ndarray,
    vz_v: np.ndarray,
    izt_a: np.ndarray,
    zzt_ohm: np.ndarray,
    knee_exponent: np.ndarray,
    vz_tol_pct: np.ndarray,
    tc_v_per_k: np.ndarray,
    tc_tol_v_per_k: np.ndarray,
    tnom_c: np.ndarray,
    tolerance_sign: np.ndarray,
    tc_spread_sign: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Breakdown (zener) element voltage and its slopes in log-current and temperature.

    ``V = vz·(1 + s·tol/100) + tc·(T − tnom) + s'·tc_tol·|T − tnom| + zzt·izt·L_m(I/izt)``
    (DESIGN §3, version 2; ``s' = s`` at the corners).

    Parameters
    ----------
    log_current : array [ln A]
        ``ln(I)`` of the reverse (breakdown) current.
    junction_c : array [°C]
    vz_v, izt_a, zzt_ohm, knee_exponent : arrays [V], [A], [Ω], [1]
        The curve (:func:`zener_knee_exponent` gives ``m``).
    vz_tol_pct, tc_v_per_k, tc_tol_v_per_k, tnom_c : arrays [%], [V/K], [V/K], [°C]
    tolerance_sign : array [1]
    tc_spread_sign : array [1], optional
        Default: ``tolerance_sign``.

    Returns
    -------
    voltage_v : array [V]
    dv_dlog_current_v : array [V]
        ``I·∂V/∂I = zzt·izt·(I/izt)^(1−m)``.
    dv_dtemperature_v_per_k : array [V/K]
        ``tc + s'·tc_tol·sign(T − tnom)``.
    """
    spread_sign = tolerance_sign if tc_spread_sign is None else tc_spread_sign
    curve, dv_dlog_current = breakdown_curve_terms(log_current, izt_a, zzt_ohm, knee_exponent)
    spread_v, spread_slope = temperature_spread_terms(junction_c, tnom_c, tc_tol_v_per_k, spread_sign)
    voltage = vz_v * (1.0 + tolerance_sign * vz_tol_pct / 100.0) + tc_v_per_k * (junction_c - tnom_c) + spread_v + curve
    return voltage, dv_dlog_current, tc_v_per_k + spread_slope


@dataclass(frozen=True)
class ElementState:
    """One element's operating state at a given current, self-heating included.

    Attributes
    ----------
    voltage_v : array [V]
        Element voltage at its own junction temperature.
    junction_c : array [°C]
        ``Tj = Ta + θ·V·I``.
    dv_dlog_current_v : array [V]
        Total ``I·dV/dI`` along the self-heated curve (thermal feedback included).
    isothermal_dv_dlog_current_v : array [V]
        ``I·∂V/∂I`` with the junction held where it is (what a fast ripple sees).
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T`` at constant current.
    loop_gain : array [1]
        Electro-thermal loop gain ``θ·I·∂V/∂T``.
    runaway : array of bool
        No thermal steady state (loop gain ≥ 1, or the temperature solve failed).
    """

    voltage_v: np.ndarray
    junction_c: np.ndarray
    dv_dlog_current_v: np.ndarray
    isothermal_dv_dlog_current_v: np.ndarray
    dv_dtemperature_v_per_k: np.ndarray
    loop_gain: np.ndarray
    runaway: np.ndarray


def _part_fields(parts: PartSet, part_index: np.ndarray, names: tuple[str, ...]) -> list[np.ndarray]:
    return [getattr(parts, name)[part_index] for name in names]


FORWARD_FIELDS: tuple[str, ...] = ("is_a", "n", "rs_ohm", "eg_ev", "xti", "tnom_c", "vf_tol_v", "tc_tol_v_per_k")
BREAKDOWN_FIELDS: tuple[str, ...] = (
    "vz_v", "izt_a", "zzt_ohm", "zener_knee_exponent", "vz_tol_pct", "tc_v_per_k", "tc_tol_v_per_k", "tnom_c",
)  # fmt: skip


def _signs(shape, tolerance_sign, tc_spread_sign):
    sign = np.broadcast_to(np.asarray(tolerance_sign, dtype=float), shape)
    spread = sign if tc_spread_sign is None else np.broadcast_to(np.asarray(tc_spread_sign, dtype=float), shape)
    return sign, spread


def element_voltage_slopes(
    parts: PartSet,
    part_index: np.ndarray,
    current_a: np.ndarray,
    junction_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    tc_spread_sign: np.ndarray | float | None = None,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Voltage of library elements at given currents and junction temperatures, any family.

    Parameters
    ----------
    parts : PartSet
    part_index : int array
        Which part each element is.
    current_a : array [A]
        Element current (forward, or reverse for a zener); must be > 0.
    junction_c : array [°C]
    tolerance_sign : array or float [1]
        −1 … +1.
    tc_spread_sign : array or float [1], optional
        −1 … +1 (default: ``tolerance_sign``).

    Returns
    -------
    voltage_v : array [V]
    dv_di_ohm : array [Ω]
        ``∂V/∂I`` at constant temperature.
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T`` at constant current.
    """
    part_index, current, junction = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp), np.asarray(current_a, dtype=float), np.asarray(junction_c, dtype=float)
    )
    sign, spread = _signs(current.shape, tolerance_sign, tc_spread_sign)
    log_current = np.log(current)
    zener = parts.is_zener[part_index]
    voltage = np.empty(current.shape)
    dv_du = np.empty(current.shape)
    dv_dt = np.empty(current.shape)
    for mask, model, names in (
        (~zener, forward_voltage_slopes, FORWARD_FIELDS),
        (zener, breakdown_voltage_slopes, BREAKDOWN_FIELDS),
    ):
        if mask.any():
            fields = _part_fields(parts, part_index[mask], names)
            v, du, dt = model(log_current[mask], junction[mask], *fields, sign[mask], spread[mask])
            voltage[mask], dv_du[mask], dv_dt[mask] = v, du, dt
    return voltage, dv_du / current, dv_dt


def self_heated_element(
    parts: PartSet,
    part_index: np.ndarray,
    log_current: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    junction_guess_c: np.ndarray | None = None,
    tc_spread_sign: np.ndarray | float | None = None,
) -> ElementState:
    """Element voltage with its junction at the self-heating steady state ``Tj = Ta + θ·V·I``.

    Breakdown element: ``V`` is linear in ``Tj`` on each side of ``tnom`` (slope
    ``tc ± s'·tc_tol``), so ``Tj`` is closed-form on the side where the steady state lies
    (:func:`_breakdown_steady_state`). Forward element: Newton on
    ``Tj − Ta − θ·I·V(I, Tj) = 0`` from ``Tj = Ta`` (or the guess). The total slope along
    the self-heated curve is ``I·dV/dI = I·∂V/∂I + ∂V/∂T·θ·I·(V + I·∂V/∂I)/(1 − g)``, with
    loop gain ``g = θ·I·∂V/∂T`` (DESIGN §3 self-heating; implicit differentiation).

    Parameters
    ----------
    parts : PartSet
    part_index : int array
    log_current : array [ln A]
        ``ln(I)`` of each element's current.
    ambient_c : array [°C]
    tolerance_sign : array or float [1]
    junction_guess_c : array [°C], optional
        Starting temperature for the forward Newton solve.
    tc_spread_sign : array or float [1], optional
        Default: ``tolerance_sign``.

    Returns
    -------
    ElementState
    """
    part_index, log_current, ambient = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp), np.asarray(log_current, dtype=float), np.asarray(ambient_c, dtype=float)
    )
    shape = log_current.shape
    sign, spread = _signs(shape, tolerance_sign, tc_spread_sign)
    names = ("voltage", "junction", "du", "du_iso", "dt", "gain")
    outputs = {name: np.empty(shape) for name in names}
    runaway = np.zeros(shape, dtype=bool)
    zener = parts.is_zener[part_index]
    theta_all = parts.theta_ja_k_per_w[part_index]
    guess = ambient if junction_guess_c is None else np.broadcast_to(junction_guess_c, shape)
    for mask, is_breakdown in ((zener, True), (~zener, False)):
        if not mask.any():
            continue
        index = part_index[mask]
        theta = theta_all[mask]
        u, ta, s, s_spread = log_current[mask], ambient[mask], sign[mask], spread[mask]
        if is_breakdown:
            state = _breakdown_steady_state(u, ta, theta, s, s_spread, _part_fields(parts, index, BREAKDOWN_FIELDS))
        else:
            fields = _part_fields(parts, index, FORWARD_FIELDS)
            state = _forward_steady_state(u, ta, theta, s, s_spread, guess[mask], fields)
        for name, values in zip(names, state[:6], strict=True):
            outputs[name][mask] = values
        runaway[mask] = state[6]
    return ElementState(
        voltage_v=outputs["voltage"],
        junction_c=outputs["junction"],
        dv_dlog_current_v=outputs["du"],
        isothermal_dv_dlog_current_v=outputs["du_iso"],
        dv_dtemperature_v_per_k=outputs["dt"],
        loop_gain=outputs["gain"],
        runaway=runaway,
    )


def self_heated_slope(
    current_a: np.ndarray,
    voltage_v: np.ndarray,
    dv_dlog_current_v: np.ndarray,
    dv_dtemperature_v_per_k: np.ndarray,
    theta_k_per_w: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Total log-current slope along the self-heated curve, and the loop gain.

    ``g = θ·I·∂V/∂T``; ``dTj/dlnI = θ·I·(V + ∂V/∂lnI)/(1 − g)``;
    ``dV/dlnI = ∂V/∂lnI + ∂V/∂T·dTj/dlnI`` (implicit differentiation of
    ``Tj = Ta + θ·V·I``, DESIGN §3). Where ``g`` reaches 1 the slope is returned as a
    large finite value and the runaway flag is set.

    Returns
    -------
    total_dv_dlog_current_v : array [V]
    loop_gain : array [1]
    runaway : array of bool
    """
    loop_gain = theta_k_per_w * current_a * dv_dtemperature_v_per_k
    runaway = loop_gain >= RUNAWAY_LOOP_GAIN
    headroom = np.where(runaway, 1.0, 1.0 - loop_gain)
    dtj_du = theta_k_per_w * current_a * (voltage_v + dv_dlog_current_v) / headroom
    return dv_dlog_current_v + dv_dtemperature_v_per_k * dtj_du, loop_gain, runaway


def breakdown_junction_side(heating_k_per_v, at_tnom_v, tnom_c, ambient_c):
    """Whether a zener's steady junction lies at or above ``tnom``: the residual
    ``Tj − Ta − θ·I·V`` is ≤ 0 at ``Tj = tnom`` (it rises with ``Tj`` wherever the loop gain
    is below 1, so the root lies above). ``at_tnom_v`` is ``V`` at ``tnom`` [V]."""
    return tnom_c - ambient_c <= heating_k_per_v * at_tnom_v


def _breakdown_steady_state(u, ambient, theta, sign, spread_sign, fields):
    """Zener junction, closed-form: on the side of ``tnom`` where the steady state lies
    (:func:`breakdown_junction_side`) ``V = V(tnom) + k·(Tj − tnom)`` with
    ``k = tc ± s'·tc_tol``, so ``Tj = (Ta + θ·I·(V(tnom) − k·tnom))/(1 − θ·I·k)``."""
    vz, izt, zzt, knee, tol, tc, tc_tol, tnom = fields
    curve, du = breakdown_curve_terms(u, izt, zzt, knee)
    at_tnom = vz * (1.0 + sign * tol / 100.0) + curve
    current = np.exp(u)
    heating = theta * current
    above = breakdown_junction_side(heating, at_tnom, tnom, ambient)
    slope = tc + np.where(above, spread_sign, -spread_sign) * tc_tol
    loop_gain = heating * slope
    runaway = loop_gain >= RUNAWAY_LOOP_GAIN
    headroom = np.where(runaway, 1.0, 1.0 - loop_gain)
    junction = (ambient + heating * (at_tnom - slope * tnom)) / headroom
    voltage = at_tnom + slope * (junction - tnom)
    total_du, _, _ = self_heated_slope(current, voltage, du, slope, theta)
    runaway |= junction > JUNCTION_CEILING_C
    return voltage, junction, total_du, du, slope, loop_gain, runaway


def forward_junction_floor_c(ambient_c, heating_k_per_v, offset_v, spread_v_per_k=0.0, tnom_c=25.0):
    """Least junction temperature a forward element can settle at [°C].

    ``V ≥ s·vf_tol + s'·tc_tol·|Tj − tnom|`` (the diode and ohmic terms are ≥ 0): a
    negative tolerance or TC spread can make ``V`` negative at small currents, and the
    junction colder than the ambient by ``d = −θ·I·V``. With ``o = max(0, −s·vf_tol)``,
    ``c = max(0, −s'·tc_tol)`` and ``|Tj − tnom| ≤ |Ta − tnom| + d``:
    ``d ≤ θ·I·(o + c·|Ta − tnom|)/(1 − θ·I·c)`` while ``θ·I·c < 1``. The floor is kept
    above half the ambient's absolute temperature, so that trial currents far too large
    for that to happen leave the model defined.

    Parameters
    ----------
    ambient_c : array [°C]
    heating_k_per_v : array [K/V]
        ``θ·I``.
    offset_v : array [V]
        ``s·vf_tol``.
    spread_v_per_k : array [V/K]
        ``s'·tc_tol``.
    tnom_c : array [°C]
    """
    half_absolute = 0.5 * (ambient_c + ZERO_CELSIUS_K) - ZERO_CELSIUS_K
    drop = np.maximum(-np.asarray(offset_v, dtype=float), 0.0)
    bend = np.maximum(-np.asarray(spread_v_per_k, dtype=float), 0.0)
    feedback = heating_k_per_v * bend
    bounded = feedback < 1.0
    cooling = heating_k_per_v * (drop + bend * np.abs(ambient_c - tnom_c)) / np.where(bounded, 1.0 - feedback, 1.0)
    floor = np.where(bounded, ambient_c - cooling, -np.inf)
    return np.maximum(floor, half_absolute)


def _forward_steady_state(u, ambient, theta, sign, spread_sign, guess, fields):
    """Forward junction at ``Tj − Ta − θ·I·V(I, Tj) = 0``, by Newton's method kept inside a
    bracket that starts as ``[floor, JUNCTION_CEILING_C]``, with bisection where a step
    would leave it or the slope ``1 − θ·I·∂V/∂T`` is not positive (the loop gain of the
    junction at or above 1 there, as it can be at the ambient far past a part's rating);
    the floor is :func:`forward_junction_floor_c`. A residual still negative at the
    ceiling, or not settled, is runaway."""
    current = np.exp(u)
    heating = theta * current
    tnom, vf_tol, tc_tol = (fields[FORWARD_FIELDS.index(name)] for name in ("tnom_c", "vf_tol_v", "tc_tol_v_per_k"))
    low = forward_junction_floor_c(ambient, heating, sign * vf_tol, spread_sign * tc_tol, tnom)
    high = np.full(u.shape, JUNCTION_CEILING_C)
    junction = np.clip(guess, low, high)
    active = np.ones(u.shape, dtype=bool)
    for _ in range(_THERMAL_ITERATIONS):
        index = np.flatnonzero(active)
        if index.size == 0:
            break
        sub = [f[index] for f in fields]
        temperature = junction[index]
        v, _, dt = forward_voltage_slopes(u[index], temperature, *sub, sign[index], spread_sign[index])
        residual = temperature - ambient[index] - heating[index] * v
        below = residual < 0.0
        lo = np.where(below, temperature, low[index])
        hi = np.where(below, high[index], temperature)
        low[index], high[index] = lo, hi
        slope = 1.0 - heating[index] * dt
        rising = slope > 1.0 - RUNAWAY_LOOP_GAIN
        newton = temperature - residual / np.where(rising, slope, 1.0)
        inside = rising & (newton >= lo) & (newton <= hi)
        new = np.where(inside, newton, 0.5 * (lo + hi))
        junction[index] = new
        active[index] = (np.abs(new - temperature) > _THERMAL_TOLERANCE_K) & (hi - lo > _THERMAL_TOLERANCE_K)
    voltage, du, dt = forward_voltage_slopes(u, junction, *fields, sign, spread_sign)
    residual = np.abs(junction - ambient - heating * voltage)
    total_du, loop_gain, runaway = self_heated_slope(current, voltage, du, dt, theta)
    runaway |= residual > 1e-6
    return voltage, junction, total_du, du, dt, loop_gain, runaway


def stack_voltage(
    parts: PartSet,
    stacks: np.ndarray,
    current_a: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    tc_spread_sign: np.ndarray | float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Voltage across whole stacks at given currents, each element at its self-heated junction.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    current_a : array [A], broadcastable to (n,)
        Stack current (> 0).
    ambient_c : array [°C], broadcastable to (n,)
    tolerance_sign : array or float [1], broadcastable to (n,)
    tc_spread_sign : array or float [1], broadcastable to (n,), optional
        Default: ``tolerance_sign``.

    Returns
    -------
    voltage_v : array (n,) [V]
        Sum of element voltages (0 for an empty stack).
    runaway : array (n,) of bool
        Some element has no thermal steady state at that current.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    count = stacks.shape[0]
    log_current = np.broadcast_to(np.log(np.asarray(current_a, dtype=float)), (count,))
    ambient = np.broadcast_to(np.asarray(ambient_c, dtype=float), (count,))
    sign = np.broadcast_to(np.asarray(tolerance_sign, dtype=float), (count,))
    spread = sign if tc_spread_sign is None else np.broadcast_to(np.asarray(tc_spread_sign, dtype=float), (count,))
    rows, slots = np.nonzero(stacks >= 0)
    state = self_heated_element(parts, stacks[rows, slots], log_current[rows], ambient[rows], sign[rows],
                                tc_spread_sign=spread[rows])  # fmt: skip
    voltage = np.bincount(rows, weights=state.voltage_v, minlength=count)
    runaway = np.bincount(rows, weights=state.runaway.astype(float), minlength=count) > 0
    return voltage, runaway
