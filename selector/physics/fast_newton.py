"""The solver's fast path: coupled Newton without a bracket from a close start, keeping
only the points it verifies (solver internals of :mod:`selector.physics.circuit`; see
:func:`newton_block`)."""

from __future__ import annotations

import math

import numpy as np

from selector.physics.devices import ZERO_CELSIUS_K
from selector.physics.fast_iterate import FastIterate, point_taker
from selector.physics.self_heating import RUNAWAY_LOOP_GAIN
from selector.physics.slot_constants import F_INVERSE_P_MAX, Z_INVERSE_P_MAX, Z_LOOP, Z_THETA
from selector.physics.solver_settings import (
    KCL_TOLERANCE_V,
    LEAST_CURRENT_A,
    LOWEST_JUNCTION_K,
    STATUS_RUNAWAY,
    STATUS_SOLVED,
    THERMAL_TOLERANCE_K,
)

#: Newton evaluations the fast path spends on a point before handing it to the safeguarded solver.
FAST_EVALUATIONS = 8
#: Zener loop gain ``θ·(tc + tc_tol)·I`` the fast path stays below, so ``1/(1 − g)`` stays modest.
_FAST_LOOP_GAIN = 0.999
#: First fast evaluation at which points are checked. From the cold start the second
#: evaluation (after one coupled step) is almost never within the tolerances (measured:
#: 0.01–0.03 % of points), so checking it would cost more than it saves; from the heated
#: start the first never is (its junctions are only estimates).
_FIRST_CHECK_COLD, _FIRST_CHECK_HEATED = 2, 1


def newton_block(forward, breakdown, supply, resistor, ambient, load_fixed, load_conductance, work,
                 heated_start=False):  # fmt: skip
    """Fast path: coupled Newton without a bracket, from a close start; keeps what it verifies.

    ``forward`` and ``breakdown`` hold one constant array per slot (rows as in
    :func:`selector.physics.slot_constants.key_tables`, signs applied, shape (rows,
    points)). The equations, the coupled thermal step and the acceptance test are those of
    :func:`selector.physics.bracketed_newton.solve_block`. The current step is Newton's for
    the resistor's exponential term and the stack's linear one blended to second order:
    with ``δ = F/|F'|`` and ``p`` the resistor's share of ``|F'|``,
    ``Δu = (1 − p)·δ + p·ln(1 + δ)``, exact to second order when ``F = K − R·e^u − S·u``
    (Taylor expansion of ``R·I·(e^Δu − 1) + S·Δu = F``).

    The start solves that same form for the stack with every junction at the ambient —
    ``V ≈ A + B·ln I + C·I`` (each forward element conducting, SPICE3 diode; each zener's
    curve of DESIGN §3 by its tangent form at izt, of the same value and slope there).
    Without ``heated_start`` the first evaluation is taken there with every junction at the
    ambient, so it needs no logarithm per forward slot, and points are checked from the
    third. With it, the start adds self-heating to first order: each slot's settled rise
    ``θ·I·V/(1 − θ·I·∂V/∂T)`` moves its voltage by ``∂V/∂T`` times it, a term in ``I`` that
    joins ``C``; one more step on that line, the junctions start at ``Ta + θ·I·V``, and
    points are checked from the second evaluation. Measured on
    ``benchmarks/bench_solver.py``: the heated start verifies most of its corner workload
    after one coupled step (and pays), but not of its wider random points. Points not
    verified within :data:`FAST_EVALUATIONS` come back with status −1.
    """
    grid = np.broadcast_shapes(supply.shape, resistor.shape, ambient.shape, load_fixed.shape, load_conductance.shape)
    count = math.prod(grid)
    drive = np.multiply(resistor, load_fixed, out=work("drive", grid))
    np.subtract(supply, drive, out=drive)
    load_gain = np.multiply(resistor, load_conductance, out=work("load_gain", grid))
    load_gain += 1.0
    current_cap = np.divide(drive, resistor, out=work("hi", grid))
    for z in breakdown:
        # Where θ·(tc + tc_tol) ≤ 0 the bound is beyond any current (1e-300 stands in for 0).
        bound = np.maximum(z[Z_LOOP], 1e-300, out=work(0, z[Z_LOOP].shape))
        np.minimum(current_cap, np.divide(_FAST_LOOP_GAIN, bound, out=bound), out=current_cap)
    # Every point is either stored by _record or left at status −1 for the safeguarded
    # solver, which overwrites it, so the outputs need no initial values.
    status = np.full(count, -1, dtype=np.int8)
    out = [work(("out", name), count) for name in range(4)]

    viable = current_cap > 2 * LEAST_CURRENT_A
    if viable.all():
        index = slice(None)
    else:
        index = np.flatnonzero(viable)
        take = point_taker(index, grid)
        forward = [[take(row) for row in f] for f in forward]
        breakdown = [[take(row) for row in z] for z in breakdown]
        ambient, drive, load_gain, current_cap, resistor = (
            take(a) for a in (ambient, drive, load_gain, current_cap, resistor)
        )
    state = FastIterate(forward, breakdown, ambient, drive, load_gain, resistor, current_cap, work)
    state.start(heated_start)
    first_check = _FIRST_CHECK_HEATED if heated_start else _FIRST_CHECK_COLD
    pending = np.ones(state.u.shape, dtype=bool)
    for evaluation in range(FAST_EVALUATIONS):
        checking = evaluation >= first_check
        residual, falling, resistor_slope = state.evaluate(evaluation == 0 and not heated_start, checking)
        if checking:
            done = np.abs(residual, out=work("scratch done", residual.shape)) <= KCL_TOLERANCE_V
            done &= state.worst_residual_t <= THERMAL_TOLERANCE_K
            done &= state.worst_gain < RUNAWAY_LOOP_GAIN
            done &= falling > 0.0
            done &= pending
            if done.any():
                _record(done, bool(pending.all()), index, state, out, status, work)
                pending &= ~done
                if not pending.any():
                    break
                if pending.sum() < 0.5 * pending.size:
                    # Integer indices: each copy below costs only the points kept.
                    keep = np.flatnonzero(pending)
                    index = (np.arange(count)[index] if isinstance(index, slice) else index)[keep]
                    residual, falling, resistor_slope = state.keep(keep, (residual, falling, resistor_slope))
                    pending = np.ones(state.u.shape, dtype=bool)
        if evaluation == FAST_EVALUATIONS - 1:
            break
        state.step(residual, falling, resistor_slope, evaluation)
    return out[0], out[1], status, out[2], out[3]


