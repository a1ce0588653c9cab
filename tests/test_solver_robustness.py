"""Solver robustness: random valid parts, stacks, resistors and corners never give NaN or warnings.

Every point is either solved with a KCL residual within 1 nV, or flagged unsolved with a
named reason (``selector.physics.circuit.STATUS_NAMES``). Floating-point trouble raises
(``np.errstate(all="raise", under="ignore")``) and warnings are errors. Parameter ranges are those the
parts import accepts, narrowed only where a value would be absurd for any real part.
All parts are invented.
"""

from __future__ import annotations

import warnings

import numpy as np
from hypothesis import HealthCheck, Phase, example, given, settings
from hypothesis import strategies as st

from selector.physics.circuit import solve_operating_points, solve_stack_corners
from selector.physics.operating_point_scan import scan_operating_points
from selector.physics.partset import PartSet
from selector.physics.self_heating import self_heated_element, stack_voltage
from selector.physics.solver_settings import STATUS_NAMES, STATUS_NOT_CONVERGED, STATUS_SOLVED
from selector.search.element_bounds import voltage_range_fixed_current
from selector.spec.part_fields import MAX_KNEE_EXPONENT as MAX_KNEE

CASES = settings(max_examples=2000, deadline=None, suppress_health_check=[HealthCheck.too_slow],
                 phases=[Phase.explicit, Phase.generate])
POINTS = 32
#: Acceptance of a solved point: the KCL residual [V] (1 nV).
RESIDUAL_LIMIT_V = 1e-9


def _log_uniform(low: float, high: float):
    return st.floats(min_value=np.log10(low), max_value=np.log10(high)).map(lambda e: float(10.0**e))


_FORWARD = st.fixed_dictionaries({
    "family": st.sampled_from(["signal", "rectifier", "schottky", "led"]),
    "is_a": _log_uniform(1e-20, 1e-4), "n": st.floats(1.0, 4.0), "rs_ohm": st.floats(0.0, 50.0),
    "eg_ev": st.floats(0.5, 3.5), "xti": st.floats(-5.0, 10.0), "tnom_c": st.floats(-20.0, 80.0),
    "vf_tol_v": st.floats(0.0, 0.1), "tc_tol_v_per_k": st.floats(0.0, 2e-3), "pd_w": _log_uniform(0.01, 50.0),
    "tj_max_c": st.floats(100.0, 200.0),
})  # fmt: skip
_ZENER = st.fixed_dictionaries({
    "family": st.just("zener"), "vz_v": st.floats(1.5, 200.0), "izt_a": _log_uniform(1e-4, 0.5),
    "zzt_ohm": st.floats(0.2, 200.0), "knee_ratio": st.floats(0.01, 0.5), "knee_exponent": st.floats(0.0, MAX_KNEE),
    "vz_tol_pct": st.floats(0.0, 10.0), "tc_v_per_k": st.floats(-0.01, 0.05), "tc_tol_v_per_k": st.floats(0.0, 5e-3),
    "pd_w": _log_uniform(0.05, 50.0), "tj_max_c": st.floats(100.0, 200.0),
})  # fmt: skip


def _record(index: int, drawn: dict) -> dict:
    record = {"part": f"RB-{index}", **drawn}
    if record["family"] == "zener":
        ratio = record.pop("knee_ratio")
        record["izk_a"] = record["izt_a"] * ratio
        # zzk from the knee exponent m (DESIGN §3: zzk = zzt·(izt/izk)^m), within the import's limit.
        record["zzk_ohm"] = record["zzt_ohm"] * ratio ** -record.pop("knee_exponent")
    return record


@st.composite
def problems(draw):
    parts = [_record(i, draw(st.one_of(_FORWARD, _ZENER))) for i in range(draw(st.integers(1, 4)))]
    seed = draw(st.integers(0, 2**32 - 1))
    return parts, seed


# Regression corpus: cases this property found, replayed on every run.
#: The safeguarded solver once overflowed in a division (junction iterates grew without
#: bound; now capped at self_heating.JUNCTION_CEILING_C).
_OVERFLOW_CASE = ([{"part": "RB-0", "family": "signal", "is_a": 1e-08, "n": 1.0, "rs_ohm": 0.0, "eg_ev": 1.0,
                    "xti": -5.0, "tnom_c": 0.0, "vf_tol_v": 0.0, "pd_w": 0.01, "tj_max_c": 127.0}], 0)  # fmt: skip
