"""Reading parts CSV files (and partial ones: the columns a file has, ``parts set``) into validated records.

A parts CSV (DESIGN §4) has one part per row and the contract columns in any order;
``source`` and ``model_extra`` are also read, anything else is warned about and ignored.
Every numeric cell is a plain number in the column's unit or a quantity with prefix and
unit, read by :mod:`selector.spec.units`; an empty cell means "not given".

Validation looks at every cell of every row and reports **all** problems, one per line,
as ``FILE:LINE: column: message``, in a single :class:`~selector.errors.InputDataError`;
nothing is written unless the whole file is valid. The cell and record checks are
:mod:`selector.catalog.part_validation`; what an import would change,
:mod:`selector.catalog.import_plan`.
"""

from __future__ import annotations

import csv
import hashlib
import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from selector.catalog.import_plan import ImportPlan  # noqa: F401  (re-exported: what an import returns)
from selector.catalog.models import RECORD_COLUMNS
from selector.catalog.part_validation import (
    KNOWN_COLUMNS,
    RULES,  # noqa: F401  (re-exported: the numeric columns' kinds and ranges)
    RawRow,
    completeness_problems,
    validate_rows,
)
from selector.errors import InputDataError, OptionError
from selector.files.input_files import InputFileProblem, read_bounded
from selector.spec import units

#: A parts file larger than this is refused before it is read [bytes].
MAX_FILE_BYTES = 64 * 1024 * 1024
#: More rows than this in one file is refused. Validation holds every row in memory
#: (about 1.7 kB a row), and one import is one transaction, so the limit bounds both.
MAX_ROWS = 100_000


@dataclass(frozen=True)
class PartsFile:
    """A validated parts file: its records, warnings and identity for the import log.

    ``columns`` are the columns the file has (None: every column, as a model card or a
    fit gives a whole record). A column the file lacks leaves that field of an existing
    part unchanged (DESIGN §4), so such a record is complete only once merged with the
    library's (:func:`merged_records`); ``lines`` are the records' lines in the file.
    """

    label: str
    sha256: str
    records: list[dict[str, object]]
    warnings: list[str] = field(default_factory=list)
    columns: frozenset[str] | None = None
    lines: tuple[int, ...] = ()


def merged_records(parts_file: PartsFile, existing: Mapping[str, Mapping[str, object]]) -> list[dict[str, object]]:
    """The file's records with every column the file lacks taken from the library's part
    of the same id (a new part keeps None: the default), checked whole.

    Raises
    ------
    InputDataError
        One line per problem of a merged record, ``FILE:LINE: column: message``.
    """
    if parts_file.columns is None:
        return parts_file.records
    merged, errors = [], []
    for number, record in enumerate(parts_file.records):
        current = existing.get(str(record["part"]))
        whole = dict(record) if current is None else {
            column: (record[column] if column in parts_file.columns else current.get(column)) for column in record}
        line = parts_file.lines[number] if number < len(parts_file.lines) else 0
        where = f"{parts_file.label}:{line}" if line else parts_file.label
        errors.extend(f"{where}: {message}" for message in completeness_problems(whole))
        merged.append(whole)
    if errors:
        raise InputDataError("\n".join(errors))
    return merged


def file_digest(data: bytes) -> str:
    """Hex SHA-256 of a file's bytes, for the import log."""
    return hashlib.sha256(data).hexdigest()


def read_input_bytes(path: str | Path) -> bytes:
    """A file's bytes, refusing missing, unreadable or oversized files with one line."""
    try:
        return read_bounded(path, MAX_FILE_BYTES)
    except InputFileProblem as problem:
        raise InputDataError(f"{path}: {problem}") from None


def decode_text(data: bytes, label: str) -> str:
    """UTF-8 text of a file (a leading byte-order mark is dropped)."""
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise InputDataError(
            f"{label}: not UTF-8 text (byte {error.start}); save the file as UTF-8 CSV"
        ) from None


