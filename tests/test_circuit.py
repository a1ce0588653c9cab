"""Circuit solver against closed forms and plain reference solves. All part data here is invented."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import wrightomega

from selector.physics import circuit, fast_newton
from selector.physics.circuit import solve_operating_points
from selector.physics.devices import thermal_voltage_v
from selector.physics.partset import PartSet
from selector.physics.self_heating import JUNCTION_CEILING_C, self_heated_element, stack_voltage
from selector.physics.slot_layout import family_slots
from selector.physics.solver_settings import (
    STATUS_RUNAWAY,
    STATUS_SOLVED,
    STATUS_STACK_OFF,
    STATUS_SUPPLY_EXHAUSTED,
)

INVENTED_PARTS = [
    # invented: a diode with negligible self-heating, for closed-form checks
    dict(part="INV-COOL", family="signal", is_a=1e-14, n=1.0, pd_w=1e9, tj_max_c=150.0),
    # invented: ordinary parts with self-heating
    dict(part="INV-SIG", family="signal", is_a=2e-9, n=1.9, rs_ohm=0.6, vf_tol_v=0.02, pd_w=0.4),
    dict(part="INV-Z5V1", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=12, izk_a=2.5e-4, zzk_ohm=500,
         vz_tol_pct=5, tc_v_per_k=1.5e-3, pd_w=0.5),
    dict(part="INV-REC", family="rectifier", is_a=5e-9, n=1.8, rs_ohm=0.05, pd_w=1.0),
    # invented: a zener with negligible self-heating and no TC, for small-signal checks
    dict(part="INV-ZCOOL", family="zener", vz_v=6.2, izt_a=10e-3, zzt_ohm=6, izk_a=1e-3, zzk_ohm=40,
         pd_w=1e9, tj_max_c=150.0),
]  # fmt: skip


@pytest.fixture
def parts() -> PartSet:
    return PartSet.from_records(INVENTED_PARTS)


def test_single_diode_against_lambert_w_closed_form_1nA_to_1A(parts):
    # Banwell & Jayakumar, "Exact analytical solution for current flow through diode with
    # series resistance", Electronics Letters 36(4):291–292, 2000:
    # I = (n·Vt/R)·W((Is·R/(n·Vt))·exp((V + Is·R)/(n·Vt))) − Is, evaluated with the Wright
    # omega function, W(exp(z)) = ω(z), where lambertw's argument would overflow.
    resistor, is_a, vt = 100.0, 1e-14, float(thermal_voltage_v(25.0))
    wanted = np.logspace(-9, 0, 19)
    supply = resistor * wanted + vt * np.log1p(wanted / is_a)
    z = np.log(is_a * resistor / vt) + (supply + is_a * resistor) / vt
    closed_form = vt / resistor * np.real(wrightomega(z)) - is_a
    np.testing.assert_allclose(closed_form, wanted, rtol=1e-9)
    with np.errstate(all="raise"):
        op = solve_operating_points(parts, np.zeros((19, 1), dtype=int), supply, resistor, 25.0, 0.0)
    assert np.all(op.status == STATUS_SOLVED)
    # θ = 125 K/GW here, so self-heating shifts V by < 1 nV up to 1 A.
    np.testing.assert_allclose(op.stack_current_a, closed_form, rtol=2e-8)
    vout_closed = supply - resistor * closed_form
    np.testing.assert_allclose(op.vout_v, vout_closed, rtol=0, atol=2e-6)


def _brentq_vout(parts, stack, supply, resistor, ambient, sign, load_a, conductance):
    def residual(current):
        v, _ = stack_voltage(parts, stack[None, :], current, ambient, sign)
        return supply - resistor * (current + load_a + conductance * v[0]) - v[0]

    current = brentq(residual, 1e-15, supply / resistor, xtol=1e-18, rtol=1e-14, maxiter=500)
    return stack_voltage(parts, stack[None, :], current, ambient, sign)[0][0], current


@pytest.mark.parametrize(
    "stack, supply, resistor, ambient, sign, load_a, conductance",
    [
        ([1, 2, -1], 12.0, 470.0, 25.0, 1.0, 1e-3, 0.0),
        ([2, 2, 3], 24.0, 220.0, 85.0, -1.0, 5e-3, 0.0),
        ([1, 1, 1], 5.0, 100.0, -40.0, 1.0, 0.0, 1 / 2200.0),
        ([3, -1, -1], 3.3, 10.0, 125.0, 0.0, 0.0, 1 / 50.0),
    ],
)
def test_matches_independent_brentq_solve_with_self_heating(parts, stack, supply, resistor, ambient, sign, load_a, conductance):
    # Reference: scipy.optimize.brentq on the scalar KCL equation, each element's junction
    # solved separately at every trial current.
    stack = np.array(stack)
    vout, current = _brentq_vout(parts, stack, supply, resistor, ambient, sign, load_a, conductance)
    op = solve_operating_points(parts, stack[None, :], supply, resistor, ambient, sign, load_a, conductance)
    assert op.status[0] == STATUS_SOLVED
    assert op.vout_v[0] == pytest.approx(vout, abs=1e-9)
    assert op.stack_current_a[0] == pytest.approx(current, rel=1e-7)


def test_kcl_residual_below_1nV_and_junctions_at_steady_state_within_1mK(parts):
    rng = np.random.default_rng(7)
    count = 3000
    stacks = rng.integers(-1, 4, (count, 4))
    stacks[:, 0] = rng.integers(1, 4, count)
    supply = rng.uniform(5, 30, count)
    resistor = rng.uniform(100, 3000, count)
    ambient = rng.uniform(-55, 125, count)
    sign = rng.choice([-1.0, 0.0, 1.0], count)
    load = rng.uniform(0, 2e-3, count)
    with np.errstate(all="raise"):
        op = solve_operating_points(parts, stacks, supply, resistor, ambient, sign, load, detail=True)
    ok = op.conducting
    assert ok.mean() > 0.8
    exact, _ = stack_voltage(parts, stacks[ok], op.stack_current_a[ok], ambient[ok], sign[ok])
    kcl = supply[ok] - resistor[ok] * (op.stack_current_a[ok] + op.load_current_a[ok]) - exact
    assert np.max(np.abs(kcl)) <= 1e-9
    rows, slots = np.nonzero((stacks >= 0) & ok[:, None])
    theta = parts.theta_ja_k_per_w[stacks[rows, slots]]
    heat = theta * op.element_power_w[rows, slots]
    assert np.max(np.abs(op.junction_c[rows, slots] - ambient[rows] - heat)) <= 1e-3
    # Every other point is a stack that cannot conduct from this supply: off, with its rail
    # the supply itself through R (DESIGN §3; Ohm's law, no stack current).
    off = ~ok
    assert np.all(op.status[off] == STATUS_STACK_OFF)
    np.testing.assert_allclose(op.vout_v[off], supply[off] - resistor[off] * load[off], rtol=1e-12)
    assert np.all(op.stack_current_a[off] == 0.0)


def test_a_stack_that_cannot_conduct_is_off_and_a_load_beyond_the_supply_has_no_solution(parts):
    # INV-ZCOOL's knee exponent m = ln(40/6)/ln(10) < 1, so its curve ends at a positive
    # voltage at zero current: four of them need more than 12 V to conduct at all.
    stacks = np.array([[4, 4, 4, 4], [1, -1, -1, -1], [4, -1, -1, -1]])
    with np.errstate(all="raise"):
        op = solve_operating_points(parts, stacks, np.full(3, 12.0), 1000.0, 25.0, 0.0, np.array([0.0, 0.02, 0.0]),
                                    np.array([0.0, 0.0, 1 / 100.0]))
    assert op.status.tolist() == [STATUS_STACK_OFF, STATUS_SUPPLY_EXHAUSTED, STATUS_STACK_OFF]
    assert op.solved.tolist() == [True, False, True]
    # Off: Vout = (Vin − R·I_Lc)/(1 + R/R_L) (DESIGN §3), here 12 V and 12/11 V.
    np.testing.assert_allclose(op.vout_v, [12.0, 0.0, 12.0 / 11.0], rtol=1e-14)
    assert op.stack_current_a.tolist() == [0.0, 0.0, 0.0]
    np.testing.assert_allclose(op.resistor_power_w, [0.0, 0.0, 1000.0 * (12.0 / 11.0 / 100.0) ** 2])


def test_extremes_of_current_and_temperature_are_safe(parts):
    stacks = np.array([[1, 3, -1]] * 4)
    supply = np.array([1.0, 60.0, 12.0, 12.0])
    resistor = np.array([1e9, 5.0, 1e6, 1.0])
    ambient = np.array([-55.0, 125.0, 200.0, -55.0])
    with np.errstate(all="raise"):
        op = solve_operating_points(parts, stacks, supply, resistor, ambient, 1.0, detail=True)
    assert np.all(np.isfinite(op.vout_v)) and np.all(np.isfinite(op.junction_c))
    # Amperes through a signal diode (points 1 and 3) would settle its junction past
    # self_heating.JUNCTION_CEILING_C (near 21,000 °C and 9,000 °C): no physical steady state.
    assert op.status.tolist() == [STATUS_SOLVED, STATUS_RUNAWAY, STATUS_SOLVED, STATUS_RUNAWAY]
    assert 1e-13 < op.stack_current_a[0] < 1e-9  # picoamps
    assert op.worst_element_margin[2] < 0  # an ambient of 200 °C leaves the parts no allowed power


@pytest.mark.parametrize("fast_evaluations", [fast_newton.FAST_EVALUATIONS, 0], ids=["fast path", "fallback alone"])
def test_a_junction_past_the_ceiling_is_runaway_in_either_solver_path(parts, monkeypatch, fast_evaluations):
    # The signal diode at about 10 A (60 V through 5 Ω) would settle near 21,000 °C; at
    # 0.3 A (60 V through 200 Ω) it settles below the ceiling and is solved.
    monkeypatch.setattr(fast_newton, "FAST_EVALUATIONS", fast_evaluations)
    stacks = np.array([[1, 3, -1]] * 2)
    with np.errstate(all="raise", under="ignore"):
        op = solve_operating_points(parts, stacks, np.array([60.0, 60.0]), np.array([5.0, 200.0]), 125.0, 1.0)
    assert op.status.tolist() == [STATUS_RUNAWAY, STATUS_SOLVED]
    assert 125.0 < op.hottest_junction_c[1] < JUNCTION_CEILING_C


def test_equal_parts_and_padding_give_the_same_answer_as_spelled_out(parts):
    a = solve_operating_points(parts, np.array([[1, 1, 2, -1]]), 15.0, 680.0, 40.0, 1.0, 1e-3)
    b = solve_operating_points(parts, np.array([[2, -1, 1, 1]]), 15.0, 680.0, 40.0, 1.0, 1e-3)
    c = solve_operating_points(parts, np.array([[1, 1, 2, -1]]), 15.0, 680.0, 40.0, np.array([[1.0, 1.0, 1.0, 0.0]]), 1e-3)
    assert a.vout_v[0] == pytest.approx(b.vout_v[0], abs=1e-12)
    assert a.vout_v[0] == pytest.approx(c.vout_v[0], abs=1e-12)


def test_family_slots_count_distinct_parts(parts):
    fp, fc, _, zp, zc, _ = family_slots(parts, np.array([[1, 2, 1, -1], [3, 3, 3, 3]]))
    assert fp[0, :1].tolist() == [1] and fc[0].tolist() == [2, 0, 0, 0]
    assert zp[0, :1].tolist() == [2] and zc[0].tolist() == [1, 0, 0, 0]
    assert fc[1].tolist() == [4, 0, 0, 0] and zc[1].tolist() == [0, 0, 0, 0]


def test_hottest_junction_and_margin_agree_with_element_detail(parts):
    op = solve_operating_points(parts, np.array([[1, 2, 3]]), 20.0, 330.0, 60.0, 1.0, 2e-3, detail=True)
    assert op.hottest_junction_c[0] == pytest.approx(op.junction_c[0].max(), abs=1e-6)
    state = self_heated_element(parts, np.array([1, 2, 3]), np.log(op.stack_current_a[0]), 60.0, 1.0)
    np.testing.assert_allclose(op.junction_c[0], state.junction_c, atol=1e-9)


def test_fast_path_agrees_with_the_safeguarded_solver(parts, monkeypatch):
    # Plain reference: with no fast evaluations every point goes to the bracketed solver.
    rng = np.random.default_rng(11)
    count = 4000
    stacks = rng.integers(-1, 5, (count, 4))
    stacks[:, 0] = rng.integers(0, 5, count)
    args = (stacks, rng.uniform(3, 40, count), rng.uniform(10, 5000, count), rng.uniform(-55, 125, count),
            rng.choice([-1.0, 0.0, 1.0], count), rng.uniform(0, 3e-3, count))  # fmt: skip
    with np.errstate(all="raise"):
        fast = circuit.solve_operating_points(parts, *args)
        monkeypatch.setattr(fast_newton, "FAST_EVALUATIONS", 0)
        safe = circuit.solve_operating_points(parts, *args)
    np.testing.assert_array_equal(fast.status, safe.status)
    ok = safe.solved
    # Both stop at |KCL| <= 0.1 nV, so their currents may differ by up to
    # 2e-10 V / (R + r_d): ~1e-16 A at sub-microamp currents, and ~1e-9 relative where
    # R + r_d is small against Vout / I (seen at 1.1e-9 on one platform's libm).
    np.testing.assert_allclose(fast.stack_current_a[ok], safe.stack_current_a[ok], rtol=1e-8, atol=1e-15)
    np.testing.assert_allclose(fast.vout_v, safe.vout_v, rtol=0, atol=1e-9)
    np.testing.assert_allclose(fast.worst_element_margin[ok], safe.worst_element_margin[ok], rtol=0, atol=1e-9)
    # The hottest junction is checked against each element's own junction solve instead.
    monkeypatch.undo()
    detail = circuit.solve_operating_points(parts, *args, detail=True)
    hottest = np.maximum(detail.junction_c.max(axis=1), args[3])
    np.testing.assert_allclose(detail.hottest_junction_c[ok], hottest[ok], rtol=0, atol=1e-6)


def test_family_slots_match_a_plain_count_per_stack(parts):
    rng = np.random.default_rng(5)
    stacks = rng.integers(-1, 5, (500, 5))
    fp, fc, _, zp, zc, _ = family_slots(parts, stacks)
    for row, stack in enumerate(stacks):
        wanted = [{}, {}]
        for part in stack[stack >= 0]:
            family = wanted[int(parts.is_zener[part])]
            family[int(part)] = family.get(int(part), 0) + 1
        for family, part, multiplicity in ((wanted[0], fp, fc), (wanted[1], zp, zc)):
            filled = multiplicity[row] > 0
            assert filled.tolist() == [True] * len(family) + [False] * (stacks.shape[1] - len(family))
            assert dict(zip(part[row][filled].tolist(), multiplicity[row][filled].tolist(), strict=True)) == family


@pytest.mark.parametrize("width", [1, 3, 8])
def test_family_slots_match_a_plain_count_at_other_widths(parts, width):
    rng = np.random.default_rng(width)
    stacks = rng.integers(-1, 5, (300, width))
    fp, fc, _, zp, zc, _ = family_slots(parts, stacks)
    for row, stack in enumerate(stacks):
        for family, part, multiplicity in ((False, fp, fc), (True, zp, zc)):
            wanted = {int(p): int(np.sum(stack == p)) for p in set(stack[stack >= 0]) if parts.is_zener[p] == family}
            filled = multiplicity[row] > 0
            assert dict(zip(part[row][filled].tolist(), multiplicity[row][filled].tolist(), strict=True)) == wanted


def test_family_slots_keep_elements_apart_with_per_element_signs(parts):
    stacks = np.array([[1, 2, 1, -1], [3, 3, 0, 4]])
    signs = np.array([[1.0, -1.0, -0.5, 0.0], [0.25, -1.0, 1.0, 0.0]])
    fp, fc, fs, zp, zc, zs = family_slots(parts, stacks, signs)
    assert fp[0, :2].tolist() == [1, 1] and fc[0].tolist() == [1, 1, 0, 0] and fs[0, :2].tolist() == [1.0, -0.5]
    assert zp[0, :1].tolist() == [2] and zs[0, :1].tolist() == [-1.0]
    assert fp[1, :3].tolist() == [3, 3, 0] and fs[1, :3].tolist() == [0.25, -1.0, 1.0]
    assert zp[1, :1].tolist() == [4] and zc[1].tolist() == [1, 0, 0, 0]


def _random_points(count, seed):
    rng = np.random.default_rng(seed)
    stacks = rng.integers(-1, 5, (count, 4))
    stacks[:, 0] = rng.integers(0, 5, count)
    return (stacks, rng.uniform(3, 40, count), rng.uniform(10, 5000, count), rng.uniform(-55, 125, count),
            rng.uniform(-1, 1, (count, 4)), rng.uniform(0, 3e-3, count))  # fmt: skip


def test_fast_path_with_per_element_signs_agrees_with_the_safeguarded_solver(parts, monkeypatch):
    # Plain reference: the bracketed solver alone, as in the one-sign test above.
    args = _random_points(2000, 13)
    with np.errstate(all="raise"):
        fast = circuit.solve_operating_points(parts, *args)
        monkeypatch.setattr(fast_newton, "FAST_EVALUATIONS", 0)
        safe = circuit.solve_operating_points(parts, *args)
    np.testing.assert_array_equal(fast.status, safe.status)
    ok = safe.solved
    assert ok.mean() > 0.5
    np.testing.assert_allclose(fast.stack_current_a[ok], safe.stack_current_a[ok], rtol=1e-8, atol=1e-15)
    np.testing.assert_allclose(fast.vout_v, safe.vout_v, rtol=0, atol=1e-9)
    np.testing.assert_allclose(fast.worst_element_margin[ok], safe.worst_element_margin[ok], rtol=0, atol=1e-9)


def test_block_size_and_layout_order_do_not_change_the_answer(parts):
    stacks, supply, resistor, ambient, signs, load = _random_points(1500, 17)
    sign = signs[:, 0].round()
    whole = solve_operating_points(parts, stacks, supply, resistor, ambient, sign, load)
    small = solve_operating_points(parts, stacks, supply, resistor, ambient, sign, load, chunk_points=7)
    np.testing.assert_array_equal(whole.status, small.status)
    np.testing.assert_allclose(small.vout_v, whole.vout_v, rtol=0, atol=1e-12)
    # One layout only (the whole input is one block run): each point as if solved alone.
    one = np.repeat(stacks[:1], 40, axis=0)
    together = solve_operating_points(parts, one, supply[:40], resistor[:40], ambient[:40], sign[:40], load[:40])
    alone = [solve_operating_points(parts, one[i : i + 1], supply[i], resistor[i], ambient[i], sign[i], load[i])
             for i in range(40)]  # fmt: skip
    np.testing.assert_allclose(together.vout_v, [a.vout_v[0] for a in alone], rtol=0, atol=1e-12)


def _stack_corner_case(count, seed, corners=9, shared=True):
    """Random stacks (some padded, some unable to conduct) at per-stack and shared conditions;
    ambient and tolerance sign shared by every stack unless not ``shared``."""
    rng = np.random.default_rng(seed)
    stacks = rng.integers(-1, 5, (count, 4))
    stacks[:, 0] = rng.integers(0, 5, count)
    supply = rng.uniform(3, 40, (count, 1)) + rng.uniform(-1, 1, (1, corners))
    resistor = rng.uniform(10, 5000, (count, 1)) * rng.uniform(0.95, 1.05, (1, corners))
    ambient = rng.uniform(-55, 125, (1 if shared else count, corners))
    sign = rng.choice([-1.0, 0.0, 1.0], (1 if shared else count, corners))
    load = rng.uniform(0, 3e-3, (count, corners))
    conductance = rng.uniform(0, 1e-3, (1, corners))
    return stacks, supply, resistor, ambient, sign, load, conductance


def _point_by_point(parts, stacks, *conditions, detail=False):
    """The same problem as one point per (stack, corner), through solve_operating_points."""
    corners = np.broadcast_shapes(*(np.shape(c) for c in conditions))[1]
    grid = (stacks.shape[0], corners)
    flat = [np.broadcast_to(c, grid).reshape(-1) for c in conditions]
    return solve_operating_points(parts, np.repeat(stacks, corners, axis=0), *flat, detail=detail), grid


@pytest.mark.parametrize("shared", [True, False])
def test_stack_corners_match_the_point_by_point_solve(parts, shared):
    stacks, *conditions = _stack_corner_case(1500 if shared else 400, 19, shared=shared)
    with np.errstate(all="raise"):
        grid = circuit.solve_stack_corners(parts, stacks, *conditions, chunk_points=2000)
        points, shape = _point_by_point(parts, stacks, *conditions)
    assert grid.vout_v.shape == shape
    np.testing.assert_array_equal(grid.status.reshape(-1), points.status)
    assert 0.3 < grid.solved.mean() < 1.0  # both solved and flagged points are covered
    # Same equations and acceptance test from different starts (the stack-major one takes
    # self-heating in): both stop at |KCL| <= 0.1 nV, so they agree to the tolerances of the
    # fast path against the safeguarded solver above.
    for name, rtol, atol in (("vout_v", 0, 1e-9), ("stack_current_a", 1e-8, 1e-15), ("load_current_a", 1e-8, 1e-15),
                             ("resistor_power_w", 2e-8, 1e-15), ("hottest_junction_c", 0, 1e-6)):  # fmt: skip
        np.testing.assert_allclose(getattr(grid, name).reshape(-1), getattr(points, name), rtol=rtol, atol=atol)
    assert np.max(np.abs(grid.kcl_residual_v)) <= 1e-9  # DESIGN §3 circuit equation, 1 nV
    np.testing.assert_array_equal(grid.worst_element_margin.reshape(-1) == -np.inf, points.worst_element_margin == -np.inf)
    ok = points.solved
    np.testing.assert_allclose(grid.worst_element_margin.reshape(-1)[ok], points.worst_element_margin[ok], rtol=0, atol=1e-9)


def test_stack_corners_meet_kcl_and_steady_state_junctions(parts):
    stacks, *conditions = _stack_corner_case(400, 23)
    supply, resistor, ambient, sign, load, conductance = conditions
    with np.errstate(all="raise"):
        op = circuit.solve_stack_corners(parts, stacks, *conditions, detail=True)
    assert op.junction_c.shape == (*op.vout_v.shape, stacks.shape[1])
    assert np.all(np.isfinite(op.vout_v)) and np.all(op.vout_v[~op.solved] == 0.0)
    rows, cols = np.nonzero(op.conducting)
    grid = op.vout_v.shape
    exact, _ = stack_voltage(parts, stacks[rows], op.stack_current_a[rows, cols],
                             np.broadcast_to(ambient, grid)[rows, cols], np.broadcast_to(sign, grid)[rows, cols])  # fmt: skip
    through = op.stack_current_a[rows, cols] + op.load_current_a[rows, cols]
    kcl = np.broadcast_to(supply, grid)[rows, cols] - np.broadcast_to(resistor, grid)[rows, cols] * through - exact
    assert np.max(np.abs(kcl)) <= 1e-9  # DESIGN §3 circuit equation, 1 nV
    present = stacks[rows] >= 0
    theta = parts.theta_ja_k_per_w[np.maximum(stacks[rows], 0)]
    rise = op.junction_c[rows, cols] - np.broadcast_to(ambient, grid)[rows, cols][:, None]
    heat = theta * op.element_power_w[rows, cols]
    assert np.max(np.abs(np.where(present, rise - heat, 0.0))) <= 1e-3  # Tj = Ta + θ·P to 1 mK


def test_stack_corners_block_size_does_not_change_the_answer(parts):
    stacks, *conditions = _stack_corner_case(120, 29, corners=5)
    whole = circuit.solve_stack_corners(parts, stacks, *conditions)
    # Blocks smaller than one stack's corners still hold one whole stack.
    small = circuit.solve_stack_corners(parts, stacks, *conditions, chunk_points=3)
    np.testing.assert_array_equal(whole.status, small.status)
    np.testing.assert_allclose(small.vout_v, whole.vout_v, rtol=0, atol=1e-12)
    one = circuit.solve_stack_corners(parts, stacks[:1], *(np.asarray(c)[:1] if np.shape(c)[0] > 1 else c for c in conditions))
    np.testing.assert_allclose(one.vout_v[0], whole.vout_v[0], rtol=0, atol=1e-12)


def test_stack_corners_fall_back_to_the_safeguarded_solver(parts, monkeypatch):
    # Plain reference: with no fast evaluations every point goes to the bracketed solver.
    stacks, *conditions = _stack_corner_case(500, 31)
    fast = circuit.solve_stack_corners(parts, stacks, *conditions)
    monkeypatch.setattr(fast_newton, "FAST_EVALUATIONS", 0)
    with np.errstate(all="raise"):
        safe = circuit.solve_stack_corners(parts, stacks, *conditions)
    np.testing.assert_array_equal(fast.status, safe.status)
    ok = safe.solved
    np.testing.assert_allclose(fast.stack_current_a[ok], safe.stack_current_a[ok], rtol=1e-8, atol=1e-15)
    np.testing.assert_allclose(fast.vout_v, safe.vout_v, rtol=0, atol=1e-9)


def test_stack_corners_of_no_stacks_or_no_corners_are_empty(parts):
    none = circuit.solve_stack_corners(parts, np.zeros((0, 3), dtype=int), np.ones((1, 4)), 100.0, 25.0, 1.0)
    assert none.vout_v.shape == (0, 4) and none.status.shape == (0, 4)
    empty = circuit.solve_stack_corners(parts, np.array([[1, 2, -1]]), np.ones((1, 0)), 100.0, 25.0, 1.0)
    assert empty.vout_v.shape == (1, 0)
