"""Monte Carlo yield of one design, per unit built (DESIGN §3, version 2).

Each of N units draws, once and independently, every element's voltage-tolerance
deviation and TC-spread deviation, and the resistor's tolerance and TCR deviations, each
in [−1, 1] from a normal with σ = 1/3 truncated at ±1 (3σ at the datasheet limit), used
where the corner model uses the signs ``s`` and ``r``. Each unit is then solved at the
environment corners, the supply × load × ambient extremes — the conditions are not drawn:
a unit either holds its rail over the whole specified environment or it does not.
DESIGN §3 counts 16 environment corners; with the unit's own resistor and parts in place
of the corners' ``r`` and ``s``, 2 × 2 × 2 = 8 of them are distinct, and those 8 are
solved (the other 8 would repeat them). A unit **passes** when at every one the circuit
has a solution, its rail is inside the window and it is feasible (the contract's current
and margin rules). Yield is the share of
passing units, shown with its 95 % Wilson score interval.

The N × 16 points are solved in one vectorised call, with the corner model's circuit.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr, ndtri

from selector.physics.circuit import solve_operating_points
from selector.physics.corners import load_terms, stack_current_limits
from selector.physics.partset import PartSet
from selector.physics.series_resistor import (
    resistor_allowed_power_w,
    resistor_factor,
    resistor_margin,
)
from selector.spec.rail_spec import RailSpec

DEFAULT_SAMPLES = 10_000
#: The quantiles of the unit rails reported [%]: the points a normal spread puts at
#: −3σ, −2σ, the median, +2σ and +3σ.
PERCENTILES: tuple[float, ...] = (0.135, 2.275, 50.0, 97.725, 99.865)
#: What each of :data:`PERCENTILES` is, for the reader.
PERCENTILE_NAMES: dict[float, str] = {0.135: "−3σ", 2.275: "−2σ", 50.0: "median", 97.725: "+2σ", 99.865: "+3σ"}
#: Distinct environment corners per unit: supply × load × ambient extremes.
ENVIRONMENT_CORNERS = 8
#: z of the two-sided 95 % interval (the 97.5 % point of the standard normal).
WILSON_Z = 1.959963984540054


@dataclass(frozen=True)
class MonteCarloResult:
    """Outcome of a Monte Carlo run.

    Attributes
    ----------
    samples : int
        Units drawn.
    seed : int
    yield_fraction : float [1]
        Units that pass at every environment corner.
    yield_low, yield_high : float [1]
        The 95 % Wilson score interval of the yield.
    solved_fraction : float [1]
        Units with a circuit solution at every corner.
    percentiles : dict of float → float
        Quantile [%] (see :data:`PERCENTILE_NAMES`) → rail [V], over every solved
        (unit, corner) rail.
    unit_low_v, unit_high_v : ndarray (samples,) [V]
        Each unit's lowest and highest rail over its environment corners (NaN where unsolved).
    vout_v : ndarray (samples, 8) [V]
        Every unit's rail at every environment corner (0 where unsolved).
    """

    samples: int
    seed: int
    yield_fraction: float
    yield_low: float
    yield_high: float
    solved_fraction: float
    percentiles: dict[float, float]
    unit_low_v: np.ndarray
    unit_high_v: np.ndarray
    vout_v: np.ndarray


def truncated_unit_normal(rng: np.random.Generator, shape) -> np.ndarray:
    """Draws in [−1, 1] from a normal with σ = 1/3, truncated at ±1 (3σ at the limit).

    Inverse-transform sampling: a uniform draw between Φ(−3) and Φ(3) mapped through Φ⁻¹
    (``scipy.special.ndtr``/``ndtri``), then scaled by 1/3 — exact for the truncated normal,
    and without importing ``scipy.stats`` (seconds at start-up).
    """
    low, high = ndtr(-3.0), ndtr(3.0)
    return ndtri(rng.uniform(low, high, size=shape)) / 3.0


def wilson_interval(passed: int, trials: int, z: float = WILSON_Z) -> tuple[float, float]:
    """The Wilson score interval of a binomial proportion.

    ``(p + z²/2n ± z·√(p(1 − p)/n + z²/4n²))/(1 + z²/n)`` with ``p = passed/trials``
    (E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
    J. Am. Stat. Assoc. 22(158):209–212, 1927).
    """
    if trials <= 0:
        return 0.0, 1.0
    p = passed / trials
    z2 = z * z
    centre = p + z2 / (2 * trials)
    spread = z * math.sqrt(p * (1 - p) / trials + z2 / (4 * trials * trials))
    scale = 1 + z2 / trials
    return max(0.0, (centre - spread) / scale), min(1.0, (centre + spread) / scale)


def environment_corners(spec: RailSpec) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The 8 distinct environment corners (supply × load × ambient, in the corner order of
    :func:`selector.physics.corners.worst_case_corners`): supply [V], load as written, ambient [°C]."""
    least, most = (spec.load_max, spec.load_min) if spec.load_kind == "resistance" else (spec.load_min, spec.load_max)
    rows = list(itertools.product((spec.supply_min_v, spec.supply_max_v), (least, most),
                                  (spec.ambient_min_c, spec.ambient_max_c)))  # fmt: skip
    return tuple(np.array([row[i] for row in rows], dtype=float) for i in range(3))