#: The margin of a zener at an ambient above its Tjmax (no allowed power) once overflowed
#: in the safeguarded solver.
_NO_ALLOWED_POWER_CASE = ([{"part": "RB-0", "family": "zener", "vz_v": 22.230960856320575,
                            "izt_a": 0.4641588833612779, "zzt_ohm": 126.58472031137808,
                            "izk_a": 0.22859281811918286, "zzk_ohm": 1690.530248854493,
                            "vz_tol_pct": 5.374719725382816, "tc_v_per_k": 0.01755854072772526,
                            "pd_w": 0.4641588833612779, "tj_max_c": 126.58472031137808}], 789402)  # fmt: skip
#: At 23 A the element detail's junction Newton stuck at the ambient (loop gain above 1
#: there) while the solver settled the junction at 1e6 °C; a junction past the ceiling is
#: now runaway in both, and the detail brackets its junction.
_LOOP_GAIN_AT_AMBIENT_CASE = ([{"part": "RB-0", "family": "led", "is_a": 1e-20, "n": 2.4837260266401318,
                                "rs_ohm": 1.8470776088336476, "eg_ev": 2.678705445650656,
                                "xti": 6.884147127038865, "tnom_c": 9.102118720435715,
                                "vf_tol_v": 2.220446049250313e-16, "pd_w": 0.17183464308884266,
                                "tj_max_c": 199.99999999999997}], 0)  # fmt: skip

#: A knee exponent within 1e-12 of 1 (zzk/zzt = izt/izk): the fast path once wrote the
#: curve as c/q·x^q + (vz − c/q), whose huge terms cancel to a 0.1 mV error; now expm1.
_KNEE_NEAR_ONE_CASE = ([{"part": "RB-0", "family": "zener", "vz_v": 12.644321102428371, "izt_a": 0.12786862277179029,
                         "zzt_ohm": 0.99999, "izk_a": 0.043396805428564986, "zzk_ohm": 2.9464690504936737,
                         "vz_tol_pct": 2.6476140877743353, "tc_v_per_k": 0.018567751414182314,
                         "tc_tol_v_per_k": 0.0031363141033553337, "pd_w": 0.12786862277179029,
                         "tj_max_c": 105.01782798167471}], 1)  # fmt: skip

#: An LED whose tempco is positive near the ambient and negative when hot (xti 9, eg 0.74):
#: the per-element junction solve from Ta once ended on a false runaway at 47 °C where the
#: stack's steady state is 1094 °C.
_TEMPCO_SIGN_CHANGE_CASE = ([{"part": "RB-0", "family": "led", "is_a": 1e-20, "n": 1.0, "rs_ohm": 1e-09,
                              "eg_ev": 0.7358602534748728, "xti": 9.0, "vf_tol_v": 0.011045442794324692,
                              "tnom_c": -19.327882858828385, "tc_tol_v_per_k": 0.0, "pd_w": 0.14010580996580269,
                              "tj_max_c": 100.0}], 1)  # fmt: skip


def _random_points(rng, part_count: int):
    """POINTS random stacks of up to four of the parts and their conditions: stacks, supply,
    resistor, ambient, tolerance sign, load current and load conductance."""
    stacks = rng.integers(-1, part_count, size=(POINTS, 4))
    stacks[:, 0] = rng.integers(0, part_count, size=POINTS)  # at least one element
    supply = 10.0 ** rng.uniform(-0.5, 2.5, POINTS)
    resistor = 10.0 ** rng.uniform(0.0, 7.0, POINTS)
    ambient = rng.uniform(-55.0, 150.0, POINTS)
    sign = rng.choice([-1.0, 0.0, 1.0], POINTS)
    load = np.where(rng.random(POINTS) < 0.5, 0.0, 10.0 ** rng.uniform(-6, -1, POINTS))
    conductance = np.where(rng.random(POINTS) < 0.7, 0.0, 1.0 / 10.0 ** rng.uniform(1, 6, POINTS))
    return stacks, supply, resistor, ambient, sign, load, conductance


