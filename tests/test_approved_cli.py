"""The ``approved`` and ``history`` commands through click's CliRunner, on every backend:
output, exact one-line errors, exit codes, and that a refused command writes nothing."""

from __future__ import annotations

import pytest

from selector.catalog import approved_lists as lists
from selector.catalog.audit import history
from selector.catalog.store import open_library


@pytest.fixture
def db(backend_db, run_cli):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    assert run_cli("--db", backend_db, "approved", "create", "line-a", "--by", "C. Lead").exit_code == 0
    return backend_db


def test_set_show_and_lists(run_cli, db):
    result = run_cli("--db", db, "approved", "set", "line-a", "Z5V1-A", "approved", "--reason", "qualified",
                     "--by", "C. Lead")
    assert (result.exit_code, result.stdout) == (0, "line-a: add Z5V1-A: approved\n")
    result = run_cli("--db", db, "approved", "set", "line-a", "D-SIG1", "Conditional", "--reason", "leaky",
                     "--condition", "ambient at most 40 °C")
    assert result.stdout == "line-a: add D-SIG1: conditional: ambient at most 40 °C\n"
    shown = run_cli("--db", db, "approved", "show", "line-a").stdout.splitlines()
    assert shown[0].split() == ["part", "status", "since", "by", "reason", "condition"]
    assert shown[2].split()[:2] == ["Z5V1-A", "approved"] and "C. Lead" in shown[2]
    only = run_cli("--db", db, "approved", "show", "line-a", "--status", "conditional").stdout
    assert "D-SIG1" in only and "Z5V1-A" not in only
    summary = run_cli("--db", db, "approved", "lists").stdout.splitlines()
    assert summary[1].split()[:6] == ["line-a", "1", "1", "0", "0", "0"]


@pytest.mark.parametrize(
    ("args", "code", "message"),
    [
        (["set", "line-a", "Z5V1-A", "bogus", "--reason", "x"], 2,
         "Error: STATUS: 'bogus' is not a list status; expected one of approved, conditional, evaluating, "
         "no-new-design, banned\n"),
        (["set", "line-a", "Z5V1-A", "approved"], 2, "Error: --reason: missing; every status change needs a reason\n"),
        (["set", "line-b", "Z5V1-A", "approved", "--reason", "x"], 1,
         "Error: unknown list 'line-b' (known lists: line-a); create it with 'railwright approved create NAME'\n"),
        (["show", "nope"], 1,
         "Error: unknown list 'nope' (known lists: line-a); create it with 'railwright approved create NAME'\n"),
        (["show", "line-a", "--status", "gone"], 2,
         "Error: --status: 'gone' is not a list status; expected one of approved, conditional, evaluating, "
         "no-new-design, banned\n"),
        (["set", "line-a", "Z5V1-A", "approved", "--reason", "x", "--by", " "], 2,
         "Error: --by: empty; give the name of the person making the change\n"),
        (["drop", "line-a", "Z5V1-A", "--reason", "x"], 1, "Error: Z5V1-A is not on the list 'line-a'\n"),
        (["create", "line-a"], 1, "Error: the list 'line-a' already exists\n"),
    ],
)
def test_bad_input_is_one_line_and_writes_nothing(run_cli, db, args, code, message):
    before = history(open_library(db))
    result = run_cli("--db", db, "approved", *args)
    assert (result.exit_code, result.stderr) == (code, message)
    assert history(open_library(db)) == before


def test_unknown_part_names_the_library(run_cli, db):
    result = run_cli("--db", db, "approved", "set", "line-a", "NO-SUCH", "approved", "--reason", "x")
    library = open_library(db)
    assert (result.exit_code, result.stderr) == (
        1, f"Error: unknown part 'NO-SUCH' (not in the library {library.location_text()})\n")


def test_import_export_round_trip_and_errors(run_cli, db, tmp_path):
    good = tmp_path / "line.csv"
    good.write_text("part,status,reason,condition\nZ5V1-A,approved,qualified,\n"
                    "D-SIG1,conditional,leaky,ambient at most 40 °C\n", encoding="utf-8")
    dry = run_cli("--db", db, "approved", "import", "line-a", good, "--dry-run")
    assert dry.stdout.splitlines() == [
        "add Z5V1-A: approved", "add D-SIG1: conditional: ambient at most 40 °C",
        f"dry run, nothing written: {good} into 'line-a': 2 added, 0 changed, 0 unchanged"]
    assert lists.list_entries(open_library(db), "line-a") == []
    done = run_cli("--db", db, "approved", "import", "line-a", good, "--by", "C. Lead")
    assert done.stdout == f"imported {good} into 'line-a': 2 added, 0 changed, 0 unchanged\n"
    exported = tmp_path / "out.csv"
    assert run_cli("--db", db, "approved", "export", "line-a", exported).exit_code == 0
    assert exported.read_text(encoding="utf-8").splitlines()[0].startswith("part,status,reason,condition,since,by,")
    again = run_cli("--db", db, "approved", "import", "line-a", exported)
    assert again.stdout.endswith(": 0 added, 0 changed, 2 unchanged\n")
    bad = tmp_path / "bad.csv"
    bad.write_text("part,status,reason\nZ5V1-A,banned,\nNO-SUCH,approved,x\n", encoding="utf-8")
    refused = run_cli("--db", db, "approved", "import", "line-a", bad)
    assert refused.exit_code == 1
    assert refused.stderr == (f"Error: {bad}:2: reason: missing; every status change needs a reason\n"
                              f"{bad}:3: part: unknown part 'NO-SUCH' (not in the library)\n")
    assert {row["status"] for row in lists.list_entries(open_library(db), "line-a")} == {"approved", "conditional"}


