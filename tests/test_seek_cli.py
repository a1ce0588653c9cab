"""``railwright seek`` through click's CliRunner: output, CSV, JSON and bad input."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from test_search import INVENTED

from selector.catalog.store import open_library
from selector.cli import main

QUICK = ["--target", "5V", "--tolerance", "3%", "--supply-min", "11V", "--supply-max", "13V",
         "--load-min", "0", "--load-max", "10mA", "--ambient-min", "0", "--ambient-max", "50", "--max-parts", "2"]


@pytest.fixture
def invented_db(tmp_path):
    path = tmp_path / "invented.sqlite"
    library = open_library(str(path))
    records = [{**record, "package": "invented"} for record in INVENTED]
    library.import_records(records, kind="test", file_name="invented", file_sha256="0" * 64)
    library.close()
    return str(path)


def run(*arguments):
    return CliRunner().invoke(main, list(arguments))


def test_seek_prints_table_summary_and_writes_csv(invented_db, tmp_path):
    target = tmp_path / "shortlist.csv"
    result = run("--db", invented_db, "seek", *QUICK, "--top", "3", "--csv", str(target))
    assert result.exit_code == 0, result.output
    assert "R [Ω]" in result.output and "error [mV]" in result.output
    assert "Considered 20 stacks" in result.output
    rows = list(csv.DictReader(target.open(encoding="utf-8")))
    assert len(rows) == 3
    assert list(rows[0])[:10] == ["rank", "stack", "parts", "resistor_ohm", "vout_nom_v", "vout_low_v",
                                  "vout_high_v", "error_v", "margin", "meets"]


def test_seek_json_rows_and_summary(invented_db):
    result = run("--db", invented_db, "seek", *QUICK, "--top", "2", "--json")
    assert result.exit_code == 0, result.output
    document = json.loads(result.output)
    assert [row["rank"] for row in document["shortlist"]] == [1, 2]
    assert document["summary"]["considered"] == 20
    assert document["summary"]["spec"]["target_v"] == 5.0


def test_empty_library_is_one_line_error(tmp_path):
    result = run("--db", str(tmp_path / "empty.sqlite"), "seek", *QUICK)
    assert result.exit_code == 1
    assert result.output.strip().splitlines()[-1] == (
        "Error: the library holds no parts; add some with 'railwright parts import FILE.csv'"
    )


def test_family_filter_leaving_nothing(invented_db):
    result = run("--db", invented_db, "seek", *QUICK, "--families", "schottky")
    assert result.exit_code == 1
    assert result.output.strip().splitlines()[-1] == "Error: no part of the library is in the families schottky"


def test_bad_rank_key_and_resolution(invented_db):
    result = run("--db", invented_db, "seek", *QUICK, "--rank-by", "cost")
    assert result.exit_code == 2
    assert "Error: --rank-by: unknown key 'cost'" in result.output
    result = run("--db", invented_db, "seek", *QUICK, "--resolution", "-1 mV")
    assert result.exit_code == 2
    assert "Error: --resolution: must be a positive voltage, not '-1 mV'" in result.output


def test_nothing_feasible_names_the_main_rejection(invented_db):
    result = run("--db", invented_db, "seek", *QUICK, "--min-margin", "99.9%")
    assert result.exit_code == 0, result.output
    assert "No feasible design. Most candidates were rejected because:" in result.output


def test_help_has_an_example():
    result = run("seek", "--help")
    assert result.exit_code == 0
    assert "  railwright seek --spec rail.toml --top 5 --csv shortlist.csv" in result.output
    assert "--require-meeting   (exit 3 when nothing meets, for scripts)" in result.output


def test_require_meeting_exits_3_only_when_nothing_meets(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    assert run("--db", db, "seek", "--spec", example, "--require-meeting").exit_code == 0
    tight = run("--db", db, "seek", "--spec", example, "--tolerance", "100mV", "--require-meeting")
    assert tight.exit_code == 3
    assert "meets" in tight.output  # the closest designs are still listed
    assert run("--db", db, "seek", "--spec", example, "--tolerance", "100mV").exit_code == 0  # DESIGN §4


def test_table_has_parts_window_p_margin_and_pareto_with_a_legend(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    lines = run("--db", db, "seek", "--spec", example, "--top", "3").output.splitlines()
    header = next(line for line in lines if line.startswith("#  stack"))
    assert header.split() == ["#", "stack", "parts", "R", "[Ω]", "Vnom", "[V]", "Vlow", "[V]", "Vhigh", "[V]", "error",
                              "[mV]", "window", "[mV]", "P", "margin", "[%]", "!", "meets", "Pareto"]
    first = lines[lines.index(header) + 2]
    assert "+5.2" in first  # 400 mV allowed, 394.8 mV worst-case error
    assert ("window: tolerance minus worst-case error (negative: outside); P margin: least dissipation margin; "
            "! a part or the resistor within 20% of its allowed power; * on the Pareto front of error, margin and "
            "part count") in lines


def test_a_tolerance_that_looks_like_a_percentage_is_warned(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    result = run("--db", db, "seek", "--spec", example, "--tolerance", "3", "--top", "1")
    assert ("Warning: [rail] tolerance: 3 V is 60% of the 5 V target (a bare number is volts); write '3 %' if a "
            "percentage was meant") in result.output


@pytest.mark.parametrize("overrides", [{}, {"load.min": "1 kohm", "load.max": "10 kohm"},
                                       {"resistor.tcr": "100 ppm/K", "search.zener_izt_limit": "5",
                                        "search.families": "zener,signal", "resistor.fixed": "470"}])
def test_the_spec_as_run_reads_back_to_the_same_spec(overrides):
    import tomllib

    from selector.spec.rail_spec import load_spec
    from selector.spec.spec_summary import spec_toml

    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    spec = load_spec(example, overrides)
    assert load_spec(None, {}, table=tomllib.loads(spec_toml(spec)), table_label="again") == spec


def test_a_window_spec_reads_back_to_within_double_rounding():
    import dataclasses
    import tomllib

    from selector.spec.rail_spec import load_spec
    from selector.spec.spec_summary import spec_toml

    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    spec = load_spec(example, {"rail.min": "4.7V", "rail.max": "5.4V"})
    again = load_spec(None, {}, table=tomllib.loads(spec_toml(spec)), table_label="again")
    assert again.rail_window and again.rail_min_v == pytest.approx(4.7, abs=1e-12)
    assert dataclasses.replace(again, target_v=spec.target_v, tolerance_v=spec.tolerance_v) == spec


def test_csv_gets_its_spec_sibling_and_json_its_context(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    out = tmp_path / "short.csv"
    result = run("--db", db, "seek", "--spec", example, "--top", "2", "--csv", str(out))
    assert result.output.splitlines()[-1] == (f"Shortlist written to {out} (2 rows, best error 394.8 mV); the spec as run "
                                              f"to {tmp_path / 'short.spec.toml'}.")
    again = run("--db", db, "seek", "--spec", str(tmp_path / "short.spec.toml"), "--top", "2", "--csv",
                str(tmp_path / "again.csv"))
    assert again.exit_code == 0
    assert (tmp_path / "again.csv").read_text(encoding="utf-8") == out.read_text(encoding="utf-8")
    document = json.loads(run("--db", db, "seek", "--spec", example, "--top", "1", "--json").output)
    assert list(document) == ["shortlist", "summary", "context"]
    context = document["context"]
    assert set(context) == {"spec", "library_sha256", "computed_at", "railwright_version", "pick"}
    assert len(context["library_sha256"]) == 64 and context["spec"]["target_v"] == 5.0
    # The CSV keeps full precision: its numbers read back to the very floats of the JSON.
    first = next(csv.DictReader(out.open(encoding="utf-8")))
    for key in ("resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "margin", "i_min_a"):
        assert float(first[key]) == document["shortlist"][0][key], key


def test_a_search_that_finds_nothing_says_which_end_of_the_resistor_range_fails(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    result = run("--db", db, "seek", "--spec", example, "--top", "3", "--tolerance", "50mV", "--load-max", "60mA")
    lines = result.output.splitlines()
    assert any(line.startswith("  pruned, too little current: even the lowest allowed R cannot give every corner its "
                               "least current: ") for line in lines)
    # The closest is the stack whose rail bound lies nearest the window, then the narrowest gap.
    assert lines[-1] == ("  closest to having a resistor: D-SIG1 + 2*Z3V0-A: enough current needs R ≤ 98.98 Ω; "
                         "the parts' and the resistor's current and power limits need R ≥ 91.15 Ω (no E24 value lies "
                         "between)")
    summary = json.loads(run("--db", db, "seek", "--spec", example, "--top", "3", "--tolerance", "50mV", "--load-max",
                             "60mA", "--json").output)["summary"]
    assert summary["closest_resistor_conflict"].startswith("D-SIG1 + 2*Z3V0-A: ")


def test_rows_using_an_evaluating_part_say_so_in_table_csv_and_json(tmp_path):
    db = str(tmp_path / "lib.sqlite")
    assert run("--db", db, "init", "--demo").exit_code == 0
    assert run("--db", db, "approved", "create", "line-a").exit_code == 0
    for part in ("Z5V1-B", "Z4V7-B", "D-SCH3"):
        assert run("--db", db, "approved", "set", "line-a", part, "approved", "--reason", "qualified").exit_code == 0
    assert run("--db", db, "approved", "set", "line-a", "Z5V1-A", "evaluating", "--reason", "on trial").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    base = ("--db", db, "seek", "--spec", example, "--list", "line-a", "--statuses", "approved,evaluating", "--top", "4")
    out = tmp_path / "short.csv"
    output = run(*base, "--csv", str(out)).output
    assert "  #3 uses parts not approved on 'line-a': Z5V1-A: evaluating" in output
    # The legend under the table points to those lines.
    assert any(line.startswith("window: tolerance minus worst-case error") and line.endswith(
        "; #N lines under the table: the list's conditions of use and parts not approved on it (statuses)")
        for line in output.splitlines())
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    assert [row["statuses"] for row in rows] == ["", "", "Z5V1-A: evaluating", ""]
    shortlist = json.loads(run(*base, "--json").output)["shortlist"]
    assert shortlist[2]["stack"] == "Z5V1-A" and shortlist[2]["statuses"] == "Z5V1-A: evaluating"
