"""Element models of the physics contract: voltage of one stack element versus current and junction temperature.

Two families of element (DESIGN §3):

* **forward** (``signal``, ``rectifier``, ``schottky``, ``led``): the SPICE diode
  equation with the SPICE3 temperature scaling of the saturation current,
  ``V = n·Vt·ln(1 + I/Is(T)) + I·rs + s·vf_tol``;
* **breakdown** (``zener``, conducting in reverse): the datasheet curve
  ``V = vz·(1 + s·tol) + tc·(T − tnom) + a·ln(I/Izt) + rz·(I − Izt)``.

Everything is vectorised over arrays of elements. The core functions take the
natural logarithm of the current, ``log_current = ln(I/1 A)``, because the solver
iterates on it and because it keeps 1 fA … 10 A (and beyond) free of overflow and
underflow: no exponential of an unbounded argument is ever formed.

Self-heating: each element's junction temperature depends only on its own current and
the ambient, ``Tj = Ta + θ·V(I, Tj)·I``. For the breakdown element ``V`` is linear in
``Tj`` so ``Tj`` is closed-form; for the forward element it is a scalar Newton solve
whose loop gain ``θ·I·∂V/∂T`` is negative for every physical parameter set. Where the
loop gain reaches 1 there is no thermal steady state (runaway) and the element is
flagged.

References
----------
.. [1] T. Quarles et al., *SPICE3 Version 3f3 User's Manual*, UC Berkeley, 1993,
       diode model: ``IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt))``.
.. [2] DESIGN §3, physics contract (forward and breakdown elements, self-heating).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.partset import PartSet

#: k/q [V/K]: both exact by definition (SI Brochure, 9th ed., 2019, §2.2, the defining
#: constants: k = 1.380649e-23 J/K, e = 1.602176634e-19 C). Written out because importing
#: scipy.constants costs every command that shows a part about 75 ms;
#: tests/test_devices.py checks the values against scipy.constants (CODATA 2018).
BOLTZMANN_OVER_CHARGE_V_PER_K: float = 1.380649e-23 / 1.602176634e-19
#: Offset from °C to K, exact (the same brochure: t/°C = T/K − 273.15).
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
        ``k·(T + 273.15)/q`` with the exact SI values of k and q.
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
    tolerance_sign: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Forward element voltage and its slopes in log-current and temperature.

    ``V = n·Vt(T)·ln(1 + I/Is(T)) + I·rs + s·vf_tol`` (DESIGN §3, SPICE3 diode [1]_).
    With ``x = ln I − ln Is``: ``ln(1 + I/Is) = max(x, 0) + log1p(exp(−|x|))`` and
    ``I/(I + Is)`` is the logistic of ``x``, both free of overflow.

    Parameters
    ----------
    log_current : array [ln A]
        ``ln(I)`` of the forward current.
    junction_c : array [°C]
    is_a, n, rs_ohm, eg_ev, xti, tnom_c, vf_tol_v : arrays
        Model parameters [A], [1], [Ω], [eV], [1], [°C], [V].
    tolerance_sign : array [1]
        −1, 0 or +1.

    Returns
    -------
    voltage_v : array [V]
    dv_dlog_current_v : array [V]
        ``∂V/∂ln I = I·∂V/∂I = n·Vt·I/(I + Is) + I·rs``.
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T = (n·Vt·ln(1 + I/Is) − I/(I + Is)·(xti·Vt + eg)) / T`` at constant ``I``.
    """
    temperature_k = junction_c + ZERO_CELSIUS_K
    vt = BOLTZMANN_OVER_CHARGE_V_PER_K * temperature_k
    x = log_current - forward_log_saturation_current(junction_c, is_a, n, eg_ev, xti, tnom_c)
    tail = np.exp(-np.abs(x))
    log_term = np.maximum(x, 0.0) + np.log1p(tail)
    conducting_fraction = np.where(x >= 0.0, 1.0, tail) / (1.0 + tail)
    current = np.exp(log_current)
    n_vt = n * vt
    voltage = n_vt * log_term + current * rs_ohm + tolerance_sign * vf_tol_v
    dv_dlog_current = n_vt * conducting_fraction + current * rs_ohm
    dv_dtemperature = (n_vt * log_term - conducting_fraction * (xti * vt + eg_ev)) / temperature_k
    return voltage, dv_dlog_current, dv_dtemperature


