"""The ``designs`` commands and the where-used hooks through click's CliRunner, on every
backend: output, exit codes (3 for a negative verdict), exact one-line errors, and the
library reopened to check what was (or was not) written. Parts are the invented demo sets."""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest

from selector.catalog.audit import history
from selector.catalog.library_hash import library_content_hash
from selector.catalog.saved_designs import latest_revisions, revision_history
from selector.catalog.store import open_library

EXAMPLE_SPEC = Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml"


@pytest.fixture
def db(backend_db, run_cli):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    assert run_cli("--db", backend_db, "approved", "create", "line-a").exit_code == 0
    assert run_cli("--db", backend_db, "approved", "set", "line-a", "Z5V1-B", "approved",
                   "--reason", "qualified, report 17").exit_code == 0
    return backend_db


@pytest.fixture
def spec(tmp_path) -> Path:
    path = tmp_path / "rail.toml"
    shutil.copy(EXAMPLE_SPEC, path)
    return path


def _save(run_cli, db, spec, *more, name="bias-5v", stack="Z5V1-B", reason="first build"):
    return run_cli("--db", db, "designs", "save", name, "--spec", spec, "--stack", stack, "--reason", reason, *more)


def _reopened(db):
    library = open_library(db)
    return library, latest_revisions(library)


def test_save_list_show_and_export(run_cli, db, spec, tmp_path):
    result = _save(run_cli, db, spec, "--list", "line-a", "--by", "D. Eng")
    library, revisions = _reopened(db)
    assert result.exit_code == 0, result.output
    assert result.stdout == (
        "saved 'bias-5v' revision 1: Z5V1-B with 510 Ω; meets the spec at every corner\n"
        f"library content sha256 {library_content_hash(library)}\n")
    assert result.stderr == ""
    assert [(r.name, r.revision, r.saved_by, r.content.list_name) for r in revisions] == [("bias-5v", 1, "D. Eng", "line-a")]

    second = _save(run_cli, db, spec, "--resistor", "390", stack="D-SCH3 + Z4V7-A", reason="second source")
    assert second.stdout.startswith("saved 'bias-5v' revision 2: D-SCH3 + Z4V7-A with 390 Ω; feasible, but outside")
    listed = run_cli("--db", db, "designs", "list").stdout.splitlines()
    assert listed[0].split() == ["design", "rev", "saved", "by", "design", "stack", "verdict", "at", "save"]
    assert listed[1].startswith("bias-5v  2 ") and "D-SCH3 + Z4V7-A with 390 Ω" in listed[1]

    shown = run_cli("--db", db, "designs", "show", "bias-5v", "--revision", "1")
    assert shown.exit_code == 0
    lines = [" ".join(line.split()) for line in shown.stdout.splitlines()]
    assert lines[0] == "design bias-5v, revision 1 of 2"
    assert "resistor 510 Ω (chosen from the spec's series)" in lines
    assert any(line.startswith("spec ") and f"{spec}, sha256 " in line and "options: --list line-a" in line
               for line in lines)
    assert any("on 'line-a': approved (qualified, report 17), since " in line for line in lines)

    out = tmp_path / "designs.csv"
    exported = run_cli("--db", db, "designs", "export", out, "--all-revisions")
    assert exported.stdout == f"wrote 2 revision(s) to {out}\n"
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    assert [(row["design"], row["revision"], row["stack"]) for row in rows] == [
        ("bias-5v", "1", "Z5V1-B"), ("bias-5v", "2", "D-SCH3 + Z4V7-A")]
    saved = revision_history(library, "bias-5v")
    assert float(rows[0]["error_v"]) == saved[0].content.figures["error_v"]  # exact
    assert rows[1]["resistor_chosen"] == "false" and rows[0]["spec_options"] == "'--list line-a"
    latest_only = run_cli("--db", db, "designs", "export", "-")
    assert latest_only.stdout.count("\n") == 2
    library.close()


