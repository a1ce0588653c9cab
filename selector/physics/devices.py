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

The junction temperature is an input here; :mod:`selector.physics.self_heating` finds
each element's self-heated steady state with these models.

References
----------
.. [1] T. Quarles et al., *SPICE3 Version 3f3 User's Manual*, UC Berkeley, 1993,
       diode model: ``IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt))``.
.. [2] DESIGN §3, physics contract version 2 (forward and breakdown elements, self-heating).
"""

from __future__ import annotations

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


def part_fields(parts: PartSet, part_index: np.ndarray, names: tuple[str, ...]) -> list[np.ndarray]:
    """The model parameters ``names`` of the parts ``part_index``, one array each."""
    return [getattr(parts, name)[part_index] for name in names]


#: Parameters of the forward model, in the order of :func:`forward_voltage_slopes`.
FORWARD_FIELDS: tuple[str, ...] = ("is_a", "n", "rs_ohm", "eg_ev", "xti", "tnom_c", "vf_tol_v", "tc_tol_v_per_k")
#: Parameters of the breakdown model, in the order of :func:`breakdown_voltage_slopes`.
BREAKDOWN_FIELDS: tuple[str, ...] = (
    "vz_v", "izt_a", "zzt_ohm", "zener_knee_exponent", "vz_tol_pct", "tc_v_per_k", "tc_tol_v_per_k", "tnom_c",
)  # fmt: skip


def broadcast_signs(shape, tolerance_sign, tc_spread_sign):
    """Tolerance and TC-spread signs broadcast to ``shape``; the spread's defaults to the tolerance's."""
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
    sign, spread = broadcast_signs(current.shape, tolerance_sign, tc_spread_sign)
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
            fields = part_fields(parts, part_index[mask], names)
            v, du, dt = model(log_current[mask], junction[mask], *fields, sign[mask], spread[mask])
            voltage[mask], dv_du[mask], dv_dt[mask] = v, du, dt
    return voltage, dv_du / current, dv_dt