def breakdown_voltage_slopes(
    log_current: np.ndarray,
    junction_c: np.ndarray,
    vz_v: np.ndarray,
    izt_a: np.ndarray,
    vz_tol_pct: np.ndarray,
    tc_v_per_k: np.ndarray,
    tnom_c: np.ndarray,
    zener_a_v: np.ndarray,
    zener_rz_ohm: np.ndarray,
    tolerance_sign: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Breakdown (zener) element voltage and its slopes in log-current and temperature.

    ``V = vz·(1 + s·tol/100) + tc·(T − tnom) + a·ln(I/Izt) + rz·(I − Izt)``, with
    ``a`` and ``rz`` from :func:`selector.physics.partset.zener_curve_coefficients` (DESIGN §3).

    Parameters
    ----------
    log_current : array [ln A]
        ``ln(I)`` of the reverse (breakdown) current.
    junction_c : array [°C]
    vz_v, izt_a, vz_tol_pct, tc_v_per_k, tnom_c, zener_a_v, zener_rz_ohm : arrays
        [V], [A], [%], [V/K], [°C], [V], [Ω].
    tolerance_sign : array [1]

    Returns
    -------
    voltage_v : array [V]
    dv_dlog_current_v : array [V]
        ``I·∂V/∂I = a + rz·I``.
    dv_dtemperature_v_per_k : array [V/K]
        ``tc``.
    """
    current = np.exp(log_current)
    voltage = (
        vz_v * (1.0 + tolerance_sign * vz_tol_pct / 100.0)
        + tc_v_per_k * (junction_c - tnom_c)
        + zener_a_v * (log_current - np.log(izt_a))
        + zener_rz_ohm * (current - izt_a)
    )
    dv_dlog_current = zener_a_v + zener_rz_ohm * current
    return voltage, dv_dlog_current, np.broadcast_to(tc_v_per_k, np.shape(voltage)).astype(float)


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
    dv_dtemperature_v_per_k: np.ndarray
    loop_gain: np.ndarray
    runaway: np.ndarray


def _part_fields(parts: PartSet, part_index: np.ndarray, names: tuple[str, ...]) -> list[np.ndarray]:
    return [getattr(parts, name)[part_index] for name in names]


FORWARD_FIELDS: tuple[str, ...] = ("is_a", "n", "rs_ohm", "eg_ev", "xti", "tnom_c", "vf_tol_v")
BREAKDOWN_FIELDS: tuple[str, ...] = (
    "vz_v", "izt_a", "vz_tol_pct", "tc_v_per_k", "tnom_c", "zener_a_v", "zener_rz_ohm",
)  # fmt: skip


def element_voltage_slopes(
    parts: PartSet,
    part_index: np.ndarray,
    current_a: np.ndarray,
    junction_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
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
        −1, 0 or +1.

    Returns
    -------
    voltage_v : array [V]
    dv_di_ohm : array [Ω]
        ``∂V/∂I`` at constant temperature.
    dv_dtemperature_v_per_k : array [V/K]
        ``∂V/∂T`` at constant current.
    """
    part_index, current, junction, sign = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp),
        np.asarray(current_a, dtype=float),
        np.asarray(junction_c, dtype=float),
        np.asarray(tolerance_sign, dtype=float),
    )
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
            v, du, dt = model(log_current[mask], junction[mask], *fields, sign[mask])
            voltage[mask], dv_du[mask], dv_dt[mask] = v, du, dt
    return voltage, dv_du / current, dv_dt


