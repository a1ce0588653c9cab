"""The search finds exactly what a brute force finds, and its bounds hold.

Every library here is invented for these tests (no real part's data).
"""

from __future__ import annotations

import numpy as np
import pytest

from selector.api import seek
from selector.errors import SearchError
from selector.physics.corners import evaluate_designs
from selector.physics.partset import PartSet
from selector.search.candidates import (
    candidate_count,
    check_search_size,
    iterate_multisets,
    usable_parts,
)
from selector.search.engine import REASON_RANK, search_library
from selector.search.stack_bounds import bound_stacks, part_bound_tables
from selector.spec.eseries import series_values
from selector.spec.rail_spec import RailSpec

INVENTED = [
    dict(part="TF-SIG", family="signal", description="invented", is_a=2e-9, n=1.8, rs_ohm=0.5, pd_w=0.4, vf_tol_v=0.02),
    dict(part="TF-LED", family="led", description="invented", is_a=1e-18, n=2.0, rs_ohm=8, pd_w=0.1, if_max_a=0.03),
    dict(part="TZ-4V7", family="zener", description="invented", vz_v=4.7, izt_a=5e-3, zzt_ohm=15, izk_a=0.25e-3,
         zzk_ohm=500, vz_tol_pct=5, tc_v_per_k=0.5e-3, pd_w=0.5),
    dict(part="TZ-3V3", family="zener", description="invented", vz_v=3.3, izt_a=5e-3, zzt_ohm=25, izk_a=0.25e-3,
         zzk_ohm=600, vz_tol_pct=2, tc_v_per_k=-2e-3, pd_w=0.5),
    dict(part="TZ-2V4", family="zener", description="invented", vz_v=2.4, izt_a=5e-3, zzt_ohm=30, izk_a=0.5e-3,
         zzk_ohm=900, vz_tol_pct=1, tc_v_per_k=-2.5e-3, pd_w=0.25),
]


#: The same invented parts with a TC spread on every one (physics contract v2).
INVENTED_WITH_TC_SPREAD = [record | {"tc_tol_v_per_k": 0.4e-3 if record["family"] == "zener" else 0.3e-3}
                           for record in INVENTED]
#: Contract v2 terms at once: resistor TCR, the resistor derated from 70 °C, hot ambients
#: past the derating knee, and a zener current limit.
V2_TERMS = {"resistor_tcr_per_k": 200e-6, "ambient_min_c": -20.0, "ambient_max_c": 105.0,
            "resistor_rating_w": 0.5, "resistor_full_power_ambient_c": 70.0, "resistor_zero_power_ambient_c": 155.0}


def invented_parts(tc_spread: bool = False) -> PartSet:
    return PartSet.from_records(INVENTED_WITH_TC_SPREAD if tc_spread else INVENTED)


def rail(**changes) -> RailSpec:
    fields = dict(target_v=5.0, tolerance_v=0.15, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
                  load_kind="current", load_min=0.0, load_max=0.01, ambient_min_c=0.0, ambient_max_c=50.0,
                  resistor_series="E12")
    fields.update(changes)
    return RailSpec(**fields)


def brute_force(parts: PartSet, spec: RailSpec):
    """Every multiset × every series value 1 Ω … 10 MΩ, solved at all corners."""
    stacks = np.concatenate(list(iterate_multisets(len(parts), spec.max_parts)))
    values = series_values(spec.resistor_series, 1.0, 10e6)
    evaluation = evaluate_designs(parts, np.repeat(stacks, values.size, axis=0), np.tile(values, len(stacks)), spec)
    error = np.where(evaluation.feasible, evaluation.error_v, np.inf).reshape(len(stacks), values.size)
    return stacks, values, error, evaluation


def test_enumeration_counts_every_multiset_once():
    rows = np.concatenate(list(iterate_multisets(7, 3, chunk_rows=5)))
    assert len(rows) == candidate_count(7, 3) == 7 + 28 + 84
    as_tuples = {tuple(r) for r in rows}
    assert len(as_tuples) == len(rows)
    sorted_part = np.where(rows < 0, 99, rows)
    assert np.all(np.diff(sorted_part, axis=1) >= 0)


