"""Corners, contract metrics and design metrics. All part data here is invented."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from selector.physics import corners as corners_module
from selector.physics.circuit import solve_operating_points, solve_stack_corners
from selector.physics.corners import (
    REASON_NAMES,
    evaluate_designs,
    nominal_point,
    worst_case_corners,
)
from selector.physics.design_metrics import design_metrics, smallest_standard_rating_w
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec

INVENTED_PARTS = [
    dict(part="INV-SIG", family="signal", is_a=2e-9, n=1.9, rs_ohm=0.6, vf_tol_v=0.02, pd_w=0.4, if_max_a=0.2),
    dict(part="INV-Z5V1", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=12, izk_a=2.5e-4, zzk_ohm=500,
         vz_tol_pct=5, tc_v_per_k=1.5e-3, pd_w=0.5),
    # invented: a zener without TC and with negligible self-heating, for small-signal checks
    dict(part="INV-ZCOOL", family="zener", vz_v=6.2, izt_a=10e-3, zzt_ohm=6, izk_a=1e-3, zzk_ohm=40, pd_w=1e9),
]  # fmt: skip


@pytest.fixture
def parts() -> PartSet:
    return PartSet.from_records(INVENTED_PARTS)


def make_spec(**changes) -> RailSpec:
    values = dict(
        target_v=6.0, tolerance_v=0.3, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
        load_kind="current", load_min=0.0, load_max=2e-3, ambient_min_c=0.0, ambient_max_c=60.0,
    )  # fmt: skip
    values.update(changes)
    return RailSpec(**values)


def test_corner_order_and_values():
    corners = worst_case_corners(make_spec())
    assert len(corners) == 32
    assert corners.labels[0] == "Vin min, load least, Ta min, R low, parts low"
    assert corners.labels[31] == "Vin max, load most, Ta max, R high, parts high"
    assert corners.supply_v[:16].tolist() == [11.0] * 16 and corners.supply_v[16:].tolist() == [13.0] * 16
    assert corners.tolerance_sign[:2].tolist() == [-1.0, 1.0]
    assert corners.resistor_factor[:4].tolist() == [0.99, 0.99, 1.01, 1.01]
    assert corners.load_current_a[8] == 2e-3 and corners.load_current_a[0] == 0.0
    assert len(set(corners.labels)) == 32


def test_resistive_load_least_current_at_largest_resistance():
    corners = worst_case_corners(make_spec(load_kind="resistance", load_min=1e3, load_max=10e3))
    assert corners.load_conductance_s[0] == pytest.approx(1e-4)
    assert corners.load_conductance_s[8] == pytest.approx(1e-3)
    assert not corners.load_current_a.any()
    nominal = nominal_point(make_spec(load_kind="resistance", load_min=1e3, load_max=10e3))
    assert nominal.load_conductance_s[0] == pytest.approx(1 / 5500.0)  # midpoint in ohms


def test_metrics_follow_the_contract_from_the_corner_solutions(parts):
    spec = make_spec()
    stacks = np.array([[0, 1], [1, -1], [0, 0]])
    resistor = np.array([470.0, 470.0, 10.0])
    ev = evaluate_designs(parts, stacks, resistor, spec, detail=True)
    corners = worst_case_corners(spec)
    for design in range(3):
        # The corner solutions of this one design, by the solve evaluate_designs uses (its
        # agreement with the point-by-point solve is tested below and in test_circuit).
        solution = solve_stack_corners(
            parts, stacks[design : design + 1], corners.supply_v,
            resistor[design] * corners.resistor_factor, corners.ambient_c, corners.tolerance_sign,
            corners.load_current_a, corners.load_conductance_s, detail=True,
        )  # fmt: skip
        op = SimpleNamespace(**{name: value[0] for name, value in vars(solution).items() if value is not None})
        np.testing.assert_allclose(ev.vout_v[design], op.vout_v, atol=1e-12)
        assert ev.vout_low_v[design] == pytest.approx(op.vout_v.min(), abs=1e-12)
        error = max(abs(op.vout_v.max() - 6.0), abs(op.vout_v.min() - 6.0))
        assert ev.error_v[design] == pytest.approx(error, abs=1e-12)
        assert ev.i_min_a[design] == pytest.approx(op.stack_current_a.min(), rel=1e-12)
        p_max = np.minimum(parts.pd_w[stacks[design]], (150.0 - corners.ambient_c[:, None]) / parts.theta_ja_k_per_w[stacks[design]])
        element = np.where(stacks[design] >= 0, 1 - op.element_power_w / p_max, 1.0)
        np.testing.assert_allclose(ev.element_margin[design], element, atol=1e-9)
        p_r = (resistor[design] * corners.resistor_factor) * (op.stack_current_a + op.load_current_a) ** 2
        assert ev.resistor_power_w[design].max() == pytest.approx(p_r.max(), rel=1e-12)
        margin = min(ev.element_margin[design].min(), 1 - p_r.max() / 0.25)
        assert ev.margin[design] == pytest.approx(margin, abs=1e-9)
    assert ev.feasible.tolist() == [True, True, False]
    assert ev.meets.tolist() == [False, False, False]
    assert ev.reason_name(2) == "dissipation"
    assert REASON_NAMES[ev.reason[0]] == "ok"


def test_bias_and_current_limit_reasons(parts):
    spec = make_spec(min_current_a=50e-3)
    ev = evaluate_designs(parts, np.array([[0, 1]]), np.array([470.0]), spec)
    assert ev.reason_name(0) == "bias" and not ev.feasible[0]
    spec = make_spec(resistor_rating_w=100.0, target_v=2.0)
    # 2 forward parts, 33 Ω from 13 V: about 0.34 A, over the 0.2 A limit, under the margin.
    parts_cool = PartSet.from_records([dict(INVENTED_PARTS[0], pd_w=1e6)])
    ev = evaluate_designs(parts_cool, np.array([[0, 0]]), np.array([33.0]), spec)
    assert ev.reason_name(0) == "current limit"


def test_unsolvable_design_is_named_no_solution(parts):
    # 0.2 A of load through 100 Ω needs 20 V: the load takes all that 11–13 V can give.
    ev = evaluate_designs(parts, np.array([[0, -1]]), np.array([100.0]), make_spec(load_max=0.2))
    assert ev.reason_name(0) == "no solution"
    assert not ev.solved[0] and np.isinf(ev.error_v[0])


def test_a_stack_that_is_off_is_solved_and_the_feasibility_rules_decide(parts):
    # Five INV-ZCOOL (knee exponent ln(40/6)/ln 10 < 1, so about 5.9 V each even at no
    # current) cannot conduct from 13 V: every corner is off, its rail what the supply and
    # load make (DESIGN §3), and its bias (izk = 1 mA) fails.
    ev = evaluate_designs(parts, np.array([[2, 2, 2, 2, 2]]), np.array([1000.0]), make_spec(load_max=0.0))
    assert ev.solved[0] and ev.corner_solved[0].all() and (ev.stack_current_a[0] == 0).all()
    corners = worst_case_corners(make_spec(load_max=0.0))
    np.testing.assert_allclose(ev.vout_v[0], corners.supply_v, rtol=1e-14)
    assert ev.reason_name(0) == "bias" and not ev.feasible[0]


def test_small_signal_relations_of_a_shunt_regulator(parts):
    # Textbook shunt-regulator relations (common practice, no source): line regulation
    # dVout/dVin = rz/(R + rz), load regulation dVout/dI_L = −(rz ‖ R), with rz the
    # zener's dynamic resistance zzt·(I/izt)^(−m) at the operating current (DESIGN §3 v2).
    spec = make_spec(target_v=6.2, load_min=0.0, load_max=2e-3, ambient_min_c=25.0, ambient_max_c=25.0)
    resistor = 330.0
    metrics = design_metrics(parts, np.array([2]), resistor, spec)
    current = metrics.evaluation.nominal["stack_current_a"][0]
    rz = parts.zzt_ohm[2] * (current / parts.izt_a[2]) ** -parts.zener_knee_exponent[2]
    assert metrics.line_regulation_mv_per_v == pytest.approx(1e3 * rz / (resistor + rz), rel=1e-4)
    assert metrics.load_regulation_mv_per_ma == pytest.approx(-(rz * resistor) / (rz + resistor), rel=1e-4)
    assert metrics.ripple_attenuation_db == pytest.approx(-20 * np.log10(rz / (resistor + rz)), rel=1e-4)
    assert metrics.tempco_mv_per_k == pytest.approx(0.0, abs=1e-6)


def test_design_metrics_thermal_and_resistor_figures(parts):
    metrics = design_metrics(parts, np.array([0, 1]), 470.0, make_spec(), resistor_derating=0.5)
    ev = metrics.evaluation
    assert metrics.hottest_junction_c == pytest.approx(ev.junction_c[0].max())
    assert ev.corner_solved[0].all()
    assert metrics.resistor_worst_power_w == pytest.approx(ev.resistor_power_w[0].max())
    assert metrics.resistor_rating_needed_w == smallest_standard_rating_w(metrics.resistor_worst_power_w / 0.5)
    assert 0 < metrics.efficiency < 1
    assert metrics.element_worst_margin.shape == (2,)


def test_standard_rating_steps():
    assert smallest_standard_rating_w(0.2) == 0.25
    assert smallest_standard_rating_w(0.2, derating=0.5) == 0.5
    assert smallest_standard_rating_w(20.0) is None


def _point_by_point_stack_corners(parts, stacks, *conditions, detail=False):
    """The former evaluation path: every (design, corner) as its own point of solve_operating_points."""
    corners = np.broadcast_shapes(*(np.shape(c) for c in conditions))[1]
    grid = (stacks.shape[0], corners)
    flat = [np.broadcast_to(c, grid).reshape(-1) for c in conditions]
    points = solve_operating_points(parts, np.repeat(stacks, corners, axis=0), *flat, detail=detail)
    fields = {name: value.reshape(*grid, *value.shape[1:]) for name, value in vars(points).items() if value is not None}
    return type(points)(**fields)


@pytest.mark.parametrize("spec_changes", [{}, dict(load_kind="resistance", load_min=2e3, load_max=20e3, ambient_max_c=85.0)])
def test_stack_major_evaluation_equals_the_point_by_point_path(parts, monkeypatch, spec_changes):
    rng = np.random.default_rng(41)
    count = 400
    stacks = rng.integers(-1, 3, (count, 3))
    stacks[:, 0] = rng.integers(0, 3, count)
    resistor = rng.uniform(20.0, 3000.0, count)
    spec = make_spec(**spec_changes)
    with np.errstate(all="raise"):
        new = evaluate_designs(parts, stacks, resistor, spec, detail=True)
        monkeypatch.setattr(corners_module, "solve_stack_corners", _point_by_point_stack_corners)
        old = evaluate_designs(parts, stacks, resistor, spec, detail=True)
    assert new.feasible.any() and not new.feasible.all()  # both outcomes are covered
    for name in ("feasible", "meets", "solved", "reason", "corner_solved"):
        np.testing.assert_array_equal(getattr(new, name), getattr(old, name), err_msg=name)
    # Both paths stop at |KCL| <= 0.1 nV from different starts, so they agree to the
    # tolerances of the fast path against the safeguarded solver (test_circuit): voltages to
    # 1 nV, currents to 1e-8 relative (or 1 fA), junctions to 1 µK.
    for name, rtol, atol in (("vout_nom_v", 0, 1e-9), ("vout_low_v", 0, 1e-9), ("vout_high_v", 0, 1e-9),
                             ("vout_v", 0, 1e-9), ("error_v", 0, 1e-9), ("margin", 0, 1e-9), ("i_min_a", 1e-8, 1e-15),
                             ("stack_current_a", 1e-8, 1e-15), ("load_current_a", 1e-8, 1e-15),
                             ("resistor_power_w", 2e-8, 1e-15), ("hottest_junction_c", 0, 1e-6), ("junction_c", 0, 1e-6),
                             ("element_power_w", 2e-8, 1e-15), ("element_margin", 0, 1e-9)):  # fmt: skip
        np.testing.assert_allclose(getattr(new, name), getattr(old, name), rtol=rtol, atol=atol, err_msg=name)
    for name, value in old.nominal.items():
        np.testing.assert_allclose(new.nominal[name], value, rtol=1e-8, atol=1e-9, err_msg=name)


#: An invented 3.6 V zener with a strongly negative TC and much thermal resistance: with a
#: few ohms in series it has two stable operating points (a thermal latch) — about 38 mA,
#: and near 2 A where heating has pulled its voltage down (found by scanning F).
LATCH_ZENER = dict(part="INV-LATCH", family="zener", vz_v=3.65, izt_a=5e-3, zzt_ohm=52.0, izk_a=5e-4, zzk_ohm=420.0,
                   tc_v_per_k=-4.2e-3, theta_ja_k_per_w=420.0, pd_w=0.5)  # fmt: skip


def test_a_thermal_latch_takes_the_operating_point_from_zero_current_and_is_flagged():
    from selector.physics.operating_point_scan import scan_operating_points
    from selector.views.check_view import design_cautions

    parts = PartSet.from_records([LATCH_ZENER])
    spec = make_spec(target_v=3.9, tolerance_v=0.3, supply_min_v=4.0, supply_max_v=4.02, supply_nominal_v=4.01,
                     load_max=0.0, ambient_min_c=25.0, ambient_max_c=25.0, resistor_tolerance=0.001)  # fmt: skip
    metrics = design_metrics(parts, np.array([0]), 1.3, spec)
    scan = metrics.operating_points
    assert metrics.latch_corners.size == 32 and metrics.off_lowest_root_corners.size == 0
    for corner in range(32):
        low, high = scan.roots_a[corner]
        # The solver's is the lowest root: the scan's, found independently by bisection.
        assert metrics.evaluation.stack_current_a[0, corner] == pytest.approx(low, rel=1e-6)
        assert 0.03 < low < 0.05 and high > 1.0 and scan.unstable_a[0].size == 1
    # Both points satisfy KCL (DESIGN §3 circuit equation), each element at its own junction.
    from selector.physics.self_heating import stack_voltage

    for current in scan.roots_a[0]:
        voltage, _ = stack_voltage(parts, np.array([[0]]), current, 25.0, -1.0)
        corner = worst_case_corners(spec)
        assert corner.supply_v[0] - 1.3 * corner.resistor_factor[0] * current - voltage[0] == pytest.approx(0, abs=1e-9)
    from selector.physics.checked_design import CheckedDesign

    design = CheckedDesign(spec, parts, np.array([0]), 1.3, False, metrics)
    assert any(line.startswith("several operating points at corners 1–32 (a thermal latch)") for line in
               design_cautions(design))  # fmt: skip
    assert scan_operating_points(parts, np.array([0]), [4.0], [1.3], [25.0], [-1.0], [0.0], [0.0]).several().size == 1


def test_a_microampere_design_keeps_its_regulation_and_efficiency():
    # A design biased at about 1 µA: the load step of the linearisation scales with the
    # stack current, so it stays conducting. Shunt relations as above, with r_d = n·Vt/I
    # for a diode without series resistance (common practice, no source).
    from selector.physics.devices import thermal_voltage_v

    cool = PartSet.from_records([dict(part="INV-UA", family="signal", is_a=2e-12, n=1.5, rs_ohm=0.0, pd_w=1e6)])
    spec = make_spec(target_v=0.4, tolerance_v=0.2, load_min=0.1e-6, load_max=0.3e-6, ambient_min_c=25.0,
                     ambient_max_c=25.0)  # fmt: skip
    resistor = 10e6
    metrics = design_metrics(cool, np.array([0]), resistor, spec)
    current = metrics.evaluation.nominal["stack_current_a"][0]
    assert 0.5e-6 < current < 1.5e-6
    r_d = 1.5 * thermal_voltage_v(25.0) / current
    assert metrics.load_regulation_mv_per_ma == pytest.approx(-(r_d * resistor) / (r_d + resistor), rel=1e-3)
    assert metrics.line_regulation_mv_per_v == pytest.approx(1e3 * r_d / (resistor + r_d), rel=1e-3)
    vout = metrics.evaluation.vout_nom_v[0]
    load = 0.2e-6
    assert metrics.efficiency == pytest.approx(vout * load / (12.0 * (current + load)), rel=1e-6)
