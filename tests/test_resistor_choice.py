"""Resistor choice per DESIGN §3 against a brute force over every series value.

Parts are invented (see tests/test_search.py).
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from test_search import V2_TERMS, brute_force, invented_parts, rail

from selector.errors import SearchError
from selector.physics.corners import REASON_NAMES, evaluate_designs
from selector.search.resistor_choice import candidate_resistors, choose_resistors, pick_per_stack
from selector.spec.eseries import series_values


def brute_choice(values, error, feasible_row):
    """Least error among feasible values; ties within 1 nV to the larger R (DESIGN §3)."""
    errors = np.where(feasible_row, error, np.inf)
    if not np.isfinite(errors).any():
        return None
    best = errors.min()
    return values[np.flatnonzero(errors <= best + 1e-9).max()]


@pytest.mark.parametrize(("changes", "tc_spread"), [
    ({}, False), ({"resistor_series": "E24", "target_v": 3.0}, False),
    ({"load_kind": "resistance", "load_min": 800.0, "load_max": 4000.0}, False),
    (V2_TERMS, True), (V2_TERMS | {"resistor_series": "E24", "target_v": 3.0}, True),
])  # fmt: skip
def test_choice_equals_brute_force(changes, tc_spread):
    parts, spec = invented_parts(tc_spread), rail(**changes)
    stacks, values, error, evaluation = brute_force(parts, spec)
    feasible = evaluation.feasible.reshape(len(stacks), values.size)
    chosen, chosen_evaluation = choose_resistors(parts, stacks, spec)
    for row in range(len(stacks)):
        expected = brute_choice(values, error[row], feasible[row])
        if expected is None:
            assert not chosen_evaluation.feasible[row]
            assert REASON_NAMES[chosen_evaluation.reason[row]] != "ok"
        else:
            assert chosen_evaluation.feasible[row]
            assert chosen[row] == expected


def test_fixed_resistor_is_used_as_given():
    parts, spec = invented_parts(), rail(resistor_fixed_ohm=470.0)
    stacks = np.array([[2, -1], [0, 2]])
    chosen, evaluation = choose_resistors(parts, stacks, spec)
    assert list(chosen) == [470.0, 470.0]
    direct = evaluate_designs(parts, stacks, np.array([470.0, 470.0]), spec)
    np.testing.assert_array_equal(evaluation.error_v, direct.error_v)


def test_range_restriction_and_empty_range():
    spec = rail(resistor_min_ohm=100.0, resistor_max_ohm=1000.0)
    values = candidate_resistors(spec)
    assert values[0] == 100.0 and values[-1] == 1000.0
    with pytest.raises(SearchError, match="^no E12 value lies between"):
        candidate_resistors(rail(resistor_min_ohm=1.05, resistor_max_ohm=1.15))
    chosen, _ = choose_resistors(invented_parts(), np.array([[2]]), spec)
    assert 100.0 <= chosen[0] <= 1000.0


def test_tie_goes_to_larger_resistor():
    stack_of_design = np.array([0, 0, 0, 1, 1])
    resistor = np.array([100.0, 110.0, 120.0, 100.0, 110.0])
    feasible = np.array([True, True, False, False, False])
    error = np.array([0.0100000000, 0.0100000005, 0.001, 0.5, 0.4])
    chosen = pick_per_stack(stack_of_design, resistor, feasible, error, 2)
    assert list(chosen) == [1, 4]


def test_series_used_follow_iec_60063():
    # IEC 60063:2015, Table 1 (E24 two-figure values that differ from rounded 10^(i/24))
    # and the E192 entry 9.20 of its three-figure table.
    e24 = series_values("E24", 1.0, 9.99)
    for value in (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2):
        assert value in e24
    assert 920.0 in series_values("E192", 100.0, 999.0)
    assert 919.0 not in series_values("E192", 100.0, 999.0)


def test_infeasible_stack_keeps_a_reason():
    parts, spec = invented_parts(), rail()
    # Three 4.7 V zeners (14.1 V) cannot conduct from an 11 V supply minimum.
    _, evaluation = choose_resistors(parts, np.array([[2, 2, 2]]), spec)
    assert not evaluation.feasible[0]
    assert evaluation.reason_name(0) in ("bias", "no solution")
    assert dataclasses.is_dataclass(evaluation)


@pytest.mark.parametrize("changes", [{}, {"load_kind": "resistance", "load_min": 800.0, "load_max": 4000.0},
                                     {"min_margin": 0.3, "ambient_max_c": 85.0}, {"target_v": 3.0, "min_current_a": 1e-3},
                                     V2_TERMS])
def test_corner_screen_bounds_the_full_evaluation(changes):
    from test_search import random_invented_library

    from selector.search.resistor_choice import screen_designs

    for seed in range(3):
        parts, spec = (invented_parts() if seed == 0 else random_invented_library(seed)), rail(**changes)
        stacks, values, _, evaluation = brute_force(parts, spec)
        designs = np.repeat(stacks, values.size, axis=0)
        resistor = np.tile(values, len(stacks))
        error, infeasible = screen_designs(parts, designs, resistor, spec)
        feasible = evaluation.feasible
        # Screen corners are some of the 32: never above the full error, never a feasible design refused.
        assert not (feasible & infeasible).any()
        assert np.all(error[feasible] <= evaluation.error_v[feasible])
        # And it is useful: most infeasible designs caught, the error usually exact (within 1 µV).
        assert infeasible.sum() > 0.5 * (~feasible).sum()
        assert np.mean(evaluation.error_v[feasible] - error[feasible] < 1e-6) > 0.9
