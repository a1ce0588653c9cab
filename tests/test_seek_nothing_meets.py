"""Why a search met nothing: the pruned stacks by which limit fails, the R range each limit
needs for the closest of them, a note when no feasible design comes within twice the
tolerance, and the nearly feasible designs with the limit each breaks. The demo library
and the example spec are invented."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from selector.cli import main

EXAMPLE_SPEC = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")


@pytest.fixture(scope="module")
def db(demo_db_module):
    return demo_db_module


def seek(db, *arguments):
    result = CliRunner().invoke(main, ["--db", db, "seek", "--spec", EXAMPLE_SPEC, "--top", "3", *arguments])
    assert result.exit_code == 0, result.output
    return result


def test_far_fill_rows_say_nothing_comes_within_twice_the_tolerance(db):
    lines = seek(db, "--tolerance", "50mV").output.splitlines()
    assert ("Nothing meets, and no feasible design comes within twice the tolerance (100 mV): the closest is "
            "394.8 mV off where 50 mV is allowed.") in lines
    assert ("  pruned, no series value fits between the limits: enough current needs a lower R than the current and "
            "power limits allow: 44") in lines
    assert lines[-1] == ("  closest to having a resistor: D-LEDR2 + Z6V2-B: enough current needs R ≤ 254 Ω; the parts' "
                         "and the resistor's current and power limits need R ≥ 241.8 Ω (no E24 value lies between)")
    # Within twice the tolerance the rows need no such note.
    assert not any(line.startswith("Nothing meets") for line in seek(db, "--tolerance", "300mV").output.splitlines())


def test_nearly_feasible_designs_name_the_limit_each_breaks(db):
    lines = seek(db, "--min-margin", "60%").output.splitlines()
    start = lines.index("Nearly feasible (closer to the target than any feasible design, but each breaks a limit; "
                        "closest first):")
    assert lines[start + 1:start + 6] == [
        "  D-LEDY1 + D-SIG1 + Z2V4-A with 620 Ω: error 915.3 mV",
        "    breaks: resistor 114 mW above 100 mW allowed (less the 60% margin) at 50 °C ambient, corners 25, 27, "
        "29–32 (Vin max, load most)",
        "  D-REC3 + D-SIG1 + Z3V9-A with 620 Ω: error 935.1 mV",
        "    breaks: Z3V9-A current 111 µA below its knee 300 µA at corners 10, 12, 16 (Vin min, load most, parts high)",
        "    breaks: resistor 109 mW above 100 mW allowed (less the 60% margin) at 50 °C ambient, corners 21, 25, 27, "
        "29, 31 (Vin max, parts low)",
    ]
    assert lines[-1].startswith("  closest to having a resistor: D-REC3 + D-SIG3 + Z2V7-A: enough current needs "
                                "R ≤ 748.3 Ω; the current and power limits with the spec's 60% margin need R ≥ 681.3 Ω")
    document = json.loads(seek(db, "--min-margin", "60%", "--json").output)
    near = document["summary"]["nearly_feasible"]
    assert len(near) == 5 and near[0]["stack"] == "D-LEDY1 + D-SIG1 + Z2V4-A" and near[0]["limits"] == ["resistor power"]
    # Each is closer to the target than the best feasible row, in error order.
    errors = [row["error_v"] for row in near]
    assert errors == sorted(errors) and errors[-1] < document["shortlist"][0]["error_v"]
    # Each really breaks what it names: check says the same.
    checked = CliRunner().invoke(main, ["--db", db, "check", "--spec", EXAMPLE_SPEC, "--min-margin", "60%", "--stack",
                                        near[1]["stack"], "--resistor", "620", "--json"])  # fmt: skip
    assert checked.exit_code == 3
    assert [f["text"] for f in json.loads(checked.output)["failures"] if f["limit"] != "rail below window"
            and f["limit"] != "rail above window"] == near[1]["breaks"]


def test_nothing_feasible_names_the_main_limit_with_its_count_and_the_closest_r_ranges(db):
    lines = seek(db, "--min-margin", "95%").output.splitlines()
    assert ("No feasible design. Most candidates were rejected because: too little current: even the lowest allowed "
            "R cannot give every corner its least current (45358 of 73149 stacks).") in lines
    assert ("Nearly feasible (each breaks a limit; closest first, those without a solution at every corner last):"
            in lines)
    assert lines[-1] == ("  closest to having a resistor: 3*Z2V4-B: enough current needs R ≤ 500.3 Ω; the current and "
                         "power limits with the spec's 95% margin need R ≥ 2.712 kΩ")


def test_a_search_that_meets_has_no_such_lines(db):
    result = seek(db)
    assert "Nearly feasible" not in result.output and "Nothing meets" not in result.output
    assert json.loads(seek(db, "--json").output)["summary"]["nearly_feasible"] == []
