"""A parts row checked cell by cell into a record: each numeric column's kind and allowed
range (:data:`RULES`), the text columns' limits, each family's required columns and the
checks that involve two columns. Every problem is reported, ``FILE:LINE: column: message``.
"""

from __future__ import annotations

import math
import unicodedata
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from selector.catalog.models import (
    DESCRIPTION_LENGTH,
    PACKAGE_LENGTH,
    RECORD_COLUMNS,
    SOURCE_LENGTH,
)
from selector.errors import InputDataError
from selector.files.csv_cells import restore_cell
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
        library before it is checked whole (:func:`selector.catalog.parts_import.merged_records`), so here only the
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
    for message in completeness_problems(record):
        column = message.split(":", 1)[0]
        if column not in flagged and (present is None or column in present):
            errors.append(message)
    return record, errors


def completeness_problems(record: Mapping[str, object]) -> list[str]:
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