@pytest.mark.parametrize(("changes", "tc_spread"), [
    ({}, False), ({"load_kind": "resistance", "load_min": 1000.0, "load_max": 5000.0}, False),
    ({"min_margin": 0.3, "ambient_max_c": 85.0}, False), ({"target_v": 3.0, "tolerance_v": 0.3}, False),
    (V2_TERMS, True), (V2_TERMS | {"zener_izt_limit": 2.0, "tolerance_v": 0.5}, True),
])  # fmt: skip
def test_bounds_hold_for_every_feasible_design(changes, tc_spread):
    parts, spec = invented_parts(tc_spread), rail(**changes)
    stacks, values, error, evaluation = brute_force(parts, spec)
    bounds = bound_stacks(part_bound_tables(parts, spec), stacks, spec)
    feasible = evaluation.feasible.reshape(len(stacks), values.size)
    assert feasible.any()  # a case with nothing feasible would prove nothing
    vout = evaluation.vout_v.reshape(len(stacks), values.size, 32)
    for row in range(len(stacks)):
        for column in np.flatnonzero(feasible[row]):
            assert bounds.resistor_low_ohm[row] <= values[column] <= bounds.resistor_high_ohm[row]
            assert error[row, column] >= bounds.error_lower_v[row]
            assert vout[row, column].min() >= bounds.vout_lower_v[row].min()
            assert vout[row, column].max() <= bounds.vout_upper_v[row].max()
        assert not (bounds.window_empty[row] and feasible[row].any())


@pytest.mark.parametrize(("changes", "tc_spread"), [
    ({}, False), ({"target_v": 3.0, "tolerance_v": 0.3}, False), ({"tolerance_v": 0.5}, False),
    (V2_TERMS | {"tolerance_v": 0.5}, True), (V2_TERMS | {"target_v": 3.0, "tolerance_v": 0.3}, True),
    (V2_TERMS | {"zener_izt_limit": 2.0, "tolerance_v": 0.5}, True),
])  # fmt: skip
def test_search_shortlist_equals_brute_force(changes, tc_spread):
    parts, spec = invented_parts(tc_spread), rail(**changes)
    stacks, values, error, _ = brute_force(parts, spec)
    per_stack = error.min(axis=1)
    top = 6
    expected = np.sort(per_stack[np.isfinite(per_stack)])[:top]
    assert expected.size > 0  # a case that finds nothing would prove little
    shortlist, _, summary = search_library(parts, spec, top=top, resolution_v=1e-12, rank_by="error,parts,margin", workers=1)
    assert summary.considered == len(stacks)
    np.testing.assert_allclose(np.sort(shortlist.evaluation.error_v), expected, rtol=0, atol=1e-12)


def test_seek_frame_lists_contract_columns_and_fills_with_closest_feasible():
    frame, summary = seek(rail(tolerance_v=0.01), invented_parts(), top=4, workers=1)
    assert list(frame.columns[:10]) == ["rank", "stack", "parts", "resistor_ohm", "vout_nom_v", "vout_low_v",
                                        "vout_high_v", "error_v", "margin", "meets"]
    assert len(frame) == 4 and not frame["meets"].any()
    assert list(frame["rank"]) == [1, 2, 3, 4]
    assert summary.meeting == 0 and summary.feasible >= 4


def test_rank_pruning_is_counted_and_loses_nothing(monkeypatch):
    import selector.search.engine as search_module

    monkeypatch.setattr(search_module, "FIRST_BATCH_STACKS", 4)
    monkeypatch.setattr(search_module, "BATCH_STACKS", 4)
    parts, spec = invented_parts(), rail(max_parts=3)
    _, _, error, _ = brute_force(parts, spec)
    shortlist, _, summary = search_library(invented_parts(), rail(max_parts=3), top=1, workers=1)
    assert summary.pruned.get(REASON_RANK, 0) > 0
    assert summary.considered == sum(summary.pruned.values()) + summary.solved
    assert shortlist.evaluation.error_v[0] == pytest.approx(error.min(), abs=1e-12)


