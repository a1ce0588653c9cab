"""Every operating point of a design's corners, found by scanning the circuit equation.

The solver returns one root of ``F(I) = Vin − R·(I + I_Lc) − (1 + R·G_L)·V_stack(I)``.
With self-heating the stack voltage can fall with current (a negative tempco heating up),
so ``F`` can cross zero more than once: a thermal latch, where a circuit that starts at
one operating point can be pushed to another at far more current. DESIGN §3 takes the one
reached from zero current — the lowest root — and puts a caution on the corner.

:func:`scan_operating_points` evaluates ``F`` with every element at its own self-heated
junction (:func:`selector.physics.self_heating.stack_voltage`) on a logarithmic grid of
currents from 1 fA to the most the supply can drive, for all corners of a design in one
call, and brackets each sign change; bisection then pins every root. A root the grid
cannot separate (two within one grid step) is missed, so the scan is a check, not a proof;
:data:`SCAN_POINTS_PER_DECADE` sets its resolution.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.partset import PartSet
from selector.physics.self_heating import stack_voltage

#: Grid points per decade of current.
SCAN_POINTS_PER_DECADE = 24
#: Bisection steps on each bracketed root (a factor 10^(1/24) narrowed to below 1e-12).
BISECTION_STEPS = 48
#: Least current scanned [A] (the solver's).
SCAN_FLOOR_A = 1e-15


@dataclass(frozen=True)
class OperatingPointScan:
    """The roots of each corner's circuit equation, lowest first.

    Attributes
    ----------
    roots_a : list of ndarray [A]
        Per corner, every stack current at which ``F`` changes sign from + to − (the
        stable operating points), ascending.
    unstable_a : list of ndarray [A]
        Per corner, the − to + crossings between them (unstable points).
    """

    roots_a: list[np.ndarray]
    unstable_a: list[np.ndarray]

    def several(self) -> np.ndarray:
        """Corners (0-based) with more than one stable operating point."""
        return np.array([i for i, roots in enumerate(self.roots_a) if roots.size > 1], dtype=int)


def scan_operating_points(
    parts: PartSet,
    stack: np.ndarray,
    supply_v: np.ndarray,
    resistor_ohm: np.ndarray,
    ambient_c: np.ndarray,
    tolerance_sign: np.ndarray,
    load_current_a: np.ndarray,
    load_conductance_s: np.ndarray,
) -> OperatingPointScan:
    """Scan the circuit equation of one stack at each of several conditions.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
    supply_v, resistor_ohm, ambient_c, tolerance_sign, load_current_a, load_conductance_s : arrays (corners,)
        [V], [Ω], [°C], [1], [A], [S].

    Returns
    -------
    OperatingPointScan
    """
    conditions = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (
        supply_v, resistor_ohm, ambient_c, tolerance_sign, load_current_a, load_conductance_s)))  # fmt: skip
    supply, resistor, ambient, sign, load, conductance = conditions
    corners = supply.size
    top = np.maximum(supply - resistor * load, 0.0) / resistor * 4.0 + 1e-9
    decades = np.log10(top / SCAN_FLOOR_A)
    count = int(np.ceil(decades.max() * SCAN_POINTS_PER_DECADE)) + 1
    grid = SCAN_FLOOR_A * (top[:, None] / SCAN_FLOOR_A) ** np.linspace(0.0, 1.0, count)[None, :]
    stacks = np.repeat(np.asarray(stack, dtype=np.intp).reshape(1, -1), corners * count, axis=0)

    def residual(current, row):
        voltage, runaway = stack_voltage(parts, stacks[: current.size], current, ambient[row], sign[row])
        value = supply[row] - resistor[row] * (current + load[row] + conductance[row] * voltage) - voltage
        return np.where(runaway, -np.inf, value)

    rows = np.repeat(np.arange(corners), count)
    with np.errstate(over="ignore", invalid="ignore"):
        f = residual(grid.reshape(-1), rows).reshape(corners, count)
    positive = f > 0
    falling = positive[:, :-1] & ~positive[:, 1:]
    rising = ~positive[:, :-1] & positive[:, 1:]
    roots = _bisect(residual, grid, np.nonzero(falling), True)
    unstable = _bisect(residual, grid, np.nonzero(rising), False)
    return OperatingPointScan(
        roots_a=[np.sort(roots[1][roots[0] == c]) for c in range(corners)],
        unstable_a=[np.sort(unstable[1][unstable[0] == c]) for c in range(corners)],
    )


def _bisect(residual, grid, where, falling: bool):
    """Bisection, in log-current, of every bracketed crossing at once: (corner, current)."""
    corner, cell = where
    low, high = np.log(grid[corner, cell]), np.log(grid[corner, cell + 1])
    if corner.size == 0:
        return corner, np.zeros(0)
    for _ in range(BISECTION_STEPS):
        middle = 0.5 * (low + high)
        with np.errstate(over="ignore", invalid="ignore"):
            above = residual(np.exp(middle), corner) > 0
        keep_low = above if falling else ~above
        low, high = np.where(keep_low, middle, low), np.where(keep_low, high, middle)
    return corner, np.exp(0.5 * (low + high))
