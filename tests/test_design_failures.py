"""A negative verdict names every limit it breaks, with the part, the corners and the
values; ``check`` exits 3 on it (DESIGN §4). The demo library is invented."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from selector.cli import main
from selector.physics.corners import worst_case_corners
from selector.physics.design_failures import common_conditions
from selector.spec.rail_spec import RailSpec

EXAMPLE_SPEC = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")


@pytest.fixture(scope="module")
def db(demo_db_module):
    return demo_db_module


def check(db, *arguments):
    return CliRunner().invoke(main, ["--db", db, "check", "--spec", EXAMPLE_SPEC, *arguments])


def test_a_meeting_design_exits_0_and_names_no_failure(db):
    result = check(db, "--stack", "Z5V1-B")
    assert result.exit_code == 0
    assert "Verdict: MEETS the spec at every corner" in result.output
    assert "fails:" not in result.output and "breaks" not in result.output
    assert json.loads(check(db, "--stack", "Z5V1-B", "--json").output)["failures"] == []


def test_too_little_current_names_the_part_its_knee_the_corners_and_what_they_share(db):
    result = check(db, "--stack", "Z5V1-B", "--resistor", "620")
    assert result.exit_code == 3
    lines = result.output.splitlines()
    assert lines[2:5] == [
        "Verdict: NOT FEASIBLE (bias)",
        "  fails: rail 4.392 V below the window's 4.6 V at corners 9, 11, 13, 15 (Vin min, load most, parts low)",
        "  fails: Z5V1-B current 137 µA below its knee 1.2 mA at corners 9–16 (Vin min, load most)",
    ]
    # The corner table marks each failing corner with the limits it breaks.
    rows = {line.split()[0].lstrip("<>o!"): line for line in lines if line[:4].strip().lstrip("<>o!").isdigit()}
    assert rows["9"].endswith("  low, bias") and rows["10"].endswith("  bias") and not rows["1"].endswith("bias")
    document = json.loads(check(db, "--stack", "Z5V1-B", "--resistor", "620", "--json").output)
    bias = document["failures"][1]
    assert {key: bias[key] for key in ("limit", "part", "corners")} == {
        "limit": "least current", "part": "Z5V1-B", "corners": list(range(9, 17))}
    assert bias["allowed"] == pytest.approx(1.2e-3, rel=1e-12)  # the demo part's izk_a
    assert bias["value"] == pytest.approx(min(c["stack_current_a"] for c in document["corners"]), rel=1e-12)


def test_too_much_dissipation_reads_as_an_overload_not_a_negative_percentage(db):
    result = check(db, "--stack", "Z5V1-B", "--resistor", "100")
    assert result.exit_code == 3
    assert "  fails: resistor overload: 2.64 × the power allowed at 50 °C ambient, corners 1–32" in result.output
    assert "least margin overload: 2.64 × allowed power" in result.output
    assert "Series resistor: worst 659 mW; overload: 2.64 × the 250 mW allowed at corner 29 " in result.output
    assert ("Caution: series resistor is in overload: 2.64 × allowed power (corners 1–32); this tool is not a "
            "safety assessment; follow local codes and licensed practice") in result.output
    assert "-163" not in result.output and "−163" not in result.output and "-164" not in result.output


def test_an_overloaded_part_reads_as_an_overload_in_every_line(db):
    result = check(db, "--stack", "Z5V1-A", "--resistor", "20")
    assert result.exit_code == 3
    assert "  fails: Z5V1-A overload: 5.37 × the power allowed at 50 °C ambient, corners 1–32" in result.output
    assert "   1. Z5V1-A               2.04 W   overload: 5.37 × allowed power" in result.output
    assert "Caution: Z5V1-A (position 1) is in overload: 5.37 × allowed power (corners 1–32); " in result.output
    assert ("Caution: hot part: a junction is past its Tjmax 175 °C (721 °C by the model) at corner 22; "
            in result.output)
    assert "%" not in "".join(line for line in result.output.splitlines() if "overload" in line)


def test_resistor_power_names_the_watts_and_its_derated_allowance(db):
    result = check(db, "--stack", "Z5V1-B", "--resistor", "330", "--resistor-rating", "0.125W")
    assert result.exit_code == 3
    assert "  fails: resistor 204 mW above 125 mW allowed at 50 °C ambient, corners 17–32 (Vin max)" in result.output
    failure = json.loads(check(db, "--stack", "Z5V1-B", "--resistor", "330", "--resistor-rating", "0.125W",
                               "--json").output)["failures"][-1]
    assert failure["limit"] == "resistor power" and failure["allowed"] == pytest.approx(0.125, rel=1e-12)


def test_the_worst_power_corner_is_the_one_furthest_past_its_derated_allowance(db):
    # Above 70 °C the resistor is derated (DESIGN §3): at 100 °C it may carry
    # 0.25 W · (155 − 100)/(155 − 70) = 161.8 mW, so a hot corner can be the worst one even
    # where a cold one dissipates more.
    result = check(db, "--stack", "Z5V1-B", "--resistor", "330", "--ambient-max", "100")
    assert result.exit_code == 3
    failure = json.loads(check(db, "--stack", "Z5V1-B", "--resistor", "330", "--ambient-max", "100",
                               "--json").output)["failures"]
    power = [f for f in failure if f["limit"] == "resistor power"][0]
    assert power["allowed"] == pytest.approx(0.25 * 55 / 85, rel=1e-12)
    assert f"  fails: {power['text']}" in result.output and "allowed at 100 °C ambient" in power["text"]


def test_a_forward_part_past_its_current_limit_and_its_tjmax(db):
    result = check(db, "--stack", "D-SIG1", "--resistor", "22")
    assert result.exit_code == 3
    assert "  fails: D-SIG1 current 550 mA above its limit 200 mA at corners 1–32" in result.output
    assert "Hottest junction: past Tjmax 175 °C (229 °C by the model)" in result.output


def test_corners_without_a_solution_are_one_failure(db):
    result = check(db, "--stack", "D-SIG1", "--resistor", "1")
    assert result.exit_code == 3
    assert "  fails: no solution at corners 1–32: thermal runaway" in result.output
    failure = json.loads(check(db, "--stack", "D-SIG1", "--resistor", "1", "--json").output)["failures"][-1]
    assert failure["limit"] == "no solution" and failure["value"] is None and failure["corners"] == list(range(1, 33))


def test_common_conditions_are_what_every_listed_corner_shares():
    spec = RailSpec(target_v=5.0, tolerance_v=0.4, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
                    load_kind="current", load_min=0.0, load_max=0.01, ambient_min_c=0.0, ambient_max_c=50.0)
    labels = worst_case_corners(spec).labels
    assert common_conditions(labels, np.arange(8, 16)) == "Vin min, load most"
    assert common_conditions(labels, np.array([0, 31])) == ""
    assert common_conditions(labels, np.array([5])) == labels[5]


def test_the_specs_least_current_is_one_stack_failure_with_digits_that_tell_it_apart(db):
    arguments = ("--stack", "2*D-SIG1 + Z2V7-A", "--resistor", "270", "--min-current", "15mA")
    result = check(db, *arguments)
    assert result.exit_code == 3
    assert ("  fails: stack current 12.5 mA below the spec's least current 15 mA at corners 9–12, 14–16 "
            "(Vin min, load most)") in result.output.splitlines()
    assert result.output.count("least current 15 mA") == 1  # once for the stack, not once per part
    failure = next(f for f in json.loads(check(db, *arguments, "--json").output)["failures"]
                   if f["limit"] == "least current")
    assert failure["part"] is None and failure["allowed"] == pytest.approx(15e-3, rel=1e-12)
    # A value that rounds to its limit is shown with more digits.
    from selector.physics.design_failures import _apart

    assert (_apart(14.98e-3, 15e-3, "A"), _apart(15e-3, 14.98e-3, "A")) == ("14.98 mA", "15 mA")
