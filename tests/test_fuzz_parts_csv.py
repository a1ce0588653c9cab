"""Fuzzing ``railwright parts import``: hostile parts CSV files never crash or harm the library.

Generated files mix valid rows with malformed, truncated and oversized cells, NUL bytes,
huge and tiny exponents, NaN and inf spelled out, duplicate headers, formulas in cells,
semicolon separators and other encodings (Latin-1, UTF-16 with BOM). The property: the
command exits 0, or exits 1/2 with ``Error: `` lines that each name the file — never a
traceback — and after a failed call a full ``parts export`` is byte-identical to before.
After a successful call the library's export imports back unchanged. All parts invented.
"""

from __future__ import annotations

import io
import math

import pytest
from click.testing import CliRunner
from csv_fuzzing import assert_located_errors, spoiled_csv_bytes
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from selector.catalog.part_validation import KNOWN_COLUMNS, RULES
from selector.catalog.parts_export import write_parts_csv
from selector.catalog.parts_import import load_parts_csv
from selector.catalog.store import open_library
from selector.cli import main

CASES = settings(
    max_examples=2000,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large],
)

#: Cells a hostile or careless spreadsheet may hold.
HOSTILE_CELLS = [
    "", " ", "nan", "NaN", "inf", "-inf", "Infinity", "1e999", "1e-999", "1e9999999999", "-0",
    "=HYPERLINK(\"http://x\",\"y\")", "=1+1", "+1", "-1", "@SUM(A1)", "'=x", "''-5", "\t=1",
    "\x00", "D\x001", "é", "\u202e", "<script>alert(1)</script>", "x" * 600, "1" * 70,
    "2.5 nA", "500 mW", "5 mA", "1.8", "4k7", "-1.8 mV/K", "3 %", "150", "25 °C", "1e-14",
    "signal", "zener", "led", "ZENER", "diac", "\"", "\"\"", "a,b", "a\nb", "\r",
]  # fmt: skip
FAMILY_CELLS = ["signal", "rectifier", "schottky", "led", "zener", "Zener", "", "diac", "=zener"]
#: A valid zener and forward row to build on (invented values).
ZENER = {"family": "zener", "vz_v": "5.1 V", "izt_a": "5 mA", "zzt_ohm": "12", "izk_a": "250 uA",
         "zzk_ohm": "400", "pd_w": "0.5", "description": "invented fuzz zener"}  # fmt: skip
FORWARD = {"family": "signal", "is_a": "2.5 nA", "n": "1.9", "rs_ohm": "0.6", "pd_w": "0.4",
           "description": "invented fuzz diode"}  # fmt: skip

_COLUMN = st.one_of(st.sampled_from(KNOWN_COLUMNS), st.sampled_from(["", "Part", " PD_W ", "extra", "part", "=cmd"]))
_CELL = st.one_of(st.sampled_from(HOSTILE_CELLS), st.text(max_size=12))


@st.composite
def parts_files(draw) -> bytes:
    """Bytes of a parts CSV: mostly well-formed rows, each with a few cells spoiled."""
    base = draw(st.sampled_from([ZENER, FORWARD]))
    columns = ["part", *base]
    if draw(st.booleans()):
        columns = draw(st.permutations(columns))
        columns += draw(st.lists(_COLUMN, max_size=3))
    rows = []
    for number in range(draw(st.integers(min_value=0, max_value=4))):
        cells = {"part": f"FZ-{draw(st.integers(0, 9))}{number}", **base}
        for column in draw(st.lists(st.sampled_from(columns), max_size=3)):
            cells[column] = draw(_CELL)
        if draw(st.integers(0, 9)) == 0:
            cells["family"] = draw(st.sampled_from(FAMILY_CELLS))
        rows.append([cells.get(column, draw(_CELL)) for column in columns])
    return spoiled_csv_bytes(draw, columns, rows)


@pytest.fixture(scope="module")
def fuzz_library(tmp_path_factory):
    path = tmp_path_factory.mktemp("fuzz") / "library.sqlite"
    library = open_library(str(path))
    # The export after the last call: the "before" of the next one.
    state = {"export": full_export(library)}
    yield path, library, state
    library.close()


def full_export(library) -> str:
    buffer = io.StringIO()
    write_parts_csv(buffer, library.part_records())
    return buffer.getvalue()


def _records_are_sane(records) -> None:
    for record in records:
        for column, rule in RULES.items():
            value = record[column]
            assert value is None or (math.isfinite(value) and rule.problem(value) is None), (column, value)


@CASES
@given(data=parts_files())
# A zzt_ohm that underflows to 0 once reached the knee-exponent check and divided by it.
@example(data=b"part,family,vz_v,izt_a,zzt_ohm,izk_a,zzk_ohm,pd_w\nFZ-00,signal,5.1 V,5 mA,1e-999,250 uA,400,0.5\n")
def test_parts_import_of_any_file_is_clean_or_a_located_error_and_leaves_the_library_alone(fuzz_library, tmp_path_factory, data):
    path, library, state = fuzz_library
    csv_path = tmp_path_factory.getbasetemp() / "fuzz-parts.csv"
    csv_path.write_bytes(data)
    before = state["export"]
    result = CliRunner().invoke(main, ["--db", str(path), "parts", "import", str(csv_path)])
    output = result.output
    assert "Traceback" not in output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    after = state["export"] = full_export(library)
    if result.exit_code == 0:
        assert output.startswith("imported ") or "Warning: " in output
        _records_are_sane(library.part_records())
        # What was written exports and imports back without a change.
        exported = tmp_path_factory.getbasetemp() / "fuzz-export.csv"
        exported.write_text(after, encoding="utf-8")
        plan = library.import_parts_file(load_parts_csv(exported), dry_run=True)
        assert plan.added == [] and plan.changed == []
    else:
        assert_located_errors(result.exit_code, output, csv_path)
        assert after == before
