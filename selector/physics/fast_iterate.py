"""The fast path's iterate for one block of points: the cold (or first-order heated) start
on the stack's load line, every slot evaluated and settled to first order in its thermal
residual, the blended Newton step, and the reusable work rows (solver internals of
:mod:`selector.physics.circuit`; the path itself is
:func:`selector.physics.fast_newton.newton_block`)."""

from __future__ import annotations

import math

import numpy as np

from selector.physics.devices import KNEE_EXPONENT_CEILING, ZERO_CELSIUS_K
from selector.physics.self_heating import RUNAWAY_LOOP_GAIN
from selector.physics.slot_constants import (
    F_EG,
    F_EG_NKQ,
    F_LOG_IS,
    F_NKQ,
    F_OFFSET,
    F_RS,
    F_SPREAD,
    F_THETA,
    F_TNOM_K,
    F_XTI_KQ,
    F_XTI_N,
    Z_AMBIENT_OVER_TNOM,
    Z_C,
    Z_CQ,
    Z_LOG_IZT,
    Z_OFFSET,
    Z_Q,
    Z_SPREAD,
    Z_START_A,
    Z_START_RZ,
    Z_START_SHIFT,
    Z_TC,
    Z_THETA,
)
from selector.physics.solver_settings import LEAST_CURRENT_A

#: How far below the ambient the fast path lets a forward junction go [K]. A negative
#: tolerance can settle one a little colder (:func:`selector.physics.self_heating.forward_junction_floor_c`;
#: by microkelvins at the small currents where it happens); a point colder still goes to
#: the bracketed solver, which uses that floor itself.
_FAST_BELOW_AMBIENT_K = 1.0
#: Blended Newton steps on the cold stack's load line that give the fast path its start.
_START_STEPS = 1


class Workspace:
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


def point_taker(keep: np.ndarray, shape: tuple[int, ...]):
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