@pytest.mark.parametrize("rank_by", ["margin", "parts,margin", "error"])
def test_ranked_shortlist_with_fill_rows_equals_the_plain_sort_of_every_stack(monkeypatch, rank_by):
    # Plain reference: every stack with the contract's resistor, sorted by the shortlist
    # order (rank_by for the designs that meet, error for the fill rows), against the
    # search with small batches so that rank pruning is exercised.
    import selector.search.engine as search_module
    from selector.search.ranking import rank_order, sort_designs
    from selector.search.resistor_choice import choose_resistors

    monkeypatch.setattr(search_module, "FIRST_BATCH_STACKS", 4)
    monkeypatch.setattr(search_module, "BATCH_STACKS", 4)
    parts, spec = invented_parts(), rail(max_parts=3, tolerance_v=0.5)
    stacks = np.concatenate(list(iterate_multisets(len(parts), spec.max_parts)))
    resistor, evaluation = choose_resistors(parts, stacks, spec)
    feasible = np.flatnonzero(evaluation.feasible)
    meets = evaluation.meets[feasible]
    assert 0 < meets.sum() < 8  # some meet, and fill rows follow them in a shortlist of 8
    chosen = stacks[feasible]
    ties = [chosen[:, column] for column in range(chosen.shape[1])] + [resistor[feasible]]
    order = sort_designs(meets, evaluation.error_v[feasible], evaluation.margin[feasible], (chosen >= 0).sum(axis=1),
                         ties, order=rank_order(rank_by))
    expected = chosen[order[:8]]
    shortlist, _, summary = search_library(parts, spec, top=8, rank_by=rank_by, workers=1)
    np.testing.assert_array_equal(shortlist.stacks, expected)
    assert summary.pruned.get(REASON_RANK, 0) > 0
    found_meets = shortlist.evaluation.meets
    fill = shortlist.evaluation.error_v[~found_meets]
    assert found_meets[: found_meets.sum()].all() and np.all(np.diff(fill) >= 0)


def test_bad_inputs_raise_one_line_errors():
    parts = invented_parts()
    with pytest.raises(SearchError, match="^unknown family 'diac'"):
        usable_parts(parts, families=("diac",))
    with pytest.raises(SearchError, match="holds no parts"):
        usable_parts(parts.take([]))
    with pytest.raises(SearchError, match="left after the approved-list filter"):
        usable_parts(parts, usable_mask=np.zeros(len(parts), dtype=bool))
    with pytest.raises(SearchError, match=r"^max_parts 12 over 300 parts makes 1\.43e\+21 candidate stacks \(limit 5e\+07\)"):
        check_search_size(300, 12)
    assert check_search_size(300, 4, force=True) > 5 * 10**7  # over the limit, forced through
    with pytest.raises(SearchError, match=r"beyond what even --force runs \(2e\+09\)"):
        check_search_size(300, 12, force=True)


def random_invented_library(seed: int) -> PartSet:
    """A small random library of invented forward parts and zeners (no real part's data)."""
    rng = np.random.default_rng(seed)
    records = []
    for i in range(int(rng.integers(1, 3))):
        records.append(dict(part=f"RF-{i}", family=str(rng.choice(["signal", "rectifier", "schottky"])),
                            description="invented", is_a=float(10 ** rng.uniform(-10, -7)), n=float(rng.uniform(1.0, 2.0)),
                            rs_ohm=float(rng.uniform(0, 2)), pd_w=float(rng.choice([0.2, 0.5])),
                            vf_tol_v=float(rng.choice([0.0, 0.02]))))
    for i in range(int(rng.integers(2, 4))):
        izt = float(rng.choice([2e-3, 5e-3]))
        records.append(dict(part=f"RZ-{i}", family="zener", description="invented", vz_v=float(rng.uniform(1.8, 6.2)),
                            izt_a=izt, zzt_ohm=float(rng.uniform(5, 40)), izk_a=izt / 10, zzk_ohm=float(rng.uniform(200, 900)),
                            vz_tol_pct=float(rng.choice([1.0, 5.0])), tc_v_per_k=float(rng.uniform(-3e-3, 3e-3)),
                            pd_w=float(rng.choice([0.25, 0.5]))))
    if seed >= 6:  # contract v2: a TC spread on every part
        records = [record | {"tc_tol_v_per_k": float(rng.uniform(0.0, 1e-3))} for record in records]
    return PartSet.from_records(records)