def _record(done, fresh, index, state: FastIterate, out, status, work):
    """Store the verified points: rail voltage, element margin ``1 − V·I/P_max`` with
    ``P_max = min(pd, (Tjmax − Ta)/θ)`` (DESIGN §3), and the hottest junction.

    When most of the block is verified, margin and junction are worked out for every point
    (whole-array arithmetic is cheaper than picking the verified points first) and stored
    for those; when few are, for those alone. When nothing of the whole block is stored
    yet (``index`` a slice, ``fresh``) and most is verified, every point is stored: the
    others are overwritten later, by a later record or by the safeguarded solver, and a
    whole-array copy is cheaper than picking.
    """
    out_u, out_v, out_margin, out_hottest = out
    u, current, ambient_k = state.u, state.current, state.ambient_k
    forward, breakdown, junction, thermal, zener_v = (
        state.forward, state.breakdown, state.junction, state.thermal, state.zener_v
    )
    whole = isinstance(index, slice)
    if whole and (done.all() or (fresh and 2 * np.count_nonzero(done) >= done.size)):
        where, chosen = index, slice(None)
        status[done.reshape(-1)] = STATUS_SOLVED
    else:
        chosen = np.flatnonzero(done)
        where = chosen if whole else index[chosen]
        status[where] = STATUS_SOLVED
    out_u[where] = u.reshape(-1)[chosen]
    out_v[where] = state.stack_v.reshape(-1)[chosen]
    if not isinstance(chosen, slice) and 2 * chosen.size < u.size:
        take = point_taker(chosen, u.shape)
        current, ambient_k = take(current), take(ambient_k)
        forward = [[take(row) for row in f] for f in forward]
        breakdown = [[take(row) for row in z] for z in breakdown]
        junction = [take(t) for t in junction]
        thermal = [tuple(take(a) for a in state) for state in thermal]
        zener_v = [take(v) for v in zener_v]
        chosen = slice(None)
    size = current.shape
    load = work(("record", 1), size)
    load.fill(0.0)
    hottest = work(("record", 2), size)
    hottest.fill(-np.inf)  # the hottest element's junction, even below the ambient
    scratch = work(("record", 3), size)
    coldest = work(("record", 4), size)
    coldest.fill(np.inf)
    # Worked out for the whole block, the points not verified included: their iterates may
    # be far out (and overflow), but only verified points, whose voltages are within the
    # supply's, are stored from here.
    with np.errstate(over="ignore", invalid="ignore"):
        _margin_load_and_hottest(forward, breakdown, junction, thermal, zener_v, current, ambient_k, load, hottest,
                                 coldest, scratch)  # fmt: skip
        load *= current
        np.subtract(1.0, load, out=load)
        hottest -= ZERO_CELSIUS_K
    out_margin[where] = load.reshape(-1)[chosen]
    out_hottest[where] = hottest.reshape(-1)[chosen]
    frozen = coldest.reshape(-1)[chosen] < LOWEST_JUNCTION_K
    if frozen.any():
        # A zener far below its knee at a negative voltage that "settles" below 0 K: no
        # physical steady state, flagged like its hot counterpart.
        recorded = status[where]
        recorded[frozen & (recorded == STATUS_SOLVED)] = STATUS_RUNAWAY
        status[where] = recorded


def _margin_load_and_hottest(forward, breakdown, junction, thermal, zener_v, current, ambient_k, load, hottest,
                             coldest, scratch):  # fmt: skip
    """Into ``load`` the most ``V/P_max`` over the slots, into ``hottest`` the hottest settled
    junction [K] and into ``coldest`` the coldest zener junction [K]; see :func:`_record`."""
    for f, temperature, (residual_t, _, inverse, settled_v) in zip(forward, junction, thermal, strict=True):
        np.maximum(load, np.multiply(settled_v, f[F_INVERSE_P_MAX], out=scratch), out=load)
        settled_t = np.multiply(residual_t, inverse, out=scratch)
        np.maximum(hottest, np.subtract(temperature, settled_t, out=settled_t), out=hottest)
    for z, voltage in zip(breakdown, zener_v, strict=True):
        np.maximum(load, np.multiply(voltage, z[Z_INVERSE_P_MAX], out=scratch), out=load)
        rise = np.multiply(z[Z_THETA], current, out=scratch)
        rise *= voltage
        rise += ambient_k
        np.maximum(hottest, rise, out=hottest)
        np.minimum(coldest, rise, out=coldest)
