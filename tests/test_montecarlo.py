"""Monte Carlo: seeded, inside the corner envelope, distributions as documented. Invented parts."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import norm

from selector.physics.corners import evaluate_designs
from selector.physics.montecarlo import DEFAULT_SAMPLES, run_monte_carlo, truncated_unit_normal
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec

PARTS = PartSet.from_records([
    dict(part="INV-SIG", family="signal", is_a=2e-9, n=1.9, rs_ohm=0.6, vf_tol_v=0.02, pd_w=0.4),
    dict(part="INV-Z5V1", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=12, izk_a=2.5e-4, zzk_ohm=500,
         vz_tol_pct=5, tc_v_per_k=1.5e-3, pd_w=0.5),
])  # fmt: skip
SPEC = RailSpec(
    target_v=6.0, tolerance_v=0.15, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
    load_kind="current", load_min=0.0, load_max=2e-3, ambient_min_c=0.0, ambient_max_c=60.0,
)  # fmt: skip


def test_seeded_runs_repeat_and_differ_by_seed():
    a = run_monte_carlo(PARTS, np.array([0, 1]), 470.0, SPEC, samples=2000, seed=3)
    b = run_monte_carlo(PARTS, np.array([0, 1]), 470.0, SPEC, samples=2000, seed=3)
    c = run_monte_carlo(PARTS, np.array([0, 1]), 470.0, SPEC, samples=2000, seed=4)
    np.testing.assert_array_equal(a.vout_v, b.vout_v)
    assert not np.array_equal(a.vout_v, c.vout_v)


def test_default_run_stays_inside_the_corner_envelope():
    result = run_monte_carlo(PARTS, np.array([0, 1]), 470.0, SPEC)
    assert result.samples == DEFAULT_SAMPLES == 10_000
    assert result.solved_fraction == 1.0
    ev = evaluate_designs(PARTS, np.array([[0, 1]]), np.array([470.0]), SPEC)
    # The samples lie inside the corner box, and V_out is monotonic in each variable here.
    assert result.vout_v.min() >= ev.vout_low_v[0] - 1e-9
    assert result.vout_v.max() <= ev.vout_high_v[0] + 1e-9
    inside = np.mean(np.abs(result.vout_v - 6.0) <= 0.15)
    assert result.yield_fraction == pytest.approx(inside, abs=1e-15)
    assert 0.0 < result.yield_fraction < 1.0
    p = result.percentiles
    assert p[0.135] < p[50.0] < p[99.865]


def test_truncated_normal_has_3_sigma_at_the_limit():
    draws = truncated_unit_normal(np.random.default_rng(0), 200_000)
    assert draws.min() >= -1.0 and draws.max() <= 1.0
    # Variance of a normal truncated at ±c·σ: σ²·(1 − 2c·φ(c)/(2Φ(c) − 1)) (N. L. Johnson,
    # S. Kotz, N. Balakrishnan, Continuous Univariate Distributions vol. 1, 2nd ed., 1994, §13.10).
    c = 3.0
    sigma = (1 / 3) * np.sqrt(1 - 2 * c * norm.pdf(c) / (2 * norm.cdf(c) - 1))
    assert np.std(draws) == pytest.approx(sigma, rel=0.005)
    beyond_2_sigma = 2 * (norm.cdf(3) - norm.cdf(2)) / (2 * norm.cdf(3) - 1)
    assert np.mean(np.abs(draws) > 2 / 3) == pytest.approx(beyond_2_sigma, abs=0.002)
