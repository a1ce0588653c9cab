"""The error budget: exact one-at-a-time shifts, the interaction remainder, the small-signal
estimate beside them, and the check output (DESIGN §4 ``budget``). Every part here is
invented for these tests."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from selector.cli import main
from selector.physics.corners import evaluate_designs
from selector.physics.devices import thermal_voltage_v
from selector.physics.error_budget import INTERACTION, dominant_source, error_budget
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec

EXAMPLE_SPEC = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")

#: Invented parts; a huge pd makes θ = (Tjmax − 25 °C)/pd tiny, so self-heating is negligible.
COOL_DIODE = dict(part="EB-D", family="signal", is_a=2e-9, n=1.8, rs_ohm=0.0, vf_tol_v=0.01, pd_w=1e4)
ZENER_10 = dict(part="EB-Z10", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=10.0, izk_a=0.5e-3, zzk_ohm=200.0,
                vz_tol_pct=10.0, tc_v_per_k=1e-3, tc_tol_v_per_k=0.3e-3, pd_w=0.5)  # fmt: skip
ZENER_2 = ZENER_10 | {"part": "EB-Z2", "vz_tol_pct": 2.0}


def spec(**changes) -> RailSpec:
    fields = dict(target_v=5.0, tolerance_v=0.5, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
                  load_kind="current", load_min=0.0, load_max=1e-3, ambient_min_c=0.0, ambient_max_c=50.0)
    fields.update(changes)
    return RailSpec(**fields)


def budget_of(records, names, resistor, rail):
    parts = PartSet.from_records(records)
    stack = parts.index_of(names)
    evaluation = evaluate_designs(parts, stack[None, :], np.array([resistor]), rail, detail=True)
    return error_budget(parts, stack, resistor, rail, evaluation), evaluation


def by_source(lines):
    return {line.source: line for line in lines}


def test_single_diode_line_shift_follows_the_shunt_relation():
    # Small-signal shunt relation ΔVout/ΔVin = r_d/(R + r_d), r_d = n·Vt/I for a diode with
    # no series resistance (common practice, no source).
    rail = spec(target_v=0.6, supply_min_v=11.99, supply_max_v=12.01, load_max=0.0, ambient_min_c=25.0,
                ambient_max_c=25.0)  # fmt: skip
    lines, evaluation = budget_of([COOL_DIODE], ["EB-D"], 1000.0, rail)
    current = (12.0 - evaluation.vout_nom_v[0]) / 1000.0
    r_d = 1.8 * thermal_voltage_v(25.0) / current
    expected = r_d / (1000.0 + r_d) * 0.01
    supply = by_source(lines)["supply"]
    assert supply.high_v == pytest.approx(expected, rel=1e-3)
    assert supply.linear_high_v == pytest.approx(expected, rel=1e-3)
    assert supply.low_v == pytest.approx(-expected, rel=1e-3)


def test_linear_estimate_agrees_with_the_exact_shifts_for_small_ranges():
    # Within 2 % where the ranges are small (the tolerance for the linearisation).
    rail = spec(supply_min_v=11.95, supply_max_v=12.05, load_min=0.45e-3, load_max=0.55e-3, ambient_min_c=24.0,
                ambient_max_c=26.0, resistor_tolerance=0.001)  # fmt: skip
    small = [COOL_DIODE | {"vf_tol_v": 0.001}, ZENER_2 | {"vz_tol_pct": 0.1, "tc_tol_v_per_k": 0.01e-3}]
    lines, _ = budget_of(small, ["EB-D", "EB-Z2"], 680.0, rail)
    for line in lines:
        if line.source == INTERACTION or line.size_v < 1e-6:
            continue
        assert line.linear_high_v == pytest.approx(line.high_v, rel=0.02), line.source
        assert line.linear_low_v == pytest.approx(line.low_v, rel=0.02), line.source


def test_a_wide_zener_grade_on_a_tight_supply_dominates():
    rail = spec(supply_min_v=11.9, supply_max_v=12.1)
    lines, _ = budget_of([ZENER_10], ["EB-Z10"], 680.0, rail)
    dominant = dominant_source(lines)
    assert dominant.source == "EB-Z10 tolerance"
    assert dominant.share > 0.8
    # 10 % of 5.1 V at the test current, divided down by R against the zener's slope.
    assert dominant.high_v == pytest.approx(0.51, rel=0.05)


def test_the_sources_and_the_interaction_add_up_to_the_32_corner_deviation():
    # The interaction is defined against the budget's own nominal solve; the sums match
    # the 32-corner deviation only if that solve agrees with the evaluation's nominal point.
    lines, evaluation = budget_of([COOL_DIODE, ZENER_10], ["EB-D", "EB-Z10"], 680.0, spec())
    below = sum(line.low_v for line in lines)
    above = sum(line.high_v for line in lines)
    assert below == pytest.approx(evaluation.vout_low_v[0] - evaluation.vout_nom_v[0], abs=1e-12)
    assert above == pytest.approx(evaluation.vout_high_v[0] - evaluation.vout_nom_v[0], abs=1e-12)
    assert [line.size_v for line in lines] == sorted((line.size_v for line in lines), reverse=True)


def test_check_json_carries_the_budget_largest_first(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert CliRunner().invoke(main, ["--db", db, "init", "--demo"]).exit_code == 0
    result = CliRunner().invoke(main, ["--db", db, "check", "--spec", EXAMPLE_SPEC, "--stack", "Z5V1-B", "--json"])
    assert result.exit_code == 0
    budget = json.loads(result.output)["budget"]
    assert budget[0]["source"] == "Z5V1-B tolerance"
    sizes = [max(abs(line["low_v"]), abs(line["high_v"])) for line in budget]
    assert sizes == sorted(sizes, reverse=True)
    assert {"source", "low_v", "high_v"} <= set(budget[0])
    text = CliRunner().invoke(main, ["--db", db, "check", "--spec", EXAMPLE_SPEC, "--stack", "Z5V1-B"]).output
    assert "  largest source of error: Z5V1-B tolerance (57% of the worst-side deviation)" in text
