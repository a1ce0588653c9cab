"""Monte Carlo: seeded, inside the corner envelope, distributions as documented. Invented parts."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binomtest, norm

from selector.physics.corners import evaluate_designs
from selector.physics.montecarlo import (
    DEFAULT_SAMPLES,
    run_monte_carlo,
    truncated_unit_normal,
    wilson_interval,
)
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
    assert result.solved_fraction == 1.0 and result.vout_v.shape == (10_000, 8)
    ev = evaluate_designs(PARTS, np.array([[0, 1]]), np.array([470.0]), SPEC)
    # Every unit's parts lie within their tolerance limits, so its rails lie inside the
    # corner box (V_out is monotonic in each deviation here).
    assert result.unit_low_v.min() >= ev.vout_low_v[0] - 1e-9
    assert result.unit_high_v.max() <= ev.vout_high_v[0] + 1e-9
    assert 0.0 < result.yield_fraction < 1.0
    assert result.yield_low < result.yield_fraction < result.yield_high
    p = result.percentiles
    assert p[0.135] < p[2.275] < p[50.0] < p[97.725] < p[99.865]


def test_wilson_interval_matches_scipy():
    # scipy.stats.binomtest(...).proportion_ci(method="wilson") (E. B. Wilson, J. Am. Stat.
    # Assoc. 22(158), 1927).
    for passed, trials in ((0, 10), (7, 10), (9_500, 10_000), (10_000, 10_000), (1, 3)):
        expected = binomtest(passed, trials).proportion_ci(confidence_level=0.95, method="wilson")
        low, high = wilson_interval(passed, trials)
        assert low == pytest.approx(expected.low, abs=1e-12) and high == pytest.approx(expected.high, abs=1e-12)


def _plain_corner_passes(parts, elements, spec, supply, load, ambient, resistor, tolerance, spread):
    """One unit at one corner, solved with scipy.optimize.brentq on the scalar KCL equation,
    and the DESIGN §3 pass rule checked by hand."""
    from scipy.optimize import brentq

    from selector.physics.self_heating import self_heated_element

    def stack(current):
        return self_heated_element(parts, elements, np.log(current), ambient, tolerance, tc_spread_sign=spread)

    def kcl(current):
        return supply - resistor * (current + load) - stack(current).voltage_v.sum()

    current = brentq(kcl, 1e-12, supply / resistor, xtol=1e-16, rtol=1e-13)
    state = stack(current)
    p_max = np.minimum(parts.pd_w[elements], (parts.tj_max_c[elements] - ambient) / parts.theta_ja_k_per_w[elements])
    bias = current >= max(spec.min_current_a, parts.i_min_a[elements].max())
    inside = abs(state.voltage_v.sum() - spec.target_v) <= spec.tolerance_v
    return inside and bias and not (state.voltage_v * current > p_max).any()


def _plain_unit_passes(parts, stack, resistor_ohm, spec, tolerance, spread, r_tol, r_tcr):
    """One unit at the 8 supply × load × ambient extremes, each by :func:`_plain_corner_passes`."""
    elements = stack[stack >= 0]
    for supply in (spec.supply_min_v, spec.supply_max_v):
        for load in (spec.load_min, spec.load_max):
            for ambient in (spec.ambient_min_c, spec.ambient_max_c):
                resistor = resistor_ohm * (1 + r_tol * spec.resistor_tolerance
                                           + r_tcr * spec.resistor_tcr_per_k * abs(ambient - 25.0))  # fmt: skip
                if not _plain_corner_passes(parts, elements, spec, supply, load, ambient, resistor,
                                            tolerance[: elements.size], spread[: elements.size]):  # fmt: skip
                    return False
    return True


def test_yield_counts_units_passing_at_every_environment_corner_like_a_plain_loop():
    spec = RailSpec(
        target_v=6.0, tolerance_v=0.1, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
        load_kind="current", load_min=0.0, load_max=2e-3, ambient_min_c=0.0, ambient_max_c=60.0,
        resistor_tcr_per_k=200e-6,
    )  # fmt: skip
    parts = PartSet.from_records([
        dict(part="INV-SIG", family="signal", is_a=2e-9, n=1.9, rs_ohm=0.6, vf_tol_v=0.02, tc_tol_v_per_k=0.2e-3,
             pd_w=0.4),
        dict(part="INV-Z5V1", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=12, izk_a=2.5e-4, zzk_ohm=500,
             vz_tol_pct=2, tc_v_per_k=1.5e-3, tc_tol_v_per_k=0.5e-3, pd_w=0.5),
    ])  # fmt: skip
    stack, units, seed = np.array([0, 1]), 60, 11
    result = run_monte_carlo(parts, stack, 470.0, spec, samples=units, seed=seed)
    # The draws in the documented order: element tolerances, TC spreads, resistor tolerance, TCR.
    rng = np.random.default_rng(seed)
    tolerance, spread = truncated_unit_normal(rng, (units, 2)), truncated_unit_normal(rng, (units, 2))
    r_tol, r_tcr = truncated_unit_normal(rng, units), truncated_unit_normal(rng, units)
    plain = [_plain_unit_passes(parts, stack, 470.0, spec, tolerance[u], spread[u], r_tol[u], r_tcr[u])
             for u in range(units)]  # fmt: skip
    assert 0 < sum(plain) < units
    assert result.yield_fraction == sum(plain) / units


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
