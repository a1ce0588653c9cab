"""Tolerances, limits and status codes shared by the rail solver's modules
(:mod:`selector.physics.circuit` and the solver paths it runs)."""

from __future__ import annotations

#: Least stack current the model is solved for [A].
LEAST_CURRENT_A = 1e-15
#: KCL residual at which a point counts as solved [V].
KCL_TOLERANCE_V = 1e-10
#: Thermal residual at which a forward junction counts as settled [K].
THERMAL_TOLERANCE_K = 1e-7
#: Allowed power a slot with none is given [W], so that 1/P_max stays finite (and
#: 0·1/P_max is no NaN) while any real dissipation exceeds it.
NO_ALLOWED_POWER_W = 1e-300
#: Margins below this can only come from such a slot (see circuit._assembled).
NO_ALLOWED_POWER_MARGIN = -1e250
#: Iterations before a point is given up as not converged.
MAX_ITERATIONS = 120
#: Points solved together; keeps the working set in cache and memory proportional to it.
DEFAULT_CHUNK_POINTS = 8192
#: Stack-corner points solved together by :func:`solve_stack_corners` (measured: its
#: blocks run along the stacks, which longer rows serve better).
STACK_CORNER_CHUNK_POINTS = 16384

#: Status codes of :class:`selector.physics.circuit.OperatingPoints`.
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