def test_verify_holds_then_exits_3_after_a_ban(run_cli, db, spec):
    assert _save(run_cli, db, spec, "--list", "line-a").exit_code == 0
    holds = run_cli("--db", db, "designs", "verify")
    assert holds.exit_code == 0
    assert holds.stdout.splitlines()[0].endswith("holds, unchanged since the save")
    assert holds.stdout.splitlines()[-2:] == ["verified 1 saved design(s): 1 hold, 0 fail",
                                              "audit trail: hash chain not checked (this library keeps none)"]

    banned = run_cli("--db", db, "approved", "set", "line-a", "Z5V1-B", "banned", "--reason", "supplier discontinued")
    assert banned.stdout == (
        "line-a: change Z5V1-B: approved \u2192 banned\n"
        "line-a: Z5V1-B is now banned in the saved design(s) 'bias-5v' (revision 1); "
        "'railwright designs verify bias-5v' fails them until they are saved without it\n")
    fails = run_cli("--db", db, "designs", "verify", "bias-5v")
    assert fails.exit_code == 3
    lines = fails.stdout.splitlines()
    assert lines[0].endswith("FAILS, changed since the save")
    assert lines[1:4] == [
        "  verdict: meets the spec at every corner \u2192 uses parts its list does not allow; meets the spec at every corner",
        "  status: Z5V1-B on 'line-a': approved (qualified, report 17) \u2192 banned (supplier discontinued)",
        "  not allowed: Z5V1-B is banned on the list 'line-a': supplier discontinued",
    ]
    assert lines[-2] == "verified 1 saved design(s): 0 hold, 1 fail"


def test_verify_exits_3_after_a_data_change(run_cli, db, spec, tmp_path):
    assert _save(run_cli, db, spec).exit_code == 0
    edit = tmp_path / "edit.csv"
    edit.write_text("part,family,vz_v,izt_a,zzt_ohm,izk_a,zzk_ohm,vz_tol_pct,tc_v_per_k,pd_w,description,package,"
                    "tnom_c,tj_max_c,tc_tol_v_per_k,source\nZ5V1-B,zener,5.1,12m,8.16,1.2m,133,10,-0.9m,1.2,"
                    "5.1 V zener; 1.2 W class,axial plastic,25,150,0.19m,invented demo data\n", encoding="utf-8")
    assert run_cli("--db", db, "parts", "import", edit).exit_code == 0
    result = run_cli("--db", db, "designs", "verify")
    assert result.exit_code == 3
    lines = result.stdout.splitlines()
    assert "  data: Z5V1-B: description 5.1 V zener, 1.2 W plastic class \u2192 5.1 V zener; 1.2 W class" in lines
    assert "  data: Z5V1-B: vz_tol_pct 5.0 \u2192 10.0" in lines
    assert "  verdict: meets the spec at every corner \u2192 not feasible (bias)" in lines
    # The verdict names what fails, as check does.
    fails = lines.index("  verdict: meets the spec at every corner \u2192 not feasible (bias)") + 1
    assert lines[fails].startswith("  fails: ") and any(line.startswith("  fails: Z5V1-B current ") and
                                                       " below its knee 1.2 mA at corners " in line for line in lines)
    assert any(line.startswith("  figure: error_v ") for line in lines)


def test_removal_is_refused_naming_the_designs(run_cli, db, spec):
    assert _save(run_cli, db, spec, name="bias-5v").exit_code == 0
    assert _save(run_cli, db, spec, name="clamp", stack="Z5V1-B + D-SIG1").exit_code == 0
    run_cli("--db", db, "approved", "drop", "line-a", "Z5V1-B", "--reason", "off the list")
    result = run_cli("--db", db, "parts", "remove", "Z5V1-B", "--reason", "end of life")
    assert result.exit_code == 1
    assert result.stderr == (
        "Error: cannot remove Z5V1-B: the saved design(s) 'bias-5v' (revision 1), 'clamp' (revision 1) use it; "
        "mark it banned or no-new-design on its lists instead (the saved snapshots keep its data either way)\n")
    library, revisions = _reopened(db)
    assert library.part_record("Z5V1-B")["vz_v"] == 5.1 and len(revisions) == 2
    assert not [event for event in history(library, part="Z5V1-B") if event["action"] == "part removed"]
    library.close()
    shown = run_cli("--db", db, "parts", "show", "Z5V1-B").stdout.splitlines()
    assert " ".join(shown[-1].split()) == "used by saved designs 'bias-5v' (revision 1), 'clamp' (revision 1)"
    assert run_cli("--db", db, "parts", "show", "Z4V7-A").stdout.splitlines()[-1].endswith("  none")