def brute_force_shortlist(parts: PartSet, spec: RailSpec, top: int):
    """Plain reference: each stack's DESIGN §3 resistor by a loop over every value, then the rank order."""
    from selector.search.ranking import sort_designs
    from selector.search.resistor_choice import candidate_resistors

    stacks = np.concatenate(list(iterate_multisets(len(parts), spec.max_parts)))
    values = candidate_resistors(spec)
    evaluation = evaluate_designs(parts, np.repeat(stacks, values.size, axis=0), np.tile(values, len(stacks)), spec)
    rows, resistors = [], []
    for row in range(len(stacks)):
        span = slice(row * values.size, (row + 1) * values.size)
        errors = np.where(evaluation.feasible[span], evaluation.error_v[span], np.inf)
        if np.isfinite(errors).any():
            # Least error; ties within 1 nV go to the larger R (DESIGN §3).
            rows.append(row * values.size + np.flatnonzero(errors <= errors.min() + 1e-9).max())
            resistors.append(values[rows[-1] - row * values.size])
    rows = np.array(rows, dtype=int)
    chosen = stacks[rows // values.size]
    ties = [chosen[:, column] for column in range(chosen.shape[1])] + [np.array(resistors)]
    order = sort_designs(evaluation.meets[rows], evaluation.error_v[rows], evaluation.margin[rows],
                         (chosen >= 0).sum(axis=1), ties)[:top]
    return chosen[order], np.array(resistors)[order], evaluation.error_v[rows][order]


@pytest.mark.parametrize("seed", range(10))
def test_random_libraries_shortlist_equals_brute_force(seed):
    rng = np.random.default_rng(100 + seed)
    changes = dict(target_v=float(rng.uniform(2.5, 7.0)), tolerance_v=float(rng.choice([0.05, 0.2, 0.5])),
                   max_parts=int(rng.choice([2, 3])), resistor_series="E12")
    if seed % 2:
        changes.update(load_kind="resistance", load_min=800.0, load_max=5000.0)
    if seed % 3 == 1:
        changes.update(min_margin=0.2)
    if seed == 2:
        changes.update(resistor_min_ohm=100.0, resistor_max_ohm=2200.0)
    if seed == 4:
        changes.update(resistor_fixed_ohm=680.0)
    if seed >= 6:  # contract v2: resistor TCR, hot ambients past the derating knee
        changes.update(resistor_tcr_per_k=float(rng.choice([100e-6, 400e-6])), ambient_max_c=float(rng.uniform(75, 125)),
                       ambient_min_c=-40.0, resistor_rating_w=0.5)
    if seed == 8:
        changes.update(zener_izt_limit=3.0)
    parts, spec = random_invented_library(seed), rail(**changes)
    expected_stacks, expected_r, expected_error = brute_force_shortlist(parts, spec, top=5)
    shortlist, _, _ = search_library(parts, spec, top=5, workers=1)
    found = 0 if shortlist.evaluation is None else len(shortlist.resistor_ohm)
    assert found == len(expected_r)
    if found:
        np.testing.assert_array_equal(shortlist.stacks, expected_stacks)
        np.testing.assert_array_equal(shortlist.resistor_ohm, expected_r)
        np.testing.assert_allclose(shortlist.evaluation.error_v, expected_error, rtol=0, atol=1e-12)


def test_design_bounds_hold_for_every_feasible_design():
    from selector.search.design_bounds import cell_bound_tables, design_bounds

    for changes in ({}, {"load_kind": "resistance", "load_min": 1000.0, "load_max": 5000.0}, {"min_margin": 0.3, "ambient_max_c": 85.0}):
        parts, spec = invented_parts(), rail(**changes)
        stacks, values, error, evaluation = brute_force(parts, spec)
        tables = cell_bound_tables(parts, spec, float(values[0]))
        lower, infeasible = design_bounds(tables, np.repeat(stacks, values.size, axis=0), np.tile(values, len(stacks)), spec)
        feasible = evaluation.feasible
        assert not (feasible & infeasible).any()
        assert np.all(lower[feasible] <= evaluation.error_v[feasible])
        # The bounds must also be useful: most infeasible designs proven so, feasible ones within 50 mV.
        assert infeasible.sum() > 0.4 * (~feasible).sum()
        assert np.median(evaluation.error_v[feasible] - lower[feasible]) < 0.05


def test_bounded_multisets_are_exactly_those_within_the_limit():
    from selector.search.candidates import (
        bounded_multiset_count,
        iterate_bounded_multisets,
        multiset_chunks,
    )

    rng = np.random.default_rng(11)
    for _ in range(150):
        count, size = int(rng.integers(1, 10)), int(rng.integers(1, 4))
        weight = rng.normal(size=count)
        weight[rng.random(count) < 0.15] = -np.inf
        weight[rng.random(count) < 0.1] = np.inf
        limit = float(rng.normal(scale=2.0))
        every = np.concatenate(list(multiset_chunks(count, size, 3)))
        with np.errstate(invalid="ignore"):
            sums = np.where(every >= 0, np.append(weight, 0.0)[every], 0.0).sum(axis=1)
        # A sum of +inf and −inf is kept (only pruning is lost).
        expected = {tuple(row) for row, total in zip(every, sums, strict=True) if not total > limit}
        chunks = list(iterate_bounded_multisets(weight, size, limit, 3, chunk_rows=int(rng.integers(1, 12))))
        rows = [tuple(row) for chunk in chunks for row in chunk]
        assert len(rows) == len(set(rows)) == bounded_multiset_count(weight, size, limit)
        assert set(rows) == expected
        assert all(np.all(np.diff(np.where(np.array(row) < 0, 99, row)) >= 0) for row in rows)


def test_separable_bounds_are_below_and_above_every_stack_bound():
    from selector.search.stack_bounds import may_be_off, separable_rail_bounds

    for changes in ({}, {"load_kind": "resistance", "load_min": 1000.0, "load_max": 5000.0}, {"min_margin": 0.3}):
        parts, spec = invented_parts(), rail(max_parts=3, **changes)
        tables = part_bound_tables(parts, spec)
        # Stacks of max_parts elements, as the search uses them (no padding slots).
        stacks = np.concatenate(list(iterate_multisets(len(parts), 3)))
        stacks = stacks[(stacks >= 0).all(axis=1)]
        bounds = bound_stacks(tables, stacks, spec)
        least, greatest = separable_rail_bounds(tables)
        present = stacks >= 0
        # A stack that may be off widens its rail down to 0 V (stack bounds, point 8); the
        # search skips by the separable bound only where off designs cannot rank either.
        conducting = ~may_be_off(bounds.floor_a)
        for corner_class in range(4):
            low = np.where(present, least[corner_class][np.maximum(stacks, 0)], 0.0).sum(axis=1)
            high = np.where(present, greatest[corner_class][np.maximum(stacks, 0)], 0.0).sum(axis=1)
            assert np.all(low[conducting] <= bounds.vout_lower_v[conducting, corner_class] + 1e-12)
            assert np.all(high >= bounds.vout_upper_v[:, corner_class] - 1e-12)


@pytest.mark.parametrize("changes", [{}, {"load_kind": "resistance", "load_min": 1000.0, "load_max": 5000.0},
                                     {"min_margin": 0.3, "ambient_max_c": 85.0}])
def test_range_bounds_with_capped_cells_hold_for_every_feasible_design(changes):
    from selector.search.design_bounds import cell_bound_tables, range_bounds
    from selector.search.stack_bounds import part_current_caps

    parts, spec = invented_parts(), rail(**changes)
    stacks, values, error, evaluation = brute_force(parts, spec)
    tables = cell_bound_tables(parts, spec, float(values[0]), part_caps_a=part_current_caps(part_bound_tables(parts, spec)))
    feasible = evaluation.feasible.reshape(len(stacks), values.size)
    rng = np.random.default_rng(3)
    first = rng.integers(0, values.size, size=(len(stacks), 6))
    last = np.minimum(first + rng.integers(0, 12, size=first.shape), values.size - 1)
    rows = np.repeat(np.arange(len(stacks)), first.shape[1])
    bound, short = range_bounds(tables, stacks[rows], values[first.ravel()], values[last.ravel()], spec)
    for row, low, high, lower, proven in zip(rows, first.ravel(), last.ravel(), bound, short, strict=True):
        inside = slice(low, high + 1)
        assert not (proven and feasible[row, inside].any())
        if feasible[row, inside].any():
            assert error[row, inside].min() >= lower
    # Single values: the bounds still prune (most infeasible designs proven, feasible ones within 50 mV).
    single, infeasible = range_bounds(tables, np.repeat(stacks, values.size, axis=0), np.tile(values, len(stacks)),
                                      np.tile(values, len(stacks)), spec)
    ok = evaluation.feasible
    assert not (ok & infeasible).any() and np.all(single[ok] <= evaluation.error_v[ok])
    assert infeasible.sum() > 0.4 * (~ok).sum()
    assert np.median(evaluation.error_v[ok] - single[ok]) < 0.05


@pytest.mark.parametrize("seed", [1, 3, 5])
def test_largest_stacks_left_out_are_counted_and_lose_nothing(seed, monkeypatch):
    import selector.search.engine as search_module
    from selector.search.candidates import (
        candidate_count,
        iterate_bounded_multisets,
        multiset_count,
    )

    enumerated = []

    def counting(*arguments, **options):
        for chunk in iterate_bounded_multisets(*arguments, **options):
            enumerated.append(len(chunk))
            yield chunk

    monkeypatch.setattr(search_module, "iterate_bounded_multisets", counting)
    parts, spec = random_invented_library(seed), rail(max_parts=3, target_v=4.0, tolerance_v=0.2)
    expected_stacks, expected_r, expected_error = brute_force_shortlist(parts, spec, top=2)
    shortlist, _, summary = search_library(parts, spec, top=2, workers=1)
    # Some three-part stacks were never enumerated, yet all are counted.
    assert sum(enumerated) < multiset_count(len(parts), 3)
    assert summary.considered == candidate_count(len(parts), 3)
    assert summary.considered == sum(summary.pruned.values()) + summary.solved
    np.testing.assert_array_equal(shortlist.stacks, expected_stacks)
    np.testing.assert_array_equal(shortlist.resistor_ohm, expected_r)
    np.testing.assert_allclose(shortlist.evaluation.error_v, expected_error, rtol=0, atol=1e-12)


def test_cell_tables_built_in_two_processes_equal_one(monkeypatch):
    import selector.search.engine as search_module
    from selector.search.design_bounds import cell_bound_tables
    from selector.search.resistor_choice import candidate_resistors
    from selector.search.stack_bounds import part_current_caps

    monkeypatch.setattr(search_module, "PARALLEL_TABLE_PARTS", 1)
    parts, spec = invented_parts(), rail()
    tables = part_bound_tables(parts, spec)
    shared = search_module.shared_cell_tables(parts, spec, tables, 2)
    single = cell_bound_tables(parts, spec, float(candidate_resistors(spec)[0]), part_caps_a=part_current_caps(tables))
    np.testing.assert_array_equal(shared.lower_v, single.lower_v)
    np.testing.assert_array_equal(shared.upper_v, single.upper_v)
    np.testing.assert_array_equal(shared.currents_a, single.currents_a)