def test_rename_compare_drop_and_remove_refusal(run_cli, db):
    run_cli("--db", db, "approved", "create", "line-b")
    run_cli("--db", db, "approved", "set", "line-a", "D-SIG1", "banned", "--reason", "end of life")
    compared = run_cli("--db", db, "approved", "compare", "line-a", "line-b").stdout.splitlines()
    assert compared[1].split() == ["D-SIG1", "banned", "(not", "on", "it)"]
    removed = run_cli("--db", db, "parts", "remove", "D-SIG1")
    assert removed.exit_code == 1
    assert removed.stderr == ("Error: cannot remove D-SIG1: it is on the approved-parts list(s) 'line-a' (banned); "
                              "take it off each first with 'railwright approved drop LIST D-SIG1 --reason TEXT'\n")
    assert run_cli("--db", db, "approved", "rename", "line-a", "chargers", "--reason", "renamed").exit_code == 0
    assert run_cli("--db", db, "approved", "drop", "chargers", "D-SIG1", "--reason", "eol").exit_code == 0
    assert run_cli("--db", db, "parts", "remove", "D-SIG1").exit_code == 0


def test_history_command(run_cli, db, tmp_path):
    run_cli("--db", db, "approved", "set", "line-a", "Z5V1-A", "evaluating", "--reason", "samples", "--by", "D. Eng")
    run_cli("--db", db, "approved", "set", "line-a", "Z5V1-A", "approved", "--reason", "passed", "--by", "C. Lead")
    lines = run_cli("--db", db, "history", "Z5V1-A", "--list", "line-a").stdout.splitlines()
    assert len(lines) == 2
    assert lines[1].endswith("C. Lead  status set  Z5V1-A on 'line-a': evaluating \u2192 approved; why: passed")
    whole = run_cli("--db", db, "history", "Z5V1-A").stdout.splitlines()
    assert whole[0].split("  ")[2] == "part added" and len(whole) == 3
    path = tmp_path / "h.csv"
    result = run_cli("--db", db, "history", "--list", "line-a", "--since", "2000-01-01", "--csv", path)
    assert result.stderr == f"wrote 3 events to {path}\n"
    assert path.read_text(encoding="utf-8").splitlines()[0] == "id,when_utc,who,action,part,list,old,new,why"
    assert run_cli("--db", db, "history", "--since", "2999-01-01").stdout == "no events\n"
    bad = run_cli("--db", db, "history", "--since", "soon")
    assert (bad.exit_code, bad.stderr) == (
        2, "Error: --since: 'soon' is not a date; write e.g. 2026-12-01 or 2026-12-01T14:30\n")


def test_history_of_a_name_never_known_is_an_error_but_a_removed_part_keeps_its_events(run_cli, db):
    before = history(open_library(db))
    result = run_cli("--db", db, "history", "NOPE")
    assert (result.exit_code, result.stderr) == (1, "Error: unknown part 'NOPE': not in the library, and no event names it\n")
    result = run_cli("--db", db, "history", "--list", "line-z")
    assert (result.exit_code, result.stderr) == (
        1, "Error: unknown list 'line-z' (known lists: line-a); create it with 'railwright approved create NAME'\n")
    assert run_cli("--db", db, "history", "Z5V1-A", "--since", "2999-01-01").stdout == "no events\n"
    assert run_cli("--db", db, "parts", "remove", "Z5V1-A").exit_code == 0
    assert run_cli("--db", db, "history", "Z5V1-A").stdout.splitlines()[-1].split("  ")[2] == "part removed"
    assert len(history(open_library(db))) == len(before) + 1


def test_every_new_command_has_help_with_an_example(run_cli):
    for args in (["approved"], ["history"], *[["approved", name] for name in
                 ("lists", "create", "rename", "set", "drop", "show", "import", "export", "compare")]):
        result = run_cli(*args, "--help")
        assert result.exit_code == 0 and "Example" in result.stdout, args
