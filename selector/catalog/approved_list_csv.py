"""Approved-list CSV files: reading with every problem reported, and writing.

A list CSV has the columns ``part, status, reason, condition`` (any order; ``condition``
may be left out when no row is conditional). An export adds ``since`` and ``by`` and
the part's key parameters; an import reads those columns back without complaint and
ignores them, so an exported list imports again unchanged. Any other column is warned
about and ignored.

Every row is checked, including that its part is in the library, before anything is
written: all problems are reported together, one per line, as ``FILE:LINE: column:
message`` in one :class:`~selector.errors.InputDataError` (the same form as a parts CSV).
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field
from pathlib import Path

from selector.catalog.approved_lists import KEY_PARAMETERS, Entry, entry_problems, missing_parts
from selector.catalog.list_changes import ListPlan, apply_entries
from selector.catalog.parts_import import MAX_ROWS, decode_text, file_digest, read_input_bytes
from selector.errors import InputDataError
from selector.files.csv_cells import restore_cell
from selector.files.csv_writer import write_rows
from selector.spec.stack_notation import is_valid_part_id
from selector.spec.units import shown

#: Columns a list CSV must have, and the columns an export writes.
LIST_COLUMNS: tuple[str, ...] = ("part", "status", "reason", "condition")
EXPORT_COLUMNS: tuple[str, ...] = LIST_COLUMNS + ("since", "by") + KEY_PARAMETERS
_REQUIRED: tuple[str, ...] = ("part", "status", "reason")


@dataclass(frozen=True)
class ListFile:
    """A read list CSV: its wanted entries (with their lines), problems and warnings.

    ``problems`` are the rows' ``FILE:LINE: column: message`` lines; an import refuses
    the file when there is any.
    """

    label: str
    sha256: str
    entries: list[Entry]
    lines: list[int]
    problems: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


def _cell(cells: dict[str, str], column: str) -> str:
    return restore_cell(cells.get(column, "")).strip()


def parse_list_csv(text: str, label: str, sha256: str = "") -> ListFile:
    """Read a list CSV's text and check every row on its own (not yet against a library).

    Raises
    ------
    InputDataError
        When the file as a whole cannot be read: no header, a missing or repeated
        column, malformed CSV, too many rows. Row problems go to ``ListFile.problems``.
    """
    first_line = text.split("\n", 1)[0]
    delimiter = ";" if ";" in first_line and "," not in first_line else ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    errors: list[str] = []
    warnings: list[str] = []
    entries: list[Entry] = []
    lines: list[int] = []
    first_line_of: dict[str, int] = {}
    try:
        header = next(reader, None)
        if header is None or not any(cell.strip() for cell in header):
            raise InputDataError(f"{label}:1: no header row; the first row must name the columns")
        columns = [cell.strip().lower() for cell in header]
        for position, name in enumerate(columns):
            if name and name in columns[:position]:
                errors.append(f"{label}:1: {name}: column appears twice")
            elif name and name not in EXPORT_COLUMNS:
                warnings.append(f"{label}:1: {shown(name[:40])}: not a list column; ignored")
        errors += [f"{label}:1: {name}: column missing" for name in _REQUIRED if name not in columns]
        if errors:
            raise InputDataError("\n".join(errors))
        for row in reader:
            if not any(cell.strip() for cell in row):
                continue
            line = reader.line_num
            if len(entries) >= MAX_ROWS:
                raise InputDataError(f"{label}:{line}: more than {MAX_ROWS} rows")
            if len(row) > len(columns) and any(cell.strip() for cell in row[len(columns):]):
                errors.append(f"{label}:{line}: row has {len(row)} cells, the header names {len(columns)}")
                continue
            cells = {name: cell for name, cell in zip(columns, row, strict=False) if name}
            entry = Entry(_cell(cells, "part"), _cell(cells, "status").lower(), _cell(cells, "reason"),
                          _cell(cells, "condition"))
            problems = entry_problems(entry.status, entry.reason, entry.condition)
            if not entry.part:
                problems.insert(0, ("part", "missing"))
            elif not is_valid_part_id(entry.part):
                problems.insert(0, ("part", f"'{shown(entry.part[:70])}' is not a part id"))
            elif entry.part in first_line_of:
                problems.insert(0, ("part", f"'{entry.part}' appears twice (first on line {first_line_of[entry.part]})"))
            else:
                first_line_of[entry.part] = line
            errors += [f"{label}:{line}: {column}: {message}" for column, message in problems]
            entries.append(entry)
            lines.append(line)
    except csv.Error as error:
        raise InputDataError(f"{label}:{reader.line_num}: not readable as CSV ({error})") from None
    return ListFile(label, sha256, entries, lines, errors, warnings)


def load_list_csv(path: str | Path) -> ListFile:
    """Read and check a list CSV file (see :func:`parse_list_csv`)."""
    data = read_input_bytes(path)
    return parse_list_csv(decode_text(data, str(path)), str(path), file_digest(data))


def import_list_file(library, list_name: str, list_file: ListFile, *, by: str | None = None,
                     dry_run: bool = False) -> ListPlan:
    """Set a list's entries from a read list CSV, in one transaction, or refuse it whole.

    Raises
    ------
    InputDataError
        Every row problem and every part not in the library, one line each; nothing
        is written.
    UnknownListError
        When the list does not exist.
    """
    missing = missing_parts(library, [entry.part for entry in list_file.entries if is_valid_part_id(entry.part)])
    problems = list(list_file.problems) + [
        f"{list_file.label}:{line}: part: unknown part '{entry.part}' (not in the library)"
        for entry, line in zip(list_file.entries, list_file.lines, strict=True)
        if entry.part in missing
    ]
    if problems:
        problems.sort(key=lambda text: int(text[len(list_file.label) + 1 :].split(":", 1)[0]))
        raise InputDataError("\n".join(problems))
    return apply_entries(library, list_name, list_file.entries, by=by, dry_run=dry_run)


def write_list_csv(destination, rows, option: str = "--csv") -> int:
    """Write list entries (rows of :func:`~selector.catalog.approved_lists.list_entries`)
    with :data:`EXPORT_COLUMNS`, spreadsheet-safe; returns the row count."""
    return write_rows(destination, EXPORT_COLUMNS, rows, option)
