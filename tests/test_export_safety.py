"""Export safety: no CSV the tool writes holds a cell a spreadsheet would run as a formula.

The rule (``selector.files.csv_cells``): a text cell starting with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return — after any apostrophes already there — gets one leading
apostrophe; numbers are written as numbers; the import removes exactly that apostrophe.
The trigger characters are those of OWASP's *CSV Injection* page (community page).
All parts here are invented.
"""

from __future__ import annotations

import ast
import csv
import io
from pathlib import Path

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import selector
from selector.cli import main
from selector.files.csv_cells import FORMULA_TRIGGERS, neutralise_cell, restore_cell
from selector.files.csv_writer import write_rows

HYPERLINK = '=HYPERLINK("http://x","y")'
SPEC_OPTIONS = ["--target", "0.65", "--tolerance", "20%", "--supply-min", "4.5", "--supply-max", "5.5",
                "--load-min", "0", "--load-max", "1mA", "--ambient-min", "20", "--ambient-max", "30",
                "--max-parts", "1"]  # fmt: skip


def _library_with_formula_part(tmp_path) -> str:
    db = str(tmp_path / "library.sqlite")
    parts = tmp_path / "parts.csv"
    with open(parts, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(["part", "family", "description", "package", "source", "is_a", "n", "pd_w", "tc_v_per_k"])
        writer.writerow(["D-FX1", "signal", HYPERLINK, "@SUM(A1)", "+cmd|' /C calc'!A0", "2.5n", "1.9", "0.5", "-1.8m"])
    result = CliRunner().invoke(main, ["--db", db, "parts", "import", str(parts)])
    assert result.exit_code == 0, result.output
    return db


def _first_characters(path: Path) -> list[tuple[str, str]]:
    with open(path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    return [(column, value) for row in rows for column, value in row.items() if value]


def test_parts_export_neutralises_formulas_and_keeps_numbers(tmp_path):
    db = _library_with_formula_part(tmp_path)
    exported = tmp_path / "export.csv"
    assert CliRunner().invoke(main, ["--db", db, "parts", "export", str(exported)]).exit_code == 0
    (row,) = list(csv.DictReader(open(exported, newline="", encoding="utf-8")))
    assert row["description"] == "'" + HYPERLINK
    assert row["package"] == "'@SUM(A1)"
    assert row["source"] == "'+cmd|' /C calc'!A0"
    # Numbers stay numbers: a negative tempco is written bare, as a spreadsheet reads a number.
    assert row["tc_v_per_k"] == "-0.0018" and float(row["is_a"]) == 2.5e-9
    for column, value in _first_characters(exported):
        if column not in ("is_a", "n", "pd_w", "tc_v_per_k"):
            assert not value.startswith(FORMULA_TRIGGERS), (column, value)
    # Export → import is lossless: the library finds every part unchanged.
    again = CliRunner().invoke(main, ["--db", db, "parts", "import", str(exported), "--dry-run"])
    assert again.exit_code == 0 and "0 added, 0 changed, 1 unchanged" in again.output


def test_seek_csv_neutralises_formula_cells(tmp_path):
    db = _library_with_formula_part(tmp_path)
    shortlist = tmp_path / "shortlist.csv"
    result = CliRunner().invoke(main, ["--db", db, "seek", *SPEC_OPTIONS, "--csv", str(shortlist)])
    assert result.exit_code == 0, result.output
    cells = _first_characters(shortlist)
    assert cells, "the shortlist is empty"
    numeric = {"rank", "parts", "resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "margin",
               "i_min_a"}  # fmt: skip
    for column, value in cells:
        if column in numeric:
            float(value)  # numbers stay numbers
        else:
            assert not value.startswith(FORMULA_TRIGGERS), (column, value)


_TRIGGERED = st.builds(
    lambda apostrophes, trigger, rest: "'" * apostrophes + trigger + rest,
    st.integers(0, 3), st.sampled_from(FORMULA_TRIGGERS + ("", "a", " ")), st.text(max_size=20),
)


@settings(max_examples=2000, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(text=st.one_of(st.text(max_size=30), _TRIGGERED))
def test_neutralised_cells_never_start_with_a_trigger_and_restore_exactly(text):
    safe = neutralise_cell(text)
    assert not safe.startswith(FORMULA_TRIGGERS)
    assert restore_cell(safe) == text
    buffer = io.StringIO()
    write_rows(buffer, ["description"], [{"description": text}])
    (back,) = list(csv.DictReader(io.StringIO(buffer.getvalue(), newline="")))
    assert restore_cell(back["description"]) == text


def _csv_writers_outside_csv_safety() -> list[str]:
    """Every call that writes CSV (csv.writer, csv.DictWriter, DataFrame.to_csv) outside selector.files.csv_writer."""
    found = []
    root = Path(selector.__file__).parent
    for path in sorted(root.rglob("*.py")):
        if path.name == "csv_writer.py":
            continue
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Attribute) and node.attr in ("writer", "DictWriter", "to_csv", "writerow", "writerows"):
                found.append(f"{path.relative_to(root)}:{node.lineno}: {node.attr}")
    return found


def test_csv_safety_is_the_one_csv_writer():
    assert _csv_writers_outside_csv_safety() == []


def test_an_unwritable_csv_destination_is_one_line_and_leaves_nothing(tmp_path):
    import pytest

    from selector.errors import OptionError
    from selector.files.csv_writer import write_rows

    destination = tmp_path / "no such folder" / "out.csv"
    with pytest.raises(OptionError, match=r"^--csv: cannot write '.*out\.csv': No such file or directory$"):
        write_rows(destination, ["a"], [{"a": 1.0}])
    assert not destination.parent.exists()