@CASES
@given(problem=problems())
@example(problem=_OVERFLOW_CASE)
@example(problem=_NO_ALLOWED_POWER_CASE)
@example(problem=_LOOP_GAIN_AT_AMBIENT_CASE)
@example(problem=_KNEE_NEAR_ONE_CASE)
@example(problem=_TEMPCO_SIGN_CHANGE_CASE)
def test_random_valid_points_are_solved_within_1_nV_or_flagged_with_a_reason(problem):
    records, seed = problem
    parts = PartSet.from_records(records)
    stacks, supply, resistor, ambient, sign, load, conductance = _random_points(np.random.default_rng(seed), len(records))
    with warnings.catch_warnings(), np.errstate(all="raise", under="ignore"):
        warnings.simplefilter("error")
        points = solve_operating_points(parts, stacks, supply, resistor, ambient, sign, load, conductance, detail=True)
    for name in ("vout_v", "stack_current_a", "load_current_a", "resistor_power_w", "kcl_residual_v",
                 "hottest_junction_c", "junction_c"):  # fmt: skip
        assert not np.isnan(getattr(points, name)).any(), name
    solved = points.status == STATUS_SOLVED
    # 1 nV, or where that is below the rounding of the circuit equation's own terms, what
    # double precision resolves (selector.physics.circuit.OperatingPoints.kcl_tolerance_v).
    limit = np.maximum(RESIDUAL_LIMIT_V, points.kcl_tolerance_v)
    assert np.all(np.abs(points.kcl_residual_v[solved]) <= limit[solved])
    # At most a microvolt of rail: F carries the stack voltage times the load gain 1 + R·G_L.
    gain = 1.0 + resistor * conductance
    assert np.all(points.kcl_tolerance_v[solved] <= 1e-6 * gain[solved])
    assert np.all(points.stack_current_a[solved] > 0)
    assert all(STATUS_NAMES[code] for code in points.status[~solved])
    assert not np.isnan(points.worst_element_margin[solved]).any()
    # The reported hottest junction is the hottest element's, each element solved on its own
    # (selector.physics.self_heating.self_heated_element).
    hottest = np.where(stacks >= 0, points.junction_c, -np.inf).max(axis=1)
    np.testing.assert_allclose(points.hottest_junction_c[solved], hottest[solved], rtol=0, atol=1e-3)


def test_stack_bounds_at_absurd_currents_give_no_warning():
    # Currents far past any power limit once put the junction below 0 K in the bounds.
    parts = PartSet.from_records([
        {"part": "RB-D", "family": "signal", "is_a": 1e-9, "n": 1.8, "vf_tol_v": 0.05, "pd_w": 0.5},
        {"part": "RB-Z", "family": "zener", "vz_v": 5.1, "izt_a": 5e-3, "zzt_ohm": 10, "izk_a": 1e-4,
         "zzk_ohm": 500, "pd_w": 0.5},
    ])  # fmt: skip
    current = np.array([1e3, 1e6, 1e9, 1e3, 1e9])
    with warnings.catch_warnings(), np.errstate(all="raise", under="ignore"):
        warnings.simplefilter("error")
        low, high = voltage_range_fixed_current(parts, np.array([0, 0, 0, 1, 1]), current, 25.0, 150.0, 1.0)
    assert not np.isnan(low).any() and not np.isnan(high).any()


def _random_record(rng, index: int) -> dict:
    """One invented parameter set over the ranges of the property above."""
    def log_uniform(low, high):
        return float(10.0 ** rng.uniform(np.log10(low), np.log10(high)))

    if rng.random() < 0.5:
        return {"part": f"RC-{index}", "family": str(rng.choice(["signal", "rectifier", "schottky", "led"])),
                "is_a": log_uniform(1e-20, 1e-4), "n": rng.uniform(1.0, 4.0), "rs_ohm": rng.uniform(0.0, 50.0),
                "eg_ev": rng.uniform(0.5, 3.5), "xti": rng.uniform(-5.0, 10.0), "tnom_c": rng.uniform(-20.0, 80.0),
                "vf_tol_v": rng.uniform(0.0, 0.1), "tc_tol_v_per_k": rng.uniform(0.0, 2e-3),
                "pd_w": log_uniform(0.01, 50.0), "tj_max_c": rng.uniform(100.0, 200.0)}
    izt, zzt, ratio = log_uniform(1e-4, 0.5), rng.uniform(0.2, 200.0), rng.uniform(0.01, 0.5)
    return {"part": f"RC-{index}", "family": "zener", "vz_v": rng.uniform(1.5, 200.0), "izt_a": izt, "zzt_ohm": zzt,
            "izk_a": izt * ratio, "zzk_ohm": zzt * ratio ** -rng.uniform(0.0, MAX_KNEE),
            "vz_tol_pct": rng.uniform(0.0, 10.0), "tc_v_per_k": rng.uniform(-0.01, 0.05),
            "tc_tol_v_per_k": rng.uniform(0.0, 5e-3), "pd_w": log_uniform(0.05, 50.0),
            "tj_max_c": rng.uniform(100.0, 200.0)}  # fmt: skip