def test_history_shows_design_saves(run_cli, db, spec):
    assert _save(run_cli, db, spec, "--by", "D. Eng").exit_code == 0
    lines = run_cli("--db", db, "history").stdout.splitlines()
    assert lines[-1].endswith("  D. Eng  design saved: 'bias-5v' revision 1: Z5V1-B with 510 Ω; "
                              "meets the spec at every corner; why: first build")


def test_a_negative_verdict_is_saved_with_warnings(run_cli, db, spec):
    result = _save(run_cli, db, spec, "--list", "line-a", stack="Z5V1-B + D-SCH1")
    assert result.exit_code == 0
    assert result.stderr == (
        "Warning: D-SCH1 is not on the list 'line-a'\n"
        "Warning: 'bias-5v' is saved with a negative verdict; 'designs verify' will fail it\n")
    assert "uses parts its list does not allow; feasible, but outside the tolerance window" in result.stdout
    assert run_cli("--db", db, "designs", "verify").exit_code == 3


@pytest.mark.parametrize(("arguments", "code", "message"), [
    (["save", "bias-5v", "--stack", "Z5V1-B"], 2, "Error: --reason: missing; every save of a design needs a reason"),
    (["save", "bias-5v", "--stack", "NOPE", "--reason", "x"], 1, None),
    (["save", "bias-5v", "--stack", "2*", "--reason", "x"], 2, "Error: --stack: term 1 '2*' is not [COUNT*]PART, e.g. '2*D1'"),
    (["save", " ", "--stack", "Z5V1-B", "--reason", "x"], 2, "Error: NAME: empty; give the saved design a name"),
    (["save", "bias-5v", "--stack", "Z5V1-B", "--reason", "x", "--supply-min", "5mA"], 2, None),
    (["show", "nope"], 1, "Error: unknown saved design 'nope' (the library has no saved designs yet)"),
    (["verify", "nope"], 1, "Error: unknown saved design 'nope' (the library has no saved designs yet)"),
    (["show", "bias-5v", "--revision", "0"], 2,
     "Error: Invalid value for '--revision': 0 is not in the range x>=1. (see 'railwright designs show --help')"),
])
def test_bad_input_is_one_line_and_saves_nothing(run_cli, db, spec, arguments, code, message):
    with_spec = ["--spec", str(spec)] if arguments[0] == "save" else []
    result = run_cli("--db", db, "designs", *arguments, *with_spec)
    assert result.exit_code == code, result.output
    assert result.stderr.count("\n") == 1 and result.stderr.startswith("Error: ") and "Traceback" not in result.output
    if message is not None:
        assert result.stderr.strip() == message
    library, revisions = _reopened(db)
    assert revisions == []
    library.close()


def test_a_bad_spec_file_names_the_file(run_cli, db, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[rail]\ntarget = "5 V"\n', encoding="utf-8")
    result = run_cli("--db", db, "designs", "save", "x", "--spec", bad, "--stack", "Z5V1-B", "--reason", "x")
    assert result.exit_code == 1 and result.stderr.startswith(f"Error: {bad}: ")


def test_verify_with_no_designs_and_help_examples(run_cli, db):
    assert run_cli("--db", db, "designs", "verify").stdout == "no saved designs to verify\n"
    assert run_cli("--db", db, "designs", "list").stdout.startswith("no saved designs")
    for command in ("save", "list", "show", "export", "verify"):
        shown = run_cli("designs", command, "--help")
        assert shown.exit_code == 0 and "railwright designs " + command in shown.stdout, command
