"""Fuzzing ``railwright approved import``: hostile list CSV files never crash or harm the library.

Generated files mix valid rows (parts of the invented demo library, known statuses) with
unknown and malformed part ids, unknown statuses, conditions on the wrong status, missing
reasons, oversized, truncated and formula cells, NUL bytes, numbers spelled as NaN or inf,
duplicate and missing headers, semicolon separators and other encodings (Latin-1, UTF-16
with BOM). The property: the command exits 0, or exits 1/2 with ``Error: `` lines that
each name the file — never a traceback — and after a failed call the list's full export
and the audit history are byte-identical to before. After a successful call the list's
export imports back unchanged.
"""

from __future__ import annotations

import io

import pytest
from click.testing import CliRunner
from csv_fuzzing import assert_located_errors, spoiled_csv_bytes
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from selector.catalog.approved_list_csv import (
    EXPORT_COLUMNS,
    LIST_COLUMNS,
    import_list_file,
    load_list_csv,
)
from selector.catalog.approved_lists import list_entries
from selector.catalog.audit import history
from selector.catalog.store import open_library
from selector.cli import main
from selector.files.csv_writer import write_rows
from selector.spec.rail_spec import LIST_STATUSES

CASES = settings(
    max_examples=2000,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large],
)
LIST = "fuzz-line"
#: Parts of the bundled (invented) demo library, and ids that are not in it or not ids at all.
KNOWN_PARTS = ["Z5V1-A", "D-SIG1", "Z3V3-A", "Z6V8-A", "D-REC1"]
STRANGE_PARTS = ["NOT-THERE", "", " ", "z5v1-a", "Z5V1-A ", "=Z5V1-A", "a b", "x" * 200, "D\x00SIG1", "é-1",
                 "<script>", "\u202e", "nan", "inf", "-1", "1e999"]  # fmt: skip
STATUS_CELLS = [*LIST_STATUSES, "APPROVED", " banned ", "", "ok", "=approved", "nan", "approved\x00", "\t"]
HOSTILE_CELLS = [
    "", " ", "nan", "NaN", "inf", "-inf", "1e999", "1e-999", "=HYPERLINK(\"http://x\",\"y\")", "=1+1", "+1",
    "-1", "@SUM(A1)", "'=x", "\t=1", "\r", "\x00", "é", "\u202e", "<b>x</b>", "x" * 2500, "\"", "a,b", "a\nb",
    "ambient at most 40 °C", "qualified on line A", "invented reason",
]  # fmt: skip
_COLUMN = st.one_of(st.sampled_from(EXPORT_COLUMNS), st.sampled_from(["", "Part", " STATUS ", "extra", "part", "=cmd"]))
_CELL = st.one_of(st.sampled_from(HOSTILE_CELLS), st.text(max_size=12))


@st.composite
def list_files(draw) -> bytes:
    """Bytes of a list CSV: mostly well-formed rows, each with a few cells spoiled."""
    columns = list(LIST_COLUMNS)
    if draw(st.booleans()):
        columns = draw(st.permutations(columns))
        if draw(st.integers(0, 4)) == 0:
            columns.remove(draw(st.sampled_from(columns)))
        columns += draw(st.lists(_COLUMN, max_size=3))
    # A third of the files spoil nothing in their rows, so clean imports are exercised too.
    careful = draw(st.integers(0, 2)) == 0
    rows = []
    for part in draw(st.permutations(KNOWN_PARTS))[: draw(st.integers(min_value=0, max_value=5))]:
        status = draw(st.sampled_from(LIST_STATUSES))
        cells = {
            "part": part,
            "status": status,
            "reason": "invented fuzz reason",
            "condition": "ambient at most 40 °C" if status == "conditional" else "",
        }
        if not careful:
            if draw(st.integers(0, 4)) == 0:
                cells["part"] = draw(st.sampled_from(STRANGE_PARTS))
            if draw(st.integers(0, 4)) == 0:
                cells["status"] = draw(st.sampled_from(STATUS_CELLS))
            for column in draw(st.lists(st.sampled_from(columns), max_size=2)):
                cells[column] = draw(_CELL)
        rows.append([cells.get(column, draw(_CELL)) for column in columns])
    return spoiled_csv_bytes(draw, columns, rows, spoil=not careful)


def full_state(library) -> str:
    """The list's full export and every audit event, as text."""
    buffer = io.StringIO()
    write_rows(buffer, EXPORT_COLUMNS, list_entries(library, LIST))
    return buffer.getvalue() + repr(history(library))


@pytest.fixture(scope="module")
def fuzz_library(tmp_path_factory):
    path = tmp_path_factory.mktemp("fuzz-list") / "library.sqlite"
    runner = CliRunner()
    assert runner.invoke(main, ["--db", str(path), "init", "--demo"]).exit_code == 0
    assert runner.invoke(main, ["--db", str(path), "approved", "create", LIST, "--by", "F. Uzz"]).exit_code == 0
    library = open_library(str(path))
    state = {"export": full_state(library)}
    yield path, library, state
    library.close()


@CASES
@given(data=list_files())
def test_list_import_of_any_file_is_clean_or_a_located_error_and_leaves_the_library_alone(fuzz_library, tmp_path_factory, data):
    path, library, state = fuzz_library
    csv_path = tmp_path_factory.getbasetemp() / "fuzz-list.csv"
    csv_path.write_bytes(data)
    before = state["export"]
    result = CliRunner().invoke(main, ["--db", str(path), "approved", "import", LIST, str(csv_path), "--by", "F. Uzz"])
    output = result.output
    assert "Traceback" not in output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    after = state["export"] = full_state(library)
    event(f"exit {result.exit_code}")
    if result.exit_code == 0:
        assert f"imported {csv_path} into '{LIST}': " in output
        # What the list holds now exports and imports back without a change.
        exported = tmp_path_factory.getbasetemp() / "fuzz-list-export.csv"
        write_rows(exported, EXPORT_COLUMNS, list_entries(library, LIST))
        plan = import_list_file(library, LIST, load_list_csv(exported), dry_run=True)
        assert plan.added == [] and plan.changed == []
    else:
        assert_located_errors(result.exit_code, output, csv_path)
        assert after == before