def test_few_random_points_end_as_not_converged():
    # A census over 300 seeded problems of the property's ranges (9,600 points). "Did not
    # converge" is left next to runaway. Measured with the version-2 zener model: 2 points
    # here (0.02 %); 39 (0.41 %) before the settled second pass and the bracket-width
    # acceptance, 110 (1.1 %) before a closed bracket accepted the residual that double
    # precision resolves behind a load gain 1 + R/R_L of thousands. The bound of 0.1 %
    # catches a return of either.
    rng = np.random.default_rng(20261202)
    counts = np.zeros(len(STATUS_NAMES), dtype=int)
    for _ in range(300):
        records = [_random_record(rng, i) for i in range(rng.integers(1, 5))]
        parts = PartSet.from_records(records)
        points = solve_operating_points(parts, *_random_points(rng, len(records)))
        counts += np.bincount(points.status, minlength=len(STATUS_NAMES))
    assert counts[STATUS_NOT_CONVERGED] <= 0.001 * counts.sum(), dict(zip(STATUS_NAMES, counts.tolist(), strict=True))
    assert counts[STATUS_SOLVED] >= 0.3 * counts.sum()


def _well_posed(parts, stack, supply, resistor, ambient, sign, load, conductance) -> bool:
    """One stable operating point, no runaway at it and every loop gain below 1: a point
    the solver must solve (an independent scan of the exact circuit equation)."""
    scan = scan_operating_points(parts, stack, *(np.array([value]) for value in (
        supply, resistor, ambient, sign, load, conductance)))  # fmt: skip
    if scan.roots_a[0].size != 1 or scan.unstable_a[0].size:
        return False
    root = scan.roots_a[0][0]
    currents = root * np.array([1.0 - 1e-6, 1.0, 1.0 + 1e-6])
    _, runaway = stack_voltage(parts, np.repeat(stack[None], 3, axis=0), currents, ambient, sign)
    elements = stack[stack >= 0]
    state = self_heated_element(parts, elements, np.full(elements.size, np.log(root)), np.full(elements.size, ambient),
                                sign)  # fmt: skip
    return not (runaway.any() or state.runaway.any() or (state.loop_gain >= 1.0).any())


def test_stack_corners_census_solves_every_well_posed_point():
    # A census of solve_stack_corners over 200 seeded problems of the property's ranges
    # (8 stacks × 32 corners each, 51,200 points). Measured: 194 points ended as "did not
    # converge" before the settled second pass and the bracket-width acceptance, 61 of them
    # well-posed (one root, loop gain below 1); now 1, at the edge of thermal runaway.
    rng = np.random.default_rng(20261203)
    counts = np.zeros(len(STATUS_NAMES), dtype=int)
    stuck = []
    for _ in range(200):
        records = [_random_record(rng, i) for i in range(rng.integers(1, 5))]
        parts = PartSet.from_records(records)
        stacks = rng.integers(-1, len(records), size=(8, 4))
        stacks[:, 0] = rng.integers(0, len(records), 8)
        stacks = np.sort(np.where(stacks < 0, 99, stacks), axis=1)
        stacks[stacks == 99] = -1
        shape = (8, 32)
        supply = 10.0 ** rng.uniform(-0.5, 2.5, shape)
        resistor = np.repeat(10.0 ** rng.uniform(0.0, 7.0, (8, 1)), 32, axis=1)
        ambient = rng.uniform(-55.0, 150.0, shape)
        sign = rng.choice([-1.0, 0.0, 1.0], shape)
        load = np.where(rng.random(shape) < 0.5, 0.0, 10.0 ** rng.uniform(-6, -1, shape))
        conductance = np.where(rng.random(shape) < 0.7, 0.0, 1.0 / 10.0 ** rng.uniform(1, 6, shape))
        conditions = (supply, resistor, ambient, sign, load, conductance)
        points = solve_stack_corners(parts, stacks, *conditions)
        counts += np.bincount(points.status.ravel(), minlength=len(STATUS_NAMES))
        for row, corner in zip(*np.nonzero(points.status == STATUS_NOT_CONVERGED), strict=True):
            if _well_posed(parts, stacks[row], *(value[row, corner] for value in conditions)):
                stuck.append((records, stacks[row].tolist(), [float(value[row, corner]) for value in conditions]))
    assert stuck == []
    assert counts[STATUS_NOT_CONVERGED] <= 10, dict(zip(STATUS_NAMES, counts.tolist(), strict=True))