class FastIterate:
    """The fast path's state for one block: per-slot constants, the current iterate ``u``,
    the forward junctions [K], and what the last evaluation left for the next step."""

    def __init__(self, forward, breakdown, ambient, drive, load_gain, resistor, current_cap, work):
        self.forward, self.breakdown, self.work = forward, breakdown, work
        self.drive, self.load_gain, self.resistor = drive, load_gain, resistor
        # At its own shape: a (corners, 1) ambient row stays one value per corner.
        self.ambient_k = np.add(ambient, ZERO_CELSIUS_K, out=work("ambient_k", ambient.shape))
        self.lo = np.log(LEAST_CURRENT_A)
        self.hi = np.log(current_cap, out=current_cap)
        # The TC-spread terms cost only where a slot has a spread.
        self.forward_spread = [bool(np.any(f[F_SPREAD])) for f in forward]
        self.breakdown_spread = [bool(np.any(z[Z_SPREAD])) for z in breakdown]
        self.thermal = [None] * len(forward)  # per slot: residual, its u-slope, 1/(1 − g), settled voltage
        self.zener_v = [None] * len(breakdown)

    def start(self, heated: bool) -> None:
        """The cold stack's load line and one blended step on it; with ``heated``, the
        first-order self-heating start of :func:`_heated_start`."""
        work, size = self.work, self.hi.shape
        ambient_k = self.ambient_k
        self.log_ambient = np.log(ambient_k, out=work("log_ambient", ambient_k.shape))
        self.inverse_ambient = np.divide(1.0, ambient_k, out=work("inverse_ambient", ambient_k.shape))
        cold_v, cold_log_slope, cold_ohmic, n_vt, log_is, scratch = (work(name, size) for name in range(6))
        for buffer in (cold_v, cold_log_slope, cold_ohmic):
            buffer.fill(0.0)
        # Each forward slot's n·Vt and ln Is at the ambient, kept for the first evaluation or the
        # heated start.
        self.cold = [(work(("cold n_vt", j), size), work(("cold ln Is", j), size)) for j in range(len(self.forward))]
        for f, (slot_n_vt, slot_log_is) in zip(self.forward, self.cold, strict=True):
            np.multiply(f[F_NKQ], ambient_k, out=slot_n_vt)
            np.multiply(f[F_XTI_N], self.log_ambient, out=slot_log_is)
            slot_log_is -= np.multiply(f[F_EG_NKQ], self.inverse_ambient, out=scratch)
            slot_log_is += f[F_LOG_IS]
            cold_v += f[F_OFFSET]
            cold_v -= np.multiply(slot_n_vt, slot_log_is, out=scratch)
            cold_log_slope += slot_n_vt
            cold_ohmic += f[F_RS]
        for z in self.breakdown:
            cold_v += z[Z_OFFSET]
            cold_v += z[Z_START_SHIFT]
            cold_log_slope += z[Z_START_A]
            cold_ohmic += z[Z_START_RZ]
        # Load line K − P·e^u − Q·u = 0 of that cold stack.
        line_k = np.subtract(self.drive, np.multiply(self.load_gain, cold_v, out=cold_v), out=cold_v)
        line_p = np.add(self.resistor, np.multiply(self.load_gain, cold_ohmic, out=cold_ohmic), out=cold_ohmic)
        line_q = np.multiply(self.load_gain, cold_log_slope, out=cold_log_slope)
        # First guess: the line with the stack's log-current term left out (kept above 0 by
        # a floor of 1e-3 of the drive where the cold stack alone would exceed the supply).
        u = np.multiply(self.drive, 1e-3, out=work(("u", 1), size))
        np.maximum(line_k, u, out=u)
        u /= line_p
        np.log(u, out=u)
        np.maximum(u, self.lo, out=u)
        np.minimum(u, self.hi, out=u)
        for _ in range(_START_STEPS):
            _line_step(u, line_k, line_p, line_q, self.lo, self.hi, n_vt, log_is, scratch, work(6, size))
        self.zener_start = [(z[Z_START_SHIFT], z[Z_START_A], z[Z_START_RZ]) for z in self.breakdown]
        if self.breakdown:
            # The tangent at izt is far from a zener run well away from its test current:
            # the line takes each zener's tangent at the current found so far, and one
            # more step follows.
            self._retangent(u, line_k, line_p, line_q)
            _line_step(u, line_k, line_p, line_q, self.lo, self.hi, n_vt, log_is, scratch, work(6, size))
        self.u = u
        if heated:
            self.junction = _heated_start(self, line_k, line_p, line_q)
        else:
            self.junction = [np.broadcast_to(ambient_k, size).copy() for _ in self.forward]

    def _retangent(self, u, line_k, line_p, line_q) -> None:
        """Each zener's curve ``g(u) = m·c/q·expm1(q·(u − ln izt))`` replaced in the load
        line, in place, by its form ``shift + a·u + rz·e^u`` at ``u``: the same value, slope
        ``m·c·x^q`` and (where ``q ≥ 0``) curvature ``q·m·c·x^q``, ``x = I/izt``."""
        work, size = self.work, u.shape
        current = np.exp(u, out=work("retangent current", size))
        for j, z in enumerate(self.breakdown):
            power = np.subtract(u, z[Z_LOG_IZT], out=work(("retangent", j, 0), size))
            power *= z[Z_Q]
            np.minimum(power, KNEE_EXPONENT_CEILING, out=power)
            value = np.expm1(power, out=work(("retangent", j, 1), size))
            power = np.add(value, 1.0, out=power)
            value *= z[Z_CQ]
            slope = np.multiply(z[Z_C], power, out=power)
            rz = np.multiply(slope, z[Z_Q], out=work(("retangent", j, 2), size))
            np.maximum(rz, 0.0, out=rz)
            rz /= current
            a = np.subtract(slope, np.multiply(rz, current, out=work(("retangent", j, 3), size)), out=slope)
            shift = np.subtract(value, np.multiply(a, u, out=work(("retangent", j, 4), size)), out=value)
            shift -= np.multiply(rz, current, out=work(("retangent", j, 4), size))
            old_shift, old_a, old_rz = self.zener_start[j]
            line_k -= self.load_gain * (shift - old_shift)
            line_q += self.load_gain * (a - old_a)
            line_p += self.load_gain * (rz - old_rz)
            self.zener_start[j] = (shift, a, rz)

    def evaluate(self, at_ambient: bool, checking: bool):
        """KCL residual ``F``, ``−F′`` and the resistor's share ``R·I`` at ``u``, every slot
        evaluated and settled to first order in its thermal residual."""
        work, u = self.work, self.u
        size = u.shape
        self.current = current = np.exp(u, out=work("current", size))
        stack_v = self.stack_v = work("stack_v", size)
        stack_slope = work("stack_slope", size)
        self.worst_residual_t = work("worst_residual_t", size)
        self.worst_gain = work("worst_gain", size)
        buffers = (stack_v, stack_slope, self.worst_residual_t, self.worst_gain) if checking else (stack_v, stack_slope)
        for buffer in buffers:
            buffer.fill(0.0)
        for j, f in enumerate(self.forward):
            voltage, slope = self._forward_slot(j, f, current, at_ambient, checking)
            stack_v += voltage
            stack_slope += slope
        for j, z in enumerate(self.breakdown):
            voltage, slope = self._breakdown_slot(j, z, current)
            stack_v += voltage
            stack_slope += slope
        resistor_slope = np.multiply(self.resistor, current, out=work("resistor_slope", size))
        residual = np.subtract(self.drive, resistor_slope, out=work("residual", size))
        residual -= np.multiply(self.load_gain, stack_v, out=work(9, size))
        falling = np.multiply(self.load_gain, stack_slope, out=stack_slope)
        falling += resistor_slope
        return residual, falling, resistor_slope

    def _forward_slot(self, j, f, current, at_ambient, checking):
        """One forward slot: SPICE3 diode voltage at its junction, settled to first order."""
        work, u = self.work, self.u
        size = u.shape
        temperature = self.junction[j]
        minus_x, tail, log_term, n_vt, ohmic, dv_dt, heating, log_t, inverse_t, scratch = (
            work(name, size) for name in range(10)
        )
        if at_ambient:
            # Junctions still at the ambient: n·Vt and ln Is are the start's (used up here).
            log_tj, inverse_tj = self.log_ambient, self.inverse_ambient
            n_vt, minus_x = self.cold[j]
        else:
            log_tj = np.log(temperature, out=log_t)
            inverse_tj = np.divide(1.0, temperature, out=inverse_t)
            np.multiply(f[F_XTI_N], log_tj, out=minus_x)
            minus_x -= np.multiply(f[F_EG_NKQ], inverse_tj, out=scratch)
            minus_x += f[F_LOG_IS]
        minus_x -= u
        np.maximum(minus_x, -700.0, out=minus_x)
        np.minimum(minus_x, 700.0, out=minus_x)
        np.exp(minus_x, out=tail)
        np.log1p(tail, out=log_term)
        log_term -= minus_x
        fraction = np.add(tail, 1.0, out=tail)
        np.divide(1.0, fraction, out=fraction)
        if not at_ambient:
            np.multiply(f[F_NKQ], temperature, out=n_vt)
        np.multiply(f[F_RS], current, out=ohmic)
        residual_t, slope_r, inverse, voltage = (work((j, name), size) for name in range(4))
        np.multiply(n_vt, log_term, out=voltage)
        voltage += ohmic
        voltage += f[F_OFFSET]
        dv_du = np.multiply(n_vt, fraction, out=n_vt)
        dv_du += ohmic
        np.multiply(f[F_EG], inverse_tj, out=dv_dt)
        dv_dt += f[F_XTI_KQ]
        dv_dt *= fraction
        np.subtract(np.multiply(f[F_NKQ], log_term, out=log_term), dv_dt, out=dv_dt)
        if self.forward_spread[j]:
            # s·tc_tol·|Tj − tnom| and its slope s·tc_tol·sign(Tj − tnom) (DESIGN §3).
            above = np.subtract(temperature, f[F_TNOM_K], out=log_term)
            voltage += np.multiply(f[F_SPREAD], np.abs(above, out=scratch), out=scratch)
            dv_dt += np.multiply(f[F_SPREAD], np.sign(above, out=above), out=above)
        np.multiply(f[F_THETA], current, out=heating)
        if at_ambient:  # Tj − Ta is exactly 0 there
            np.negative(np.multiply(heating, voltage, out=residual_t), out=residual_t)
        else:
            np.subtract(temperature, self.ambient_k, out=residual_t)
            residual_t -= np.multiply(heating, voltage, out=ohmic)
        gain = np.multiply(heating, dv_dt, out=fraction)
        if checking:
            np.maximum(self.worst_gain, gain, out=self.worst_gain)
            np.maximum(self.worst_residual_t, np.abs(residual_t, out=minus_x), out=self.worst_residual_t)
        np.subtract(1.0, gain, out=inverse)
        np.maximum(inverse, 1.0 - RUNAWAY_LOOP_GAIN, out=inverse)
        np.divide(1.0, inverse, out=inverse)
        weight = np.multiply(dv_dt, inverse, out=dv_dt)
        np.add(voltage, dv_du, out=slope_r)
        slope_r *= heating
        voltage -= np.multiply(weight, residual_t, out=minus_x)
        dv_du += np.multiply(weight, slope_r, out=minus_x)
        self.thermal[j] = residual_t, slope_r, inverse, voltage
        return voltage, dv_du

    def _breakdown_slot(self, j, z, current):
        """One zener slot at its closed-form junction (DESIGN §3, version 2): with the curve
        ``A = offset + m·c/q·expm1(q·ln(I/izt))`` and slope ``k`` on the junction's side of tnom,
        ``V = (A ± spread·(Ta − tnom))/(1 − θ·k·I)``, ``dV/du = (m·c·(I/izt)^q + V·θ·k·I)/(1 − θ·k·I)``."""
        work, u = self.work, self.u
        size = u.shape
        power, heating, inverse, ohmic = work(10, size), work(11, size), work(12, size), work(13, size)
        np.subtract(u, z[Z_LOG_IZT], out=power)
        power *= z[Z_Q]
        np.minimum(power, KNEE_EXPONENT_CEILING, out=power)
        np.expm1(power, out=power)
        voltage = np.multiply(z[Z_CQ], power, out=work(("z", j), size))
        voltage += z[Z_OFFSET]
        power += 1.0  # (I/izt)^q, for the slope
        slope_t = z[Z_TC]
        np.multiply(z[Z_THETA], current, out=heating)
        if self.breakdown_spread[j]:
            # The junction's side of tnom: at Tj = tnom, Tj − Ta − θ·I·V ≤ 0 puts it above.
            at_tnom = np.subtract(voltage, np.multiply(z[Z_TC], z[Z_AMBIENT_OVER_TNOM], out=inverse), out=inverse)
            at_tnom *= heating
            above = at_tnom >= -z[Z_AMBIENT_OVER_TNOM]
            side_spread = np.where(above, z[Z_SPREAD], -z[Z_SPREAD])
            voltage += np.multiply(side_spread, z[Z_AMBIENT_OVER_TNOM], out=ohmic)
            slope_t = np.add(slope_t, side_spread, out=ohmic)
        loop = np.multiply(slope_t, heating, out=heating)
        np.subtract(1.0, loop, out=inverse)
        np.divide(1.0, inverse, out=inverse)
        voltage *= inverse
        slope = np.multiply(z[Z_C], power, out=power)
        slope += np.multiply(voltage, loop, out=loop)
        slope *= inverse
        self.zener_v[j] = voltage
        return voltage, slope

    def step(self, residual, falling, resistor_slope, evaluation):
        """The blended Newton step on ``u`` and the coupled thermal update of the junctions."""
        work, u = self.work, self.u
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
        np.maximum(new_u, self.lo, out=new_u)
        np.minimum(new_u, self.hi, out=new_u)
        np.subtract(new_u, u, out=step)
        self.u = new_u
        coldest_k = self.ambient_k - _FAST_BELOW_AMBIENT_K
        for j, (residual_t, slope_r, inverse, _) in enumerate(self.thermal):
            residual_t -= np.multiply(slope_r, step, out=slope_r)
            residual_t *= inverse
            temperature = self.junction[j]
            temperature -= residual_t
            np.maximum(temperature, coldest_k, out=temperature)

    def keep(self, keep, extra):
        """Drop every point but ``keep`` (flat indices); returns ``extra`` arrays kept alike."""
        take = point_taker(keep, self.u.shape)
        self.u, self.current, self.ambient_k, self.drive, self.load_gain, self.resistor, self.hi, self.stack_v = (
            take(a) for a in (self.u, self.current, self.ambient_k, self.drive, self.load_gain, self.resistor,
                              self.hi, self.stack_v)
        )  # fmt: skip
        self.forward = [[take(row) for row in f] for f in self.forward]
        self.breakdown = [[take(row) for row in z] for z in self.breakdown]
        self.junction = [take(t) for t in self.junction]
        self.thermal = [tuple(take(a) for a in state) for state in self.thermal]
        self.zener_v = [take(v) for v in self.zener_v]
        return tuple(take(a) for a in extra)


