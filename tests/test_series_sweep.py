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
