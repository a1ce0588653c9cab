"""``railwright check`` through click's CliRunner, on the bundled invented demo library."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from selector.catalog.store import open_library
from selector.cli import main
from selector.search.resistor_choice import choose_resistors
from selector.spec.rail_spec import load_spec

RAIL_TOML = """
[rail]
target = "5.6 V"
tolerance = "5 %"
[supply]
min = "11 V"
max = "13 V"
[load]
min = "0"
max = "2 mA"
[ambient]
min = 0
max = 50
"""


@pytest.fixture(scope="module")
def setup(tmp_path_factory):
    folder = tmp_path_factory.mktemp("check")
    db = folder / "lib.sqlite"
    spec = folder / "rail.toml"
    spec.write_text(RAIL_TOML, encoding="utf-8")
    result = CliRunner().invoke(main, ["--db", str(db), "init", "--demo"])
    assert result.exit_code == 0, result.output
    return str(db), str(spec)


def run(setup, *arguments):
    db, spec = setup
    return CliRunner().invoke(main, ["--db", db, "check", "--spec", spec, *arguments])


def test_json_has_the_contract_keys_and_32_corners(setup):
    result = run(setup, "--stack", "D-SIG1 + Z4V7-A", "--resistor", "270", "--json")
    assert result.exit_code == 3, result.output
    document = json.loads(result.output)
    contract = ["resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "margin",
                "i_min_a", "feasible", "meets", "corners"]  # fmt: skip
    assert list(document)[: len(contract)] == contract
    assert document["resistor_ohm"] == 270.0
    assert len(document["corners"]) == 32
    vouts = [corner["vout_v"] for corner in document["corners"]]
    assert document["vout_low_v"] == min(vouts) and document["vout_high_v"] == max(vouts)
    assert document["error_v"] == pytest.approx(max(abs(max(vouts) - 5.6), abs(min(vouts) - 5.6)), abs=1e-12)
    assert document["corners"][0]["supply_v"] == 11.0 and document["corners"][0]["load_a"] == 0.0


def test_without_resistor_the_contract_choice_is_used(setup):
    db, spec_path = setup
    result = run(setup, "--stack", "D-SIG1 + Z4V7-A", "--json")
    assert result.exit_code == 3, result.output
    library = open_library(db, notify=lambda line: None)
    parts = library.load_partset()
    stack = parts.index_of(["D-SIG1", "Z4V7-A"])
    resistor, _ = choose_resistors(parts, stack[None, :], load_spec(spec_path, {}))
    assert json.loads(result.output)["resistor_ohm"] == float(resistor[0])


def test_terminal_report_shows_design_corners_metrics_and_parts(setup):
    result = run(setup, "--stack", "D-SIG1 + Z4V7-A", "--resistor", "270", "--monte-carlo", "500")
    assert result.exit_code == 3, result.output
    text = result.output
    assert text.startswith("Design: D-SIG1 + Z4V7-A with 270 Ω (as given)")
    assert ("Corners (< lowest rail, > highest rail, o stack off, ! no solution; R at its tolerance and TCR; "
            "parts −/+: every part at its low/high tolerance and TC spread):") in text
    assert "rail [V]" in text and "Hottest junction: " in text
    assert " <" in text and " >" in text
    assert "line regulation" in text and "Margin per part (worst corner):" in text
    assert "Monte Carlo (500 units, seed 0, each at every supply × load × ambient extreme): yield" in text
    assert "Caution: series resistor has 12% margin on its allowed power (corners 17, 19, 21, " in text
    assert "Caution: Z4V7-A runs at up to 9.57 × its test current 3 mA (corners 1–32)" in text


def test_high_supply_caution_defers_to_codes(setup):
    result = run(setup, "--stack", "Z4V7-A", "--resistor", "47k", "--supply-min", "70V", "--supply-max", "80V")
    assert result.exit_code == 3, result.output
    assert "above the 60 V DC ES1 limit of IEC 62368-1" in result.output
    assert "this tool is not a safety assessment" in result.output


@pytest.mark.parametrize(
    "arguments, code, message",
    [
        (["--stack", "NOPE-1"], 1, "Error: unknown part 'NOPE-1' (not in the library, or filtered out)\n"),
        (["--stack", "2*"], 2, "Error: --stack: term 1 '2*' is not [COUNT*]PART, e.g. '2*D1'\n"),
        (["--stack", "Z4V7-A", "--monte-carlo", "0"], 2, "Error: --monte-carlo: 0 is not between 1 and 10000000\n"),
        (["--stack", "Z4V7-A", "--derating", "1.5"], 2, "Error: --derating: 1.5 is not in (0, 1]\n"),
    ],
)
def test_bad_input_gives_one_line(setup, arguments, code, message):
    result = run(setup, *arguments)
    assert result.exit_code == code
    assert result.output == message


@pytest.mark.parametrize("value", ["0", "-10"])
def test_zero_or_negative_resistor_is_refused_in_one_line(setup, value):
    result = run(setup, "--stack", "Z4V7-A", "--resistor", value)
    assert result.exit_code in (1, 2)
    assert result.output.startswith("Error: ") and result.output.count("\n") == 1
    assert "--resistor" in result.output


def test_help_has_an_example():
    result = CliRunner().invoke(main, ["check", "--help"])
    assert result.exit_code == 0
    assert 'railwright check --spec rail.toml --stack "Z4V7-A + 2*D-SIG1"' in result.output
    assert "3 sigma at the limit" in result.output


def test_help_lists_what_affects_check_and_says_how():
    text = " ".join(CliRunner().invoke(main, ["check", "--help"]).output.split())
    # The search's own options are not check's.
    for seek_only in ("--top", "--rank-by", "--resolution", "--csv", "--force", "--require-meeting"):
        assert seek_only not in text
    # The spec keys of the search tell what they do here: bound the what-if variants.
    assert "--max-parts N Most elements a what-if variant may have (adding one forward element)" in text
    assert "--families LIST Families a what-if variant may swap in or add" in text
    assert "--list NAME Approved-parts list to check the stack against: a part it does not allow is warned" in text


def test_a_design_without_a_solution_says_why_at_each_corner(setup):
    # 11–13 V through 1 Ω into one signal diode: amperes, a junction far past any survival.
    result = run(setup, "--stack", "D-SIG1", "--resistor", "1")
    assert result.exit_code == 3, result.output
    lines = result.output.splitlines()
    assert lines[2] == "Verdict: NOT FEASIBLE (no solution at 32 of 32 corners: thermal runaway at 32)"
    assert sum(line.endswith("no solution: thermal runaway") for line in lines) == 32
    document = json.loads(run(setup, "--stack", "D-SIG1", "--resistor", "1", "--json").output)
    assert document["vout_nom_v"] is None and document["feasible"] is False
    assert {corner["status"] for corner in document["corners"]} == {"thermal runaway"}


def test_a_load_past_what_the_supply_can_give_is_named(setup):
    result = run(setup, "--stack", "Z5V1-B", "--resistor", "1200", "--load-max", "20mA")
    assert result.exit_code == 3, result.output
    assert result.output.splitlines()[2] == (
        "Verdict: NOT FEASIBLE (no solution at 16 of 32 corners: load takes all the supply can give at 16)")
    document = json.loads(run(setup, "--stack", "Z5V1-B", "--resistor", "1200", "--load-max", "20mA", "--json").output)
    assert [corner["status"] for corner in document["corners"]].count("solved") == 16


def test_microamperes_at_a_negative_tolerance_solve_at_every_corner(setup):
    # At 4.7 MΩ the schottky carries about 1.5 µA; at its low tolerance its voltage is
    # negative, and its junction settles a little below the ambient (once "did not converge").
    result = run(setup, "--stack", "Z4V7-A + D-SCH3", "--resistor", "4.7M", "--ambient-max", "85", "--load-max", "0",
                 "--json")  # fmt: skip
    assert result.exit_code == 3, result.output
    assert {corner["status"] for corner in json.loads(result.output)["corners"]} == {"solved"}


def test_a_clash_caused_by_an_option_exits_2_and_names_the_option(setup, tmp_path):
    db, _ = setup
    spec = tmp_path / "absolute.toml"
    spec.write_text(RAIL_TOML.replace('tolerance = "5 %"', 'tolerance = "0.3 V"'), encoding="utf-8")
    result = CliRunner().invoke(main, ["--db", db, "check", "--spec", str(spec), "--stack", "Z5V1-A", "--target", "0.2V"])
    assert (result.exit_code, result.stderr) == (2, "Error: --target: 200 mV is not above [rail] tolerance (300 mV)\n")
    result = CliRunner().invoke(main, ["--db", db, "check", "--spec", str(spec), "--stack", "Z5V1-A", "--tolerance", "6V"])
    assert (result.exit_code, result.stderr) == (2, "Error: --tolerance: 6 V is not below [rail] target (5.6 V)\n")
