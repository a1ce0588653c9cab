"""The passing series values of one stack and ``--pick`` (the contract's choice stays the
default). The libraries here are invented."""

from __future__ import annotations

import numpy as np
import pytest
from test_search import invented_parts, iterate_multisets, rail

from selector.search.resistor_choice import choose_resistors
from selector.search.series_sweep import series_sweep, value_ranges_text


@pytest.mark.parametrize("changes", [{}, {"tolerance_v": 0.5}, {"target_v": 3.0, "tolerance_v": 0.3}])
def test_pick_error_is_the_contract_choice(changes):
    parts, spec = invented_parts(), rail(**changes)
    stacks = np.concatenate(list(iterate_multisets(len(parts), 2)))
    chosen, evaluation = choose_resistors(parts, stacks, spec)
    for row, stack in enumerate(stacks):
        sweep = series_sweep(parts, stack, spec)
        picked = sweep.pick(spec, "error")
        assert (picked is None) == (not evaluation.feasible[row])
        if picked is not None:
            assert picked == chosen[row]


def test_margin_and_centre_pick_among_meeting_values():
    parts, spec = invented_parts(), rail(tolerance_v=0.5)
    stacks = np.concatenate(list(iterate_multisets(len(parts), 2)))
    tried = 0
    for stack in stacks:
        sweep = series_sweep(parts, stack, spec)
        if sweep.meeting_ohm.size < 2:
            continue
        tried += 1
        meets = sweep.evaluation.meets
        margin = sweep.pick(spec, "margin")
        assert margin in sweep.meeting_ohm
        assert sweep.evaluation.margin[sweep.values_ohm == margin][0] == sweep.evaluation.margin[meets].max()
        centre = sweep.pick(spec, "centre")
        offsets = np.abs((sweep.evaluation.vout_low_v + sweep.evaluation.vout_high_v) / 2 - spec.target_v)
        assert offsets[sweep.values_ohm == centre][0] == pytest.approx(offsets[meets].min(), abs=1e-9)
    assert tried > 0


def test_value_ranges_are_runs_of_consecutive_series_values():
    values = np.array([100.0, 120.0, 150.0, 180.0, 220.0, 270.0])
    assert value_ranges_text(values, np.array([120.0, 150.0, 180.0])) == "120 Ω … 180 Ω"
    assert value_ranges_text(values, np.array([100.0, 180.0, 220.0])) == "100 Ω, 180 Ω … 220 Ω"
    assert value_ranges_text(values, np.array([])) == ""


def test_check_states_where_the_stack_meets_and_takes_pick(run_cli, tmp_path):
    from pathlib import Path

    spec = tmp_path / "rail.toml"
    text = (Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml").read_text(encoding="utf-8")
    spec.write_text(text.replace('tolerance = "8 %"', 'tolerance = "10 %"'), encoding="utf-8")
    db = str(tmp_path / "lib.sqlite")
    assert run_cli("--db", db, "init", "--demo").exit_code == 0
    base = ("--db", db, "check", "--spec", spec, "--stack", "D-SCH3 + Z4V7-B")
    result = run_cli(*base)
    assert "  meets for 300 Ω … 360 Ω (E24)" in result.stdout.splitlines()
    assert result.stdout.startswith("Design: D-SCH3 + Z4V7-B with 300 Ω (chosen from E24)")
    assert run_cli(*base, "--pick", "margin").stdout.startswith("Design: D-SCH3 + Z4V7-B with 360 Ω")
    assert run_cli(*base, "--pick", "centre").stdout.startswith("Design: D-SCH3 + Z4V7-B with 330 Ω")


def test_seek_pick_gives_each_listed_stack_the_value_check_picks():
    # The search lists the same stacks as with the contract's choice; each meeting stack's
    # resistor is then the value the one-stack sweep picks, and the list is sorted again.
    from selector.search.engine import search_library

    parts, spec = invented_parts(), rail(tolerance_v=0.5, max_parts=2, resistor_series="E48")
    contract, _, _ = search_library(parts, spec, top=8, workers=1)
    picked, _, _ = search_library(parts, spec, top=8, workers=1, pick="margin")
    assert {tuple(row) for row in picked.stacks} == {tuple(row) for row in contract.stacks}
    assert picked.evaluation.meets.any()
    changed = 0
    for row, stack in enumerate(picked.stacks):
        sweep = series_sweep(parts, stack, spec)
        assert picked.resistor_ohm[row] == sweep.pick(spec, "margin")
        index = int(np.flatnonzero(sweep.values_ohm == picked.resistor_ohm[row])[0])
        assert picked.evaluation.error_v[row] == sweep.evaluation.error_v[index]
        contract_row = next(i for i, other in enumerate(contract.stacks) if (other == stack).all())
        changed += picked.resistor_ohm[row] != contract.resistor_ohm[contract_row]
    assert changed > 0  # a case where the preference changes nothing would prove little
    meets = picked.evaluation.meets
    assert meets[: meets.sum()].all()


def test_seek_pick_is_noted_under_the_table_and_in_json(run_cli, tmp_path):
    import json
    from pathlib import Path

    db = str(tmp_path / "lib.sqlite")
    assert run_cli("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    result = run_cli("--db", db, "seek", "--spec", example, "--tolerance", "12%", "--top", "4", "--pick", "margin")
    assert result.exit_code == 0, result.output
    assert ("R: each stack's meeting series value with the most dissipation margin (--pick margin); the stacks "
            "listed are those the contract's least-error choice ranks best.") in result.stdout.splitlines()
    seek_json = lambda pick: json.loads(run_cli("--db", db, "seek", "--spec", example, "--tolerance", "12%",  # noqa: E731
                                                "--top", "4", "--pick", pick, "--json").stdout)
    contract, centred = seek_json("error"), seek_json("centre")
    assert centred["context"]["pick"] == "centre" and contract["context"]["pick"] == "error"
    by_stack = {row["stack"]: row for row in centred["shortlist"]}
    # At 300 Ω (the least error) the rail spans 4.593 … 5.436 V; at 330 Ω its middle is
    # nearer 5 V, and check --pick centre takes the same value.
    assert [row["resistor_ohm"] for row in contract["shortlist"] if row["stack"] == "D-SCH3 + Z4V7-B"] == [300.0]
    assert by_stack["D-SCH3 + Z4V7-B"]["resistor_ohm"] == 330.0
    checked = json.loads(run_cli("--db", db, "check", "--spec", example, "--tolerance", "12%", "--stack",
                                 "D-SCH3 + Z4V7-B", "--pick", "centre", "--json").stdout)
    assert checked["resistor_ohm"] == 330.0 and checked["error_v"] == by_stack["D-SCH3 + Z4V7-B"]["error_v"]
    bad = run_cli("--db", db, "seek", "--spec", example, "--pick", "cheapest")
    assert bad.exit_code == 2 and "Invalid value for '--pick'" in bad.output