def self_heated_element(
    parts: PartSet,
    part_index: np.ndarray,
    log_current: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
    junction_guess_c: np.ndarray | None = None,
) -> ElementState:
    """Element voltage with its junction at the self-heating steady state ``Tj = Ta + θ·V·I``.

    Breakdown element: ``V`` is linear in ``Tj`` with slope ``tc``, so
    ``Tj = (Ta + θ·I·V(I, 0 °C)) / (1 − θ·I·tc)``. Forward element: Newton on
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

    Returns
    -------
    ElementState
    """
    part_index, log_current, ambient, sign = np.broadcast_arrays(
        np.asarray(part_index, dtype=np.intp),
        np.asarray(log_current, dtype=float),
        np.asarray(ambient_c, dtype=float),
        np.asarray(tolerance_sign, dtype=float),
    )
    shape = log_current.shape
    outputs = {name: np.empty(shape) for name in ("voltage", "junction", "du", "dt", "gain")}
    runaway = np.zeros(shape, dtype=bool)
    zener = parts.is_zener[part_index]
    theta_all = parts.theta_ja_k_per_w[part_index]
    guess = ambient if junction_guess_c is None else np.broadcast_to(junction_guess_c, shape)
    for mask, is_breakdown in ((zener, True), (~zener, False)):
        if not mask.any():
            continue
        index = part_index[mask]
        theta = theta_all[mask]
        u, ta, s = log_current[mask], ambient[mask], sign[mask]
        if is_breakdown:
            state = _breakdown_steady_state(u, ta, theta, s, *_part_fields(parts, index, BREAKDOWN_FIELDS))
        else:
            fields = _part_fields(parts, index, FORWARD_FIELDS)
            state = _forward_steady_state(u, ta, theta, s, guess[mask], fields)
        for name, values in zip(("voltage", "junction", "du", "dt", "gain"), state[:5], strict=True):
            outputs[name][mask] = values
        runaway[mask] = state[5]
    return ElementState(
        voltage_v=outputs["voltage"],
        junction_c=outputs["junction"],
        dv_dlog_current_v=outputs["du"],
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


def _breakdown_steady_state(u, ambient, theta, sign, vz, izt, tol, tc, tnom, a, rz):
    cold_v, du, _ = breakdown_voltage_slopes(u, 0.0 * ambient, vz, izt, tol, tc, tnom, a, rz, sign)
    current = np.exp(u)
    heating = theta * current
    loop_gain = heating * tc
    runaway = loop_gain >= RUNAWAY_LOOP_GAIN
    headroom = np.where(runaway, 1.0, 1.0 - loop_gain)
    junction = (ambient + heating * cold_v) / headroom
    voltage = cold_v + tc * junction
    total_du, _, _ = self_heated_slope(current, voltage, du, tc, theta)
    runaway |= junction > JUNCTION_CEILING_C
    return voltage, junction, total_du, tc + 0.0 * u, loop_gain, runaway


def forward_junction_floor_c(ambient_c, heating_k_per_v, offset_v):
    """Least junction temperature a forward element can settle at [°C].

    ``V ≥ s·vf_tol`` (the diode and ohmic terms are ≥ 0), so ``Tj = Ta + θ·I·V ≥
    Ta + θ·I·min(0, s·vf_tol)``: a negative tolerance makes ``V`` negative at small
    currents, and the junction a little colder than the ambient. The floor is kept above
    half the ambient's absolute temperature, so that trial currents far too large for that
    to happen leave the model defined.

    Parameters
    ----------
    ambient_c : array [°C]
    heating_k_per_v : array [K/V]
        ``θ·I``.
    offset_v : array [V]
        ``s·vf_tol``.
    """
    floor = ambient_c + heating_k_per_v * np.minimum(offset_v, 0.0)
    return np.maximum(floor, 0.5 * (ambient_c + ZERO_CELSIUS_K) - ZERO_CELSIUS_K)


def _forward_steady_state(u, ambient, theta, sign, guess, fields):
    """Forward junction at ``Tj − Ta − θ·I·V(I, Tj) = 0``, by Newton's method kept inside a
    bracket that starts as ``[Ta + θ·I·min(0, s·vf_tol), JUNCTION_CEILING_C]``, with bisection
    where a step would leave it or the slope ``1 − θ·I·∂V/∂T`` is not positive (the loop gain
    of the junction at or above 1 there, as it can be at the ambient far past a part's
    rating); the lower end is :func:`forward_junction_floor_c`. A residual still negative at
    the ceiling, or not settled, is runaway."""
    current = np.exp(u)
    heating = theta * current
    low = forward_junction_floor_c(ambient, heating, sign * fields[FORWARD_FIELDS.index("vf_tol_v")])
    high = np.full(u.shape, JUNCTION_CEILING_C)
    junction = np.clip(guess, low, high)
    active = np.ones(u.shape, dtype=bool)
    for _ in range(_THERMAL_ITERATIONS):
        index = np.flatnonzero(active)
        if index.size == 0:
            break
        sub = [f[index] for f in fields]
        temperature = junction[index]
        v, _, dt = forward_voltage_slopes(u[index], temperature, *sub, sign[index])
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
    voltage, du, dt = forward_voltage_slopes(u, junction, *fields, sign)
    residual = np.abs(junction - ambient - heating * voltage)
    total_du, loop_gain, runaway = self_heated_slope(current, voltage, du, dt, theta)
    runaway |= residual > 1e-6
    return voltage, junction, total_du, dt, loop_gain, runaway


def stack_voltage(
    parts: PartSet,
    stacks: np.ndarray,
    current_a: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray | float = 0.0,
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
    rows, slots = np.nonzero(stacks >= 0)
    state = self_heated_element(parts, stacks[rows, slots], log_current[rows], ambient[rows], sign[rows])
    voltage = np.bincount(rows, weights=state.voltage_v, minlength=count)
    runaway = np.bincount(rows, weights=state.runaway.astype(float), minlength=count) > 0
    return voltage, runaway