def _heated_start(state: FastIterate, line_k, line_p, line_q):
    """Self-heating in the start of :func:`~selector.physics.fast_newton.newton_block`, in place on ``state.u`` and
    ``line_p``; returns each forward slot's starting junction [K].

    A slot's voltage moves by ``∂V/∂T·θ·I·V/(1 − θ·I·∂V/∂T)`` (its settled rise, DESIGN §3
    self-heating, to first order), a term in ``I`` like its ohmic one. With ``∂V/∂T`` and
    ``V`` of the start so far (SPICE3 diode at the ambient, from each slot's ``cold`` n·Vt
    and ln Is; zener tc, the tangent form of its curve) the load line takes it as more
    resistance, one more step follows, and each junction starts at ``Ta + θ·I·V`` instead
    of at the ambient.
    """
    work, u, size = state.work, state.u, state.u.shape
    ambient_k, inverse_ambient, load_gain = state.ambient_k, state.inverse_ambient, state.load_gain
    exponential, falling, delta = work(3, size), work(4, size), work(5, size)
    start_current = np.exp(u, out=work("start_current", size))
    product, gain = work(7, size), work(8, size)
    slot_v = []
    for f, (slot_n_vt, slot_log_is) in zip(state.forward, state.cold, strict=True):
        log_part = np.subtract(u, slot_log_is, out=work(("start v", len(slot_v)), size))
        log_part *= slot_n_vt
        dv_dt = np.multiply(f[F_XTI_KQ], ambient_k, out=product)
        dv_dt += f[F_EG]
        np.subtract(log_part, dv_dt, out=dv_dt)
        dv_dt *= inverse_ambient
        voltage = np.add(log_part, f[F_OFFSET], out=log_part)
        voltage += np.multiply(f[F_RS], start_current, out=gain)
        # The junction's own loop gain g = θ·I·∂V/∂T settles the rise at θ·I·V/(1 − g).
        dv_dt *= f[F_THETA]
        np.multiply(dv_dt, start_current, out=gain)
        np.subtract(1.0, gain, out=gain)
        np.maximum(gain, 1.0 - RUNAWAY_LOOP_GAIN, out=gain)
        dv_dt *= voltage
        dv_dt /= gain
        line_p += np.multiply(load_gain, dv_dt, out=dv_dt)
        slot_v.append(voltage)
    for z, (shift, a, rz) in zip(state.breakdown, state.zener_start, strict=True):
        voltage = np.multiply(a, u, out=product)
        voltage += z[Z_OFFSET]
        voltage += shift
        voltage += np.multiply(rz, start_current, out=gain)
        voltage *= z[Z_TC]
        voltage *= z[Z_THETA]
        np.multiply(z[Z_TC], z[Z_THETA], out=gain)
        gain *= start_current
        np.subtract(1.0, gain, out=gain)
        np.maximum(gain, 1.0 - RUNAWAY_LOOP_GAIN, out=gain)
        voltage /= gain
        line_p += np.multiply(load_gain, voltage, out=voltage)
    _line_step(u, line_k, line_p, line_q, state.lo, state.hi, exponential, falling, delta, work(6, size))
    np.exp(u, out=start_current)
    junction = []
    for f, voltage in zip(state.forward, slot_v, strict=True):
        temperature = f[F_THETA] * start_current
        temperature *= voltage
        temperature += ambient_k
        junction.append(np.maximum(temperature, ambient_k, out=temperature))
    return junction


def _line_step(u, line_k, line_p, line_q, lo, hi, exponential, falling, delta, scratch):
    """One blended Newton step on the load line ``K − P·e^u − Q·u = 0``, in place on ``u``
    and kept within ``[lo, hi]`` (the step of :func:`~selector.physics.fast_newton.newton_block`, exact to second order)."""
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
