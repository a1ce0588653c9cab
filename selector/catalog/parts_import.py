"""Reading and validating parts CSV files, and planning what an import would change.

A parts CSV (DESIGN §4) has one part per row and the contract columns in any order;
``source`` and ``model_extra`` are also read, anything else is warned about and ignored.
Every numeric cell is a plain number in the column's unit or a quantity with prefix and
unit, read by :mod:`selector.spec.units`; an empty cell means "not given".

Validation looks at every cell of every row and reports **all** problems, one per line,
as ``FILE:LINE: column: message``, in a single :class:`~selector.errors.InputDataError`;
nothing is written unless the whole file is valid.
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
import unicodedata
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from selector.catalog.models import (
    DESCRIPTION_LENGTH,
    PACKAGE_LENGTH,
    RECORD_COLUMNS,
    SOURCE_LENGTH,
)
from selector.errors import InputDataError, OptionError
from selector.files.csv_cells import format_number, restore_cell
from selector.files.input_files import InputFileProblem, read_bounded
from selector.spec import units
from selector.spec.part_fields import (
    BREAKDOWN_FAMILIES,
    FAMILIES,
    MAX_KNEE_EXPONENT,
    NUMERIC_COLUMNS,
    REQUIRED_BREAKDOWN,
    REQUIRED_EXTRA,
    REQUIRED_FORWARD,
)
from selector.spec.stack_notation import is_valid_part_id

#: Why a field is required, where that is not obvious.
REQUIRED_WHY: dict[tuple[str, str], str] = {
    ("led", "eg_ev"): " (an LED's band gap sets its tempco; silicon's default 1.11 eV gives it the wrong sign)",
    ("led", "tj_max_c"): " (LEDs are rated far below the 150 °C default)",
}
#: A parts file larger than this is refused before it is read [bytes].
MAX_FILE_BYTES = 64 * 1024 * 1024
#: More rows than this in one file is refused. Validation holds every row in memory
#: (about 1.7 kB a row), and one import is one transaction, so the limit bounds both.
MAX_ROWS = 100_000


@dataclass(frozen=True)
class Rule:
    """What one numeric column holds: its kind of quantity and its allowed range.

    ``low``/``high`` are bounds in base SI units; ``low_open``/``high_open`` say whether
    the bound itself is excluded.
    """

    kind: units.Kind
    low: float
    high: float
    low_open: bool = False
    high_open: bool = False

    def problem(self, value: float) -> str | None:
        """Why ``value`` is out of range, or None when it is fine."""
        too_low = value <= self.low if self.low_open else value < self.low
        too_high = value >= self.high if self.high_open else value > self.high
        if not (too_low or too_high):
            return None
        shown = _shown(value, self.kind)
        if too_low and self.low == 0:
            return f"must be positive, not {shown}" if self.low_open else f"must not be negative, not {shown}"
        low, high = _shown(self.low, self.kind), _shown(self.high, self.kind)
        if too_low:
            return f"must be {'above' if self.low_open else 'at least'} {low}, not {shown}"
        return f"must be {'below' if self.high_open else 'at most'} {high}, not {shown}"


def _shown(value: float, kind: units.Kind) -> str:
    if kind.prefixable and kind.symbol:
        return units.format_quantity(value, kind.symbol)
    return f"{value:.6g} {kind.symbol}".strip()


#: Allowed ranges. Physical limits from the issue (currents positive, 1 ≤ n ≤ 4,
#: tj_max above 25 °C); the outer bounds only refuse values no real part has.
RULES: dict[str, Rule] = {
    "is_a": Rule(units.CURRENT, 0.0, 1.0, low_open=True, high_open=True),
    "n": Rule(units.DIMENSIONLESS, 1.0, 4.0),
    "rs_ohm": Rule(units.RESISTANCE, 0.0, 1e4),
    "eg_ev": Rule(units.ENERGY_EV, 0.0, 10.0, low_open=True),
    "xti": Rule(units.DIMENSIONLESS, -50.0, 50.0),
    "tnom_c": Rule(units.TEMPERATURE, -60.0, 200.0),
    "vf_tol_v": Rule(units.VOLTAGE, 0.0, 1.0),
    "vz_v": Rule(units.VOLTAGE, 0.0, 1000.0, low_open=True),
    "izt_a": Rule(units.CURRENT, 0.0, 100.0, low_open=True),
    "zzt_ohm": Rule(units.RESISTANCE, 0.0, 1e6, low_open=True),
    "izk_a": Rule(units.CURRENT, 0.0, 100.0, low_open=True),
    "zzk_ohm": Rule(units.RESISTANCE, 0.0, 1e8, low_open=True),
    "vz_tol_pct": Rule(units.PERCENT, 0.0, 50.0),
    "tc_v_per_k": Rule(units.VOLTAGE_TEMPCO, -1.0, 1.0),
    "tc_tol_v_per_k": Rule(units.VOLTAGE_TEMPCO, 0.0, 1.0),
    "pd_w": Rule(units.POWER, 0.0, 1e4, low_open=True),
    "tj_max_c": Rule(units.TEMPERATURE, 25.0, 400.0, low_open=True),
    "theta_ja_k_per_w": Rule(units.THERMAL_RESISTANCE, 0.0, 1e5, low_open=True),
    "if_max_a": Rule(units.CURRENT, 0.0, 1e4, low_open=True),
    "i_min_a": Rule(units.CURRENT, 0.0, 100.0),
}
assert tuple(RULES) == NUMERIC_COLUMNS

#: Longest accepted text of each free-text column [characters].
TEXT_LIMITS: dict[str, int] = {
    "description": DESCRIPTION_LENGTH,
    "package": PACKAGE_LENGTH,
    "source": SOURCE_LENGTH,
    "model_extra": 4000,
}

#: Every column an import reads; others are warned about.
KNOWN_COLUMNS: tuple[str, ...] = RECORD_COLUMNS


@dataclass(frozen=True)
class RawRow:
    """One row as read, before validation: its line in the file and its cells.

    Line 0 means the row comes from options rather than a file; messages then name the
    label alone.

    Cells are text (from a CSV) or numbers in base SI units (from a model card).
    """

    line: int
    cells: Mapping[str, object]


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
        errors.extend(f"{where}: {message}" for message in _completeness_problems(whole))
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


def _is_control(character: str) -> bool:
    """C0 and C1 control characters and the Unicode line and paragraph separators, all of
    which a terminal or ``str.splitlines`` may take for a line break or a command."""
    return unicodedata.category(character) in ("Cc", "Zl", "Zp")


def _printable(text: str, limit: int = 40) -> str:
    """Text for a message: control characters escaped, cut at ``limit`` characters."""
    escaped = "".join(repr(c)[1:-1] if _is_control(c) else c for c in text[:limit])
    return escaped + ("…" if len(text) > limit else "")


def _text_problem(text: str) -> str | None:
    if any(_is_control(character) for character in text):
        return "holds a control character"
    return None


def validate_rows(rows: Sequence[RawRow], label: str, present: frozenset[str] | None = None) -> list[dict[str, object]]:
    """Check every cell of every row; return the records, or raise with every problem.

    Parameters
    ----------
    rows : sequence of RawRow
        Cells by column name; a missing column is the same as an empty cell.
    label : str
        The file name shown in messages.
    present : frozenset of str, optional
        The columns the file has, when it lacks some: a record is then completed from the
        library before it is checked whole (:func:`merged_records`), so here only the
        problems of the columns it has are reported (None: every record is whole).

    Returns
    -------
    list of dict
        One record per row with every column of :data:`KNOWN_COLUMNS`: numbers in base
        SI units or None, family in lower case, text stripped.

    Raises
    ------
    InputDataError
        One line per problem, ``FILE:LINE: column: message``.
    """
    errors: list[str] = []
    records = []
    first_line_of: dict[str, int] = {}
    for row in rows:
        record, row_errors = _validate_row(row, first_line_of, present)
        where = f"{label}:{row.line}" if row.line else label
        errors.extend(f"{where}: {message}" for message in row_errors)
        records.append(record)
    if errors:
        raise InputDataError("\n".join(errors))
    return records


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and math.isnan(value):
        return ""
    return restore_cell(str(value)).strip() if isinstance(value, str) else str(value)


def _validate_row(row: RawRow, first_line_of: dict[str, int],
                  present: frozenset[str] | None = None) -> tuple[dict[str, object], list[str]]:  # fmt: skip
    errors: list[str] = []
    cells = row.cells
    record: dict[str, object] = {}

    part = _cell_text(cells.get("part"))
    if not part:
        errors.append("part: missing")
    elif not is_valid_part_id(part):
        errors.append(
            f"part: '{_printable(part, 70)}' is not a part id (1–64 letters, digits or . _ - /, "
            "starting with a letter or digit)"
        )
    elif part in first_line_of:
        errors.append(f"part: '{part}' appears twice (first on line {first_line_of[part]})")
    else:
        first_line_of[part] = row.line
    record["part"] = part

    family = _cell_text(cells.get("family")).lower()
    if not family:
        errors.append("family: missing")
    elif family not in FAMILIES:
        errors.append(f"family: unknown family '{_printable(family)}'; expected one of {', '.join(FAMILIES)}")
    record["family"] = family

    for column, limit in TEXT_LIMITS.items():
        text = _cell_text(cells.get(column))
        problem = _text_problem(text) or (f"longer than {limit} characters" if len(text) > limit else None)
        if problem:
            errors.append(f"{column}: {problem}")
        record[column] = text
    record["model_extra"] = record["model_extra"] or None

    for column, rule in RULES.items():
        raw = cells.get(column)
        text = _cell_text(raw) if isinstance(raw, str) or raw is None else raw
        if text == "":
            record[column] = None
            continue
        try:
            value = units.parse_quantity(text, rule.kind)
        except units.QuantityError as error:
            errors.append(f"{column}: {error}")
            record[column] = None
            continue
        problem = rule.problem(value)
        if problem:
            errors.append(f"{column}: {problem}")
        record[column] = value

    flagged = {message.split(":", 1)[0] for message in errors}
    for message in _completeness_problems(record):
        column = message.split(":", 1)[0]
        if column not in flagged and (present is None or column in present):
            errors.append(message)
    return record, errors


def _completeness_problems(record: Mapping[str, object]) -> list[str]:
    """What a whole record lacks or contradicts: its family's required columns, and the
    checks that involve two columns."""
    problems = []
    family = record.get("family")
    if family in FAMILIES:
        required = REQUIRED_BREAKDOWN if family in BREAKDOWN_FAMILIES else REQUIRED_FORWARD
        required += REQUIRED_EXTRA.get(family, ())
        problems += [f"{column}: required for family {family}{REQUIRED_WHY.get((family, column), '')}"
                     for column in required if record.get(column) is None]  # fmt: skip
    return problems + _cross_problems(record)


def _cross_problems(record: Mapping[str, object]) -> list[str]:
    """Checks that involve two columns: the knee lies below the test point."""
    problems = []
    izt, izk = record.get("izt_a"), record.get("izk_a")
    if izt is not None and izk is not None and not izk < izt:
        problems.append(
            f"izk_a: knee current {_shown(izk, units.CURRENT)} must be below "
            f"izt_a {_shown(izt, units.CURRENT)}"
        )
    zzt, zzk = record.get("zzt_ohm"), record.get("zzk_ohm")
    if zzt is not None and zzk is not None and not zzk >= zzt:
        problems.append(
            f"zzk_ohm: knee impedance {_shown(zzk, units.RESISTANCE)} must be at least "
            f"zzt_ohm {_shown(zzt, units.RESISTANCE)}"
        )
    elif None not in (zzt, zzk, izt, izk) and 0 < izk < izt and zzt > 0 and zzk > zzt * (izt / izk) ** MAX_KNEE_EXPONENT:
        knee = math.log(zzk / zzt) / math.log(izt / izk)
        problems.append(
            f"zzk_ohm: knee exponent ln(zzk/zzt)/ln(izt/izk) = {knee:.3g} is above {MAX_KNEE_EXPONENT:g}: no real "
            "zener's impedance rises that steeply below its test current (check zzk_ohm and izk_a)"
        )
    return problems


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
    given_whole = [record for record in records if not _completeness_problems(record)]
    return PartsFile(label, file_digest(data), records, warnings + data_warnings(given_whole, label),
                     columns=None if whole else present, lines=tuple(row.line for row in rows))  # fmt: skip


def data_warnings(records: Sequence[Mapping[str, object]], label: str) -> list[str]:
    """``label: PART: warning`` for every valid record whose derived figures are suspect
    (:func:`selector.physics.part_checks.plausibility_warnings`)."""
    from selector.physics.part_checks import plausibility_warnings
    from selector.physics.partset import PartSet

    parts = PartSet.from_records(records)
    return [f"{label}: {records[index]['part']}: {message}" for index, message in plausibility_warnings(parts)]


@dataclass(frozen=True)
class FieldChange:
    """One column of a part that an import changes."""

    column: str
    old: object
    new: object

    def describe(self) -> str:
        """``column: old → new`` with exact numbers, ``(empty)`` for not given."""
        clears = " (clears)" if self.new in (None, "") and self.old not in (None, "") else ""
        return f"{self.column}: {_plain(self.old)} \u2192 {_plain(self.new)}{clears}"


def _plain(value: object) -> str:
    if value is None or value == "":
        return "(empty)"
    if isinstance(value, float):
        return format_number(value)
    return repr(value) if isinstance(value, str) and value.strip() != value else str(value)


@dataclass
class ImportPlan:
    """What an import does: parts added, parts changed (with their changes), unchanged."""

    added: list[dict[str, object]] = field(default_factory=list)
    changed: list[tuple[dict[str, object], list[FieldChange]]] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)

    def summary(self) -> str:
        """One line: how many parts are added, changed and unchanged."""
        return f"{len(self.added)} added, {len(self.changed)} changed, {len(self.unchanged)} unchanged"

    def lines(self) -> list[str]:
        """Every part's fate, one line each; unchanged parts on one line."""
        out = [f"add {record['part']} ({record['family']})" for record in self.added]
        for record, changes in self.changed:
            out.append(f"change {record['part']}: " + "; ".join(change.describe() for change in changes))
        if self.unchanged:
            out.append("unchanged: " + ", ".join(self.unchanged))
        return out


def _same(old: object, new: object) -> bool:
    if old is None or new is None:
        return old is None and new is None
    if isinstance(old, float) or isinstance(new, float):
        return float(old) == float(new)
    return old == new


def plan_changes(
    existing: Mapping[str, Mapping[str, object]], incoming: Iterable[Mapping[str, object]]
) -> ImportPlan:
    """Compare incoming records with the library's, part by part.

    Parameters
    ----------
    existing : mapping of part id → record
        The library's current records.
    incoming : iterable of records
        Validated records (see :func:`validate_rows`).
    """
    plan = ImportPlan()
    for record in incoming:
        current = existing.get(record["part"])
        if current is None:
            plan.added.append(dict(record))
            continue
        changes = [
            FieldChange(column, current.get(column), record.get(column))
            for column in RECORD_COLUMNS
            if not _same(current.get(column), record.get(column))
        ]
        if changes:
            plan.changed.append((dict(record), changes))
        else:
            plan.unchanged.append(str(record["part"]))
    return plan


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