def read_csv_rows(
    text: str, label: str, required: Sequence[str] = ("part", "family")
) -> tuple[list[str], list[RawRow], list[str]]:
    """Split CSV text into its header and rows, with warnings for unknown columns.

    A header with semicolons and no commas is read as semicolon-separated, as some
    spreadsheet programs export it.

    Returns
    -------
    columns : list of str
        Normalised (stripped, lower-case) header names.
    rows : list of RawRow
        Non-blank rows with their line numbers.
    warnings : list of str
    """
    first_line = text.split("\n", 1)[0]
    delimiter = ";" if ";" in first_line and "," not in first_line else ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True)
    errors: list[str] = []
    try:
        header = next(reader, None)
        if header is None or not any(cell.strip() for cell in header):
            raise InputDataError(f"{label}:1: no header row; the first row must name the columns")
        columns = [cell.strip().lower() for cell in header]
        warnings = []
        for position, name in enumerate(columns):
            if name and name in columns[:position]:
                errors.append(f"{label}:1: {name}: column appears twice")
            elif name and name not in KNOWN_COLUMNS:
                warnings.append(f"{label}:1: {name}: not a parts column; ignored")
        for name in required:
            if name not in columns:
                errors.append(f"{label}:1: {name}: column missing")
        rows = []
        for cells in reader:
            if not any(cell.strip() for cell in cells):
                continue
            line = reader.line_num
            if len(rows) >= MAX_ROWS:
                raise InputDataError(
                    f"{label}:{line}: more than {MAX_ROWS:,} rows; a parts file holds at most "
                    f"{MAX_ROWS:,} parts, so split it into several files"
                )
            if len(cells) > len(columns) and any(cell.strip() for cell in cells[len(columns):]):
                errors.append(f"{label}:{line}: row has {len(cells)} cells, the header names {len(columns)}")
                continue
            rows.append(RawRow(line, {name: cell for name, cell in zip(columns, cells, strict=False) if name}))
    except csv.Error as error:
        raise InputDataError(f"{label}:{reader.line_num}: not readable as CSV ({error})") from None
    if errors:
        raise InputDataError("\n".join(errors))
    return columns, rows, warnings


def load_parts_csv(path: str | Path) -> PartsFile:
    """Read and validate a parts CSV file.

    Raises
    ------
    InputDataError
        For an unreadable file (one line) or invalid content (one line per problem).
    """
    label = str(path)
    data = read_input_bytes(path)
    columns, rows, warnings = read_csv_rows(decode_text(data, label), label)
    present = frozenset(columns) & frozenset(KNOWN_COLUMNS)
    whole = present >= frozenset(RECORD_COLUMNS)
    records = validate_rows(rows, label, None if whole else present)
    # A record the file gives whole is checked for plausibility now; one completed from
    # the library keeps the data it was checked with.
    given_whole = [record for record in records if not completeness_problems(record)]
    return PartsFile(label, file_digest(data), records, warnings + data_warnings(given_whole, label),
                     columns=None if whole else present, lines=tuple(row.line for row in rows))  # fmt: skip


def data_warnings(records: Sequence[Mapping[str, object]], label: str) -> list[str]:
    """``label: PART: warning`` for every valid record whose derived figures are suspect
    (:func:`selector.physics.part_checks.plausibility_warnings`)."""
    from selector.physics.part_checks import plausibility_warnings
    from selector.physics.partset import PartSet

    parts = PartSet.from_records(records)
    return [f"{label}: {records[index]['part']}: {message}" for index, message in plausibility_warnings(parts)]


def setting_file(part: str, family: str, settings: Mapping[str, str], label: str) -> PartsFile:
    """A one-row partial parts file of ``COLUMN=VALUE`` settings of one existing part
    (``parts set``): checked cell by cell now, and whole once merged with the library's
    record (:func:`merged_records`). ``family`` is the part's own unless a setting
    changes it."""
    cells = {"part": part, "family": family, **settings}
    present = frozenset(cells)
    records = validate_rows([RawRow(0, cells)], label, present)
    digest = file_digest("\n".join(f"{column}={value}" for column, value in sorted(cells.items())).encode())
    return PartsFile(label, digest, records, columns=present, lines=(0,))


def parse_column_settings(settings: Sequence[str], option: str = "--set") -> dict[str, str]:
    """Read ``COLUMN=VALUE`` option values into a mapping (values still text).

    Raises
    ------
    OptionError
        Naming the option and the setting that cannot be read.
    """
    values: dict[str, str] = {}
    for setting in settings:
        column, equals, value = setting.partition("=")
        column = column.strip().lower()
        if not equals or not column:
            raise OptionError(f"{option}: '{setting[:60]}' is not COLUMN=VALUE, e.g. pd_w=500m")
        if column not in KNOWN_COLUMNS or column == "part":
            import difflib

            nearest = difflib.get_close_matches(column, KNOWN_COLUMNS, n=1)
            hint = f" (did you mean {nearest[0]}?)" if nearest else ""
            raise OptionError(f"{option}: '{units.shown(column[:40])}' is not a parts column{hint}")
        values[column] = value.strip()
    return values
