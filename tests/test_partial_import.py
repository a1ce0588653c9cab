"""Partial imports (DESIGN §4, version 2): a column absent from the file leaves that field
of an existing part unchanged; an empty cell in a present column clears it. And
``init --demo`` only adds the demo parts a library lacks. On SQLite and PostgreSQL; the
demo parts are invented."""

from __future__ import annotations

import pytest

from selector.catalog.store import open_library


def _record(db, part):
    library = open_library(db, notify=lambda line: None)
    try:
        return library.part_record(part)
    finally:
        library.close()


def test_a_one_column_file_changes_that_column_alone(run_cli, backend_db, tmp_path):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    before = _record(backend_db, "Z5V1-A")
    edit = tmp_path / "edit.csv"
    edit.write_text("part,family,vz_tol_pct\nZ5V1-A,zener,2\n", encoding="utf-8")
    dry = run_cli("--db", backend_db, "parts", "import", edit, "--dry-run")
    assert dry.exit_code == 0
    assert dry.stdout.splitlines() == ["change Z5V1-A: vz_tol_pct: 5.0 → 2.0",
                                       f"dry run, nothing written: {edit}: 0 added, 1 changed, 0 unchanged"]
    assert _record(backend_db, "Z5V1-A") == before
    result = run_cli("--db", backend_db, "parts", "import", edit)
    assert result.stdout.splitlines() == [f"imported {edit}: 0 added, 1 changed, 0 unchanged",
                                          "  Z5V1-A: vz_tol_pct: 5.0 → 2.0"]
    after = _record(backend_db, "Z5V1-A")
    assert after == before | {"vz_tol_pct": 2.0}
    # Tjmax and θJA were absent from the file, so they are untouched (they once fell back to defaults).
    assert after["tj_max_c"] == before["tj_max_c"] and after["theta_ja_k_per_w"] == before["theta_ja_k_per_w"]


def test_an_empty_cell_in_a_present_column_clears_and_says_so(run_cli, backend_db, tmp_path):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    before = _record(backend_db, "Z5V1-A")
    edit = tmp_path / "clear.csv"
    edit.write_text("part,family,tc_tol_v_per_k\nZ5V1-A,zener,\n", encoding="utf-8")
    result = run_cli("--db", backend_db, "parts", "import", edit)
    assert result.stdout.splitlines()[1] == "  Z5V1-A: tc_tol_v_per_k: 0.00019 → (empty) (clears)"
    assert _record(backend_db, "Z5V1-A") == before | {"tc_tol_v_per_k": None}


def test_a_new_part_in_a_partial_file_must_still_be_whole(run_cli, backend_db, tmp_path):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    edit = tmp_path / "new.csv"
    edit.write_text("part,family,vz_tol_pct\nZ5V1-A,zener,2\nNEW-1,zener,5\n", encoding="utf-8")
    result = run_cli("--db", backend_db, "parts", "import", edit)
    assert result.exit_code == 1
    assert result.stderr.splitlines()[0] == f"Error: {edit}:3: vz_v: required for family zener"
    assert _record(backend_db, "Z5V1-A")["vz_tol_pct"] == 5.0  # all or nothing
    library = open_library(backend_db, notify=lambda line: None)
    assert "NEW-1" not in {record["part"] for record in library.part_records()}
    library.close()


def test_a_merged_record_is_checked_whole(run_cli, backend_db, tmp_path):
    # izk_a alone, above the stored izt_a: the merged record contradicts itself.
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    edit = tmp_path / "knee.csv"
    edit.write_text("part,family,izk_a\nZ5V1-A,zener,50m\n", encoding="utf-8")
    result = run_cli("--db", backend_db, "parts", "import", edit)
    assert result.exit_code == 1
    assert result.stderr == f"Error: {edit}:2: izk_a: knee current 50 mA must be below izt_a 3 mA\n"


def test_init_demo_adds_only_missing_demo_parts_and_keeps_edited_ones(run_cli, backend_db, tmp_path):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    edit = tmp_path / "edit.csv"
    edit.write_text("part,family,vz_tol_pct\nZ5V1-A,zener,2\n", encoding="utf-8")
    assert run_cli("--db", backend_db, "parts", "import", edit).exit_code == 0
    assert run_cli("--db", backend_db, "parts", "remove", "D-SIG1", "--reason", "test").exit_code == 0
    result = run_cli("--db", backend_db, "init", "--demo")
    assert result.stdout.splitlines()[0] == "demo sets: 1 added, 73 already in the library kept as they are"
    assert _record(backend_db, "Z5V1-A")["vz_tol_pct"] == 2.0
    assert _record(backend_db, "D-SIG1") is not None


def test_parts_set_changes_fields_with_the_import_checks_and_an_audit_line(run_cli, backend_db):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    before = _record(backend_db, "Z5V1-A")
    result = run_cli("--db", backend_db, "parts", "set", "Z5V1-A", "vz_tol_pct=2", "tj_max_c=150",
                     "--reason", "lot 7 grade", "--by", "A. Tester")
    assert result.exit_code == 0
    assert result.stdout == "changed Z5V1-A: vz_tol_pct: 5.0 → 2.0; tj_max_c: 175.0 → 150.0\n"
    assert _record(backend_db, "Z5V1-A") == before | {"vz_tol_pct": 2.0, "tj_max_c": 150.0}
    history = run_cli("--db", backend_db, "history").stdout.splitlines()
    assert history[-1].endswith("A. Tester  part changed  Z5V1-A: vz_tol_pct=5.0; tj_max_c=175.0 → "
                                "vz_tol_pct=2.0; tj_max_c=150.0; why: lot 7 grade")
    again = run_cli("--db", backend_db, "parts", "set", "Z5V1-A", "vz_tol_pct=2", "--reason", "again")
    assert again.stdout == "Z5V1-A: nothing changes (the values are the ones it has)\n"


@pytest.mark.parametrize(("arguments", "message"), [
    (["vz_tol=2", "--reason", "x"], "Error: COLUMN=VALUE: 'vz_tol' is not a parts column (did you mean vz_tol_pct?)\n"),
    (["izk_a=50m", "--reason", "x"],
     "Error: parts set Z5V1-A: izk_a: knee current 50 mA must be below izt_a 3 mA\n"),
    (["vz_tol_pct=2"], "Error: --reason: missing; say why the part's data changes, e.g. 'datasheet rev C'\n"),
    (["vz_tol_pct=2", "--reason", "two\nlines"], "Error: --reason: must be one line of at most 2000 printable "
                                                 "characters\n"),
])  # fmt: skip
def test_parts_set_refuses_in_one_line_and_changes_nothing(run_cli, backend_db, arguments, message):
    assert run_cli("--db", backend_db, "init", "--demo").exit_code == 0
    before = _record(backend_db, "Z5V1-A")
    result = run_cli("--db", backend_db, "parts", "set", "Z5V1-A", *arguments)
    assert result.exit_code in (1, 2)
    assert result.stderr == message
    assert _record(backend_db, "Z5V1-A") == before
