"""Shortlist order, --rank-by, the Pareto flag and the pruning threshold test."""

from __future__ import annotations

import numpy as np
import pytest

from selector.errors import OptionError
from selector.search.ranking import (
    beats_threshold,
    key_columns,
    pareto_front,
    quantised_error,
    rank_order,
    sort_designs,
)


def test_default_order_meets_error_margin_parts():
    meets = np.array([False, True, True, True, True])
    error = np.array([0.0001, 0.0204, 0.0201, 0.0201, 0.0101])
    margin = np.array([0.9, 0.5, 0.2, 0.6, 0.1])
    parts = np.array([1, 1, 2, 3, 3])
    order = sort_designs(meets, error, margin, parts, resolution_v=1e-3)
    # 10 mV step first, then the three 20 mV designs by margin, the non-meeting one last.
    assert list(order) == [4, 3, 1, 2, 0]


def test_rank_by_reorders_the_keys_after_meets():
    assert rank_order("margin") == ("margin", "error", "parts")
    assert rank_order("parts, error") == ("parts", "error", "margin")
    meets = np.array([True, True, False])
    order = sort_designs(meets, np.array([0.01, 0.02, 0.0]), np.array([0.1, 0.9, 1.0]), np.array([1, 1, 1]), order=rank_order("margin"))
    assert list(order) == [1, 0, 2]
    with pytest.raises(OptionError, match="^--rank-by: unknown key 'cost'"):
        rank_order("cost")
    with pytest.raises(OptionError, match="given twice"):
        rank_order("error,error")


def test_fill_rows_keep_the_error_order_whatever_rank_by_says():
    # Issue: with --rank-by margin, a design far outside the window came first among the
    # fill rows. Designs that meet follow rank_by; the rest are ordered by error.
    meets = np.array([True, True, False, False, False])
    error = np.array([0.010, 0.020, 1.500, 0.300, 0.200])
    margin = np.array([0.1, 0.9, 0.95, 0.2, 0.5])
    order = sort_designs(meets, error, margin, np.array([1, 1, 1, 1, 1]), order=rank_order("margin"))
    assert list(order) == [1, 0, 4, 3, 2]


def test_quantisation_and_bad_resolution():
    np.testing.assert_array_equal(quantised_error(np.array([0.0, 0.00099, 0.001, 0.0025]), 1e-3), [0, 0, 1, 2])
    with pytest.raises(OptionError, match="^--resolution"):
        quantised_error(np.array([0.1]), 0.0)


def test_pareto_front_marks_non_dominated_rows():
    error = np.array([0.01, 0.02, 0.01, 0.03])
    margin = np.array([0.5, 0.8, 0.4, 0.8])
    parts = np.array([2, 2, 2, 1])
    np.testing.assert_array_equal(pareto_front(error, margin, parts), [True, True, False, True])


def test_beats_threshold_is_strict_lexicographic():
    lower = [np.array([0.0, 0.0, 1.0, 0.0]), np.array([5.0, 6.0, 0.0, 5.0]), np.array([-1.0, -1.0, -1.0, -1.0])]
    threshold = [0.0, 5.0, -0.5]
    np.testing.assert_array_equal(beats_threshold(lower, threshold), [False, True, True, False])


@pytest.mark.parametrize("order", [("error", "margin", "parts"), ("margin", "error", "parts"), ("parts", "error", "margin")])
def test_largest_unbeaten_error_is_beaten_above_and_only_error_decides(order):
    from selector.search.engine import lower_bound_keys
    from selector.search.ranking import largest_unbeaten_error
    from selector.spec.rail_spec import RailSpec

    spec = RailSpec(target_v=5.0, tolerance_v=0.15, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0, load_kind="current",
                    load_min=0.0, load_max=0.01, ambient_min_c=0.0, ambient_max_c=50.0)
    rng = np.random.default_rng(5)
    for _ in range(200):
        resolution = float(rng.choice([1e-3, 1e-4, 7e-3]))
        threshold_error = float(rng.uniform(0.0, 0.4))
        threshold_meets = bool(rng.random() < 0.5) and threshold_error <= spec.tolerance_v
        # The key of a real last entry: the rank_by order if it meets, the default if not.
        threshold = [float(k[0]) for k in key_columns(np.array([threshold_meets]), np.array([threshold_error]),
                                                      np.array([rng.uniform(0.0, 1.0)]), np.array([2]), order, resolution)]
        limit = largest_unbeaten_error(threshold, order, spec.tolerance_v, resolution)
        assert np.isfinite(limit)
        above = limit + rng.uniform(1e-12, 0.3, size=50)
        for parts in (1, 2, 3):
            keys = lower_bound_keys(above, np.full(above.size, parts), spec, order, resolution)
            assert beats_threshold(keys, threshold).all()
