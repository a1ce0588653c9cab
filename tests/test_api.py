"""The notebook API: ``from selector import seek`` with a spec object or TOML path."""

from __future__ import annotations

import pandas as pd
import pytest
from test_search import invented_parts, rail

from selector import seek

SPEC_TOML = """
[rail]
target = "5 V"
tolerance = "3 %"
[supply]
min = "11 V"
max = "13 V"
[load]
min = "0 A"
max = "10 mA"
[ambient]
min = 0
max = 50
[search]
max_parts = 2
"""


def test_seek_with_spec_path_matches_spec_object(tmp_path):
    path = tmp_path / "rail.toml"
    path.write_text(SPEC_TOML, encoding="utf-8")
    from_file, summary = seek(path, invented_parts(), top=3, workers=1)
    from_object, _ = seek(rail(resistor_series="E24", max_parts=2), invented_parts(), top=3, workers=1)
    assert isinstance(from_file, pd.DataFrame)
    pd.testing.assert_frame_equal(from_file, from_object)
    assert summary.spec.target_v == 5.0 and summary.considered == 20


def test_usable_mask_and_conditions_reach_the_rows():
    parts = invented_parts()
    mask = [True, True, True, False, False]
    conditions = ["", "", "second source only", "", ""]
    frame, summary = seek(rail(max_parts=2), parts, top=5, usable_mask=mask, conditions=conditions, workers=1)
    assert summary.part_count == 3
    assert not frame["stack"].str.contains("TZ-3V3").any()
    with_zener = frame[frame["stack"].str.contains("TZ-4V7")]
    assert (with_zener["conditions"] == "TZ-4V7: second source only").all()


def test_a_dict_spec_reads_like_the_toml_and_names_itself_in_errors(tmp_path):
    import tomllib

    from selector.api import as_spec
    from selector.errors import SpecError

    path = tmp_path / "rail.toml"
    path.write_text(SPEC_TOML, encoding="utf-8")
    assert as_spec(tomllib.loads(SPEC_TOML)) == as_spec(path)
    with pytest.raises(SpecError, match=r"^spec dict: \[rail\]: unknown key 'targte'"):
        as_spec({"rail": {"targte": "5 V"}})


def test_check_matches_the_command_line(demo_library, run_cli, tmp_path):
    import json

    from selector import check

    path = tmp_path / "rail.toml"
    path.write_text(SPEC_TOML, encoding="utf-8")
    result = check(path, demo_library, "Z4V7-A + D-SIG1")
    printed = json.loads(run_cli("--db", demo_library.location_text(), "check", "--spec", str(path),
                                 "--stack", "Z4V7-A + D-SIG1", "--json").output)
    assert result.design.resistor_ohm == printed["resistor_ohm"]
    assert result.meets == printed["meets"] and result.feasible == printed["feasible"]
    assert result.design.metrics.evaluation.error_v[0] == printed["error_v"]
