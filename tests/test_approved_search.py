"""List-aware seek and check: only usable parts are searched, conditions are shown with
the rows that use them, and a check of an unusable part warns, naming its status."""

from __future__ import annotations

import json

import numpy as np
import pytest

from selector.api import seek
from selector.catalog import list_changes as changes
from selector.errors import SearchError
from selector.spec.rail_spec import load_spec

RAIL = {
    "rail.target": "5.1 V", "rail.tolerance": "5 %", "supply.min": "11 V", "supply.max": "13 V",
    "load.min": "0", "load.max": "2 mA", "ambient.min": "0", "ambient.max": "50", "search.max_parts": "2",
}
RAIL_OPTIONS = [item for key, value in RAIL.items() for item in
                ({"rail.target": "--target", "rail.tolerance": "--tolerance", "supply.min": "--supply-min",
                  "supply.max": "--supply-max", "load.min": "--load-min", "load.max": "--load-max",
                  "ambient.min": "--ambient-min", "ambient.max": "--ambient-max",
                  "search.max_parts": "--max-parts"}[key], value)]
STATUSES = {"Z5V1-A": "approved", "Z4V7-A": "approved", "D-SIG2": "conditional", "Z4V3-A": "evaluating",
            "Z5V6-A": "no-new-design", "D-SIG1": "banned"}


@pytest.fixture
def listed(backend_library):
    changes.create_list(backend_library, "line-a", by="C. Lead")
    for part, status in STATUSES.items():
        changes.set_status(backend_library, "line-a", part, status, reason=f"{status} for the test", by="C. Lead",
                         condition="ambient at most 40 °C" if status == "conditional" else None)
    return backend_library


def _parts_of(frame) -> set[str]:
    return {name.split("*")[-1] for stack in frame["stack"] for name in stack.replace(" ", "").split("+")}


def test_seek_searches_only_usable_parts_and_matches_a_filtered_library(listed):
    spec = load_spec(None, RAIL | {"search.list": "line-a"})
    frame, summary = seek(spec, listed, top=50, workers=1)
    assert summary.part_count == 3
    assert _parts_of(frame) <= {"Z5V1-A", "Z4V7-A", "D-SIG2"}
    # plain reference: the same search over a PartSet holding only the usable parts
    whole = listed.load_partset()
    reference, _ = seek(load_spec(None, RAIL), whole.select(np.isin(whole.part, ["Z5V1-A", "Z4V7-A", "D-SIG2"])),
                        top=50, workers=1)
    columns = ["stack", "resistor_ohm", "error_v", "margin", "meets"]
    assert frame[columns].to_dict("records") == reference[columns].to_dict("records")
    with_sig2 = frame[frame["stack"].str.contains("D-SIG2")]
    assert len(with_sig2) > 0 and set(with_sig2["conditions"]) == {"D-SIG2: ambient at most 40 °C"}
    assert set(frame[~frame["stack"].str.contains("D-SIG2")]["conditions"]) == {""}


def test_evaluating_parts_only_when_asked(listed):
    spec = load_spec(None, RAIL | {"search.list": "line-a", "search.statuses": "approved,evaluating"})
    frame, summary = seek(spec, listed, top=50, workers=1)
    assert summary.part_count == 3 and _parts_of(frame) <= {"Z5V1-A", "Z4V7-A", "Z4V3-A"}
    assert "Z4V3-A" in _parts_of(frame)


def test_a_partset_with_a_list_name_is_refused(listed):
    with pytest.raises(SearchError, match="^the spec names the approved-parts list 'line-a': pass the library"):
        seek(load_spec(None, RAIL | {"search.list": "line-a"}), listed.load_partset(), workers=1)


def test_seek_command_shows_conditions_and_refuses_unknown_lists(run_cli, listed, backend_db):
    result = run_cli("--db", backend_db, "seek", *RAIL_OPTIONS, "--list", "line-a", "--top", "10")
    assert result.exit_code == 0, result.stderr
    assert "from list 'line-a' (approved, conditional)" in result.stdout
    assert "conditions of use (list 'line-a'): D-SIG2: ambient at most 40 °C" in result.stdout
    assert "D-SIG1" not in result.stdout and "Z5V6-A" not in result.stdout
    unknown = run_cli("--db", backend_db, "seek", *RAIL_OPTIONS, "--list", "line-z")
    assert (unknown.exit_code, unknown.stderr) == (
        1, "Error: unknown list 'line-z' (known lists: line-a); create it with 'railwright approved create NAME'\n")
    never = run_cli("--db", backend_db, "seek", *RAIL_OPTIONS, "--list", "line-a", "--statuses", "approved,banned")
    assert never.exit_code == 2  # an option value: usage
    assert never.stderr == ("Error: --statuses: 'banned' parts may never be designed in; "
                            "usable: approved, conditional, evaluating\n")


@pytest.mark.parametrize(
    ("stack", "warning"),
    [
        ("D-SIG1 + Z4V3-A", "Warning: D-SIG1 is banned on the list 'line-a': banned for the test\n"
                            "Warning: Z4V3-A is evaluating on the list 'line-a' (usable here: approved, conditional): "
                            "evaluating for the test\n"),
        ("Z5V6-A", "Warning: Z5V6-A is no-new-design on the list 'line-a': no-new-design for the test\n"),
        ("Z39V-B", "Warning: Z39V-B is not on the list 'line-a'\n"),
        ("Z4V7-A + D-SIG2", ""),
    ],
)
def test_check_warns_about_unusable_parts(run_cli, listed, backend_db, stack, warning):
    fixed = ("--resistor", "1k")  # the resistor choice is not what is tested here
    result = run_cli("--db", backend_db, "check", *RAIL_OPTIONS, *fixed, "--list", "line-a", "--stack", stack)
    # A warning, not an error; at 1 kΩ none of these meets the rail, hence exit 3 (DESIGN §4).
    assert result.exit_code == 3
    assert result.stderr == warning
    as_json = run_cli("--db", backend_db, "check", *RAIL_OPTIONS, *fixed, "--list", "line-a", "--stack", stack,
                      "--json")
    document = json.loads(as_json.stdout)
    assert document["approved_list"]["warnings"] == [line[len("Warning: "):] for line in warning.splitlines()]
    if "D-SIG2" in stack:
        assert document["approved_list"]["conditions"] == ["D-SIG2: ambient at most 40 °C"]
        assert "Condition of use (list 'line-a'): D-SIG2: ambient at most 40 °C" in result.stdout
