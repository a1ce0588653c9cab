"""Monte Carlo spread of one design's rail voltage.

Distributions (stated in ``railwright check --help`` too):

* supply, load (as written: amperes, or ohms for a resistive load) and ambient: uniform
  over the spec's range;
* series-resistor tolerance and each element's own tolerance (``vf_tol_v`` or
  ``vz_tol_pct``), independently per element: normal with 3σ at the tolerance limit,
  truncated at the limit.

The samples are solved in one vectorised call with the same circuit model as the
corners (DESIGN §3). Yield is the fraction of samples with a solution whose rail voltage
is within the tolerance window.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr, ndtri

from selector.physics.circuit import solve_operating_points
from selector.physics.corners import load_terms
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec

DEFAULT_SAMPLES = 10_000
#: Percentiles reported [%]: ±3σ-equivalent, ±2σ-equivalent and the median.
PERCENTILES: tuple[float, ...] = (0.135, 2.275, 50.0, 97.725, 99.865)


@dataclass(frozen=True)
class MonteCarloResult:
    """Outcome of a Monte Carlo run.

    Attributes
    ----------
    samples : int
    seed : int
    yield_fraction : float [1]
        Samples solved and within ``target ± tolerance``.
    solved_fraction : float [1]
    percentiles : dict of float → float
        Rail-voltage percentile [%] → voltage [V], over solved samples.
    vout_v : ndarray [V]
        Every sample's rail voltage (0 where not solved).
    """

    samples: int
    seed: int
    yield_fraction: float
    solved_fraction: float
    percentiles: dict[float, float]
    vout_v: np.ndarray


def truncated_unit_normal(rng: np.random.Generator, shape) -> np.ndarray:
    """Draws in [−1, 1] from a normal with σ = 1/3, truncated at ±1 (3σ at the limit).

    Inverse-transform sampling: a uniform draw between Φ(−3) and Φ(3) mapped through Φ⁻¹
    (``scipy.special.ndtr``/``ndtri``), then scaled by 1/3 — exact for the truncated normal,
    and without importing ``scipy.stats`` (seconds at start-up).
    """
    low, high = ndtr(-3.0), ndtr(3.0)
    return ndtri(rng.uniform(low, high, size=shape)) / 3.0


def run_monte_carlo(
    parts: PartSet,
    stack: np.ndarray,
    resistor_ohm: float,
    spec: RailSpec,
    *,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
) -> MonteCarloResult:
    """Sample the operating conditions and tolerances and solve the design at each sample.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices of the design's stack, padded with −1.
    resistor_ohm : float [Ω]
        Exact resistor value.
    spec : RailSpec
    samples : int
        Number of samples (≥ 1).
    seed : int
        Seed of ``numpy.random.default_rng``; the same seed gives the same result.

    Returns
    -------
    MonteCarloResult
    """
    rng = np.random.default_rng(seed)
    stack = np.asarray(stack, dtype=np.intp).reshape(1, -1)
    supply = rng.uniform(spec.supply_min_v, spec.supply_max_v, samples)
    load_value = rng.uniform(spec.load_min, spec.load_max, samples)
    ambient = rng.uniform(spec.ambient_min_c, spec.ambient_max_c, samples)
    resistor = resistor_ohm * (1.0 + spec.resistor_tolerance * truncated_unit_normal(rng, samples))
    element_sign = truncated_unit_normal(rng, (samples, stack.shape[1]))
    load_current, conductance = load_terms(spec, load_value)
    points = solve_operating_points(
        parts,
        np.repeat(stack, samples, axis=0),
        supply,
        resistor,
        ambient,
        element_sign,
        load_current,
        conductance,
    )
    solved = points.solved
    inside = solved & (np.abs(points.vout_v - spec.target_v) <= spec.tolerance_v)
    good = points.vout_v[solved]
    percentiles = (
        dict(zip(PERCENTILES, (float(v) for v in np.percentile(good, PERCENTILES)), strict=True))
        if good.size
        else {}
    )
    return MonteCarloResult(
        samples=samples,
        seed=seed,
        yield_fraction=float(inside.mean()),
        solved_fraction=float(solved.mean()),
        percentiles=percentiles,
        vout_v=points.vout_v,
    )
