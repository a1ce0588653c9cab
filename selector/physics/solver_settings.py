"""Tolerances, limits and status codes shared by the rail solver's modules
(:mod:`selector.physics.circuit` and the solver paths it runs)."""

from __future__ import annotations

#: Least stack current the model is solved for [A]; below it the stack counts as off.
LEAST_CURRENT_A = 1e-15
#: Most stack current the bracket is widened to [A]: far past any rating.
CURRENT_CEILING_A = 1e4
#: KCL residual at which a point counts as solved [V].
KCL_TOLERANCE_V = 1e-10
#: Thermal residual at which a forward junction counts as settled [K].
THERMAL_TOLERANCE_K = 1e-7
#: Allowed power a slot with none is given [W], so that 1/P_max stays finite (and
#: 0·1/P_max is no NaN) while any real dissipation exceeds it.
NO_ALLOWED_POWER_W = 1e-300
#: Margins below this can only come from such a slot (see circuit._assembled).
NO_ALLOWED_POWER_MARGIN = -1e250
#: Coldest junction a solution may have [K]: below it (a zener at a negative voltage far
#: below its knee, cooling itself) there is no physical steady state, and the point is
#: flagged as thermal runaway like one that would settle above the ceiling.
LOWEST_JUNCTION_K = 1.0
#: Iterations before a point is given up as not converged.
MAX_ITERATIONS = 120
#: Points solved together; keeps the working set in cache and memory proportional to it.
DEFAULT_CHUNK_POINTS = 8192
#: Stack-corner points solved together by :func:`solve_stack_corners` (measured: its
#: blocks run along the stacks, which longer rows serve better).
STACK_CORNER_CHUNK_POINTS = 16384

#: Status codes of :class:`selector.physics.circuit.OperatingPoints`. A point whose stack
#: is off (even a vanishing current leaves the supply side below the stack's voltage) has
#: a solution: no stack current, and the rail the supply, R and the load make (DESIGN §3).
#: "Load takes all" means the load alone draws more than the supply can give through R.
STATUS_SOLVED = 0
STATUS_SUPPLY_EXHAUSTED = 1
STATUS_STACK_OFF = 2
STATUS_RUNAWAY = 3
STATUS_NOT_CONVERGED = 4
STATUS_NAMES: tuple[str, ...] = (
    "solved",
    "load takes all the supply can give",
    "stack off",
    "thermal runaway",
    "did not converge",
)
#: Statuses with a circuit solution (the rail is known).
SOLUTION_STATUSES: tuple[int, ...] = (STATUS_SOLVED, STATUS_STACK_OFF)