def run_monte_carlo(
    parts: PartSet,
    stack: np.ndarray,
    resistor_ohm: float,
    spec: RailSpec,
    *,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
) -> MonteCarloResult:
    """Draw units of one design and solve each at the environment corners.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices of the design's stack, padded with −1.
    resistor_ohm : float [Ω]
        Exact resistor value.
    spec : RailSpec
    samples : int
        Number of units (≥ 1).
    seed : int
        Seed of ``numpy.random.default_rng``; the same seed gives the same result.

    Returns
    -------
    MonteCarloResult
    """
    rng = np.random.default_rng(seed)
    stack = np.asarray(stack, dtype=np.intp).reshape(1, -1)
    width = stack.shape[1]
    tolerance = truncated_unit_normal(rng, (samples, width))
    spread = truncated_unit_normal(rng, (samples, width))
    resistor_tol = truncated_unit_normal(rng, samples)
    resistor_tcr = truncated_unit_normal(rng, samples)
    supply, load_value, ambient = environment_corners(spec)
    corners = supply.size
    load_current, conductance = load_terms(spec, load_value)
    grid = (samples, corners)
    factor = resistor_factor(spec, ambient[None, :], resistor_tol[:, None], resistor_tcr[:, None])
    points = solve_operating_points(
        parts,
        np.repeat(stack, samples * corners, axis=0),
        np.broadcast_to(supply, grid).reshape(-1),
        (resistor_ohm * factor).reshape(-1),
        np.broadcast_to(ambient, grid).reshape(-1),
        np.repeat(tolerance, corners, axis=0),
        np.broadcast_to(load_current, grid).reshape(-1),
        np.broadcast_to(conductance, grid).reshape(-1),
        tc_spread_sign=np.repeat(spread, corners, axis=0),
    )
    solved = points.solved.reshape(grid)
    vout = points.vout_v.reshape(grid)
    current = points.stack_current_a.reshape(grid)
    inside = solved & (np.abs(vout - spec.target_v) <= spec.tolerance_v)
    need, limit = stack_current_limits(parts, stack, spec)
    margin = np.minimum(
        points.worst_element_margin.reshape(grid),
        resistor_margin(points.resistor_power_w.reshape(grid), resistor_allowed_power_w(spec, ambient)[None, :]),
    )
    feasible = (current >= need[0]) & (current <= limit[0]) & (margin >= spec.min_margin)
    passed = int((inside & feasible).all(axis=1).sum())
    unit_solved = solved.all(axis=1)
    unit_low = np.where(unit_solved, np.where(solved, vout, np.inf).min(axis=1), np.nan)
    unit_high = np.where(unit_solved, np.where(solved, vout, -np.inf).max(axis=1), np.nan)
    good = vout[solved]
    percentiles = (
        dict(zip(PERCENTILES, (float(v) for v in np.percentile(good, PERCENTILES)), strict=True)) if good.size else {}
    )
    low, high = wilson_interval(passed, samples)
    return MonteCarloResult(
        samples=samples,
        seed=seed,
        yield_fraction=passed / samples,
        yield_low=low,
        yield_high=high,
        solved_fraction=float(unit_solved.mean()),
        percentiles=percentiles,
        unit_low_v=unit_low,
        unit_high_v=unit_high,
        vout_v=vout,
    )

