"""Spreadsheet-safe CSV cells: neutralising text a spreadsheet would run as a formula.

Every CSV the tool writes (parts, approved lists, shortlists, history) passes its text
cells through :func:`neutralise_cell`. A text cell that begins with ``=``, ``+``, ``-``,
``@``, a tab or a carriage return gets a leading apostrophe, which spreadsheet programs
show as text rather than evaluate. Numbers are never touched, so ``-0.0018`` stays a
number. On import, :func:`restore_cell` removes exactly that apostrophe again, so an
export → import round trip is lossless.

References
----------
.. [1] OWASP, *CSV Injection* (community page), mitigation by prefixing a single quote
       to cells that begin with the formula trigger characters.
"""

from __future__ import annotations

import contextlib
import csv
import io
import math
import sys
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import TextIO

from selector.errors import OptionError

FORMULA_TRIGGERS: tuple[str, ...] = ("=", "+", "-", "@", "\t", "\r")


def neutralise_cell(value: object) -> object:
    """Prefix an apostrophe to text a spreadsheet would evaluate; leave others alone."""
    if isinstance(value, str) and value.lstrip("'").startswith(FORMULA_TRIGGERS):
        # Text already starting with apostrophes before a trigger gets one more, so that
        # restore_cell can always remove exactly one.
        return "'" + value
    return value


def restore_cell(text: str) -> str:
    """Undo :func:`neutralise_cell` on a text cell read back from a CSV."""
    if text.startswith("'") and text.lstrip("'").startswith(FORMULA_TRIGGERS):
        return text[1:]
    return text


def format_number(value: float) -> str:
    """Shortest text that reads back to exactly the same float (``repr``); empty for NaN."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    return repr(float(value))


def _cell(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, (bool, int, float)):
        return format_number(value)
    if hasattr(value, "item"):  # numpy scalar
        return _cell(value.item())
    return str(neutralise_cell(str(value)))


def write_rows(
    destination: str | Path | TextIO,
    columns: Sequence[str],
    rows: Iterable[Mapping[str, object]],
) -> int:
    """Write mappings as CSV with safe cells and exact floats; returns the row count.

    Parameters
    ----------
    destination : path or text stream
        A file path (written as UTF-8, replaced only once complete), ``"-"`` for standard
        output, or an open stream. An unwritable path raises ``OptionError`` naming it.
    columns : sequence of str
        Header, in order; keys missing from a row are written empty.
    rows : iterable of mapping
        The rows.
    """
    if destination == "-":
        destination = sys.stdout
    if isinstance(destination, (str, Path)):
        path = Path(destination)
        buffer = io.StringIO()
        count = write_rows(buffer, columns, rows)
        partial = path.with_name(path.name + ".partial")
        try:
            partial.write_text(buffer.getvalue(), encoding="utf-8", newline="")
            partial.replace(path)
        except OSError as error:
            with contextlib.suppress(OSError):
                partial.unlink(missing_ok=True)
            raise OptionError(f"cannot write '{path}': {error.strerror or error}") from None
        return count
    writer = csv.writer(destination, lineterminator="\n")
    # The csv module quotes a cell holding the line terminator but not a bare carriage
    # return, which a reader takes for a line end: a row holding one is quoted whole.
    quoting_writer = csv.writer(destination, lineterminator="\n", quoting=csv.QUOTE_ALL)
    header = [neutralise_cell(column) for column in columns]
    (quoting_writer if any("\r" in cell for cell in header) else writer).writerow(header)
    count = 0
    for row in rows:
        cells = [_cell(row.get(column)) for column in columns]
        (quoting_writer if any("\r" in cell for cell in cells) else writer).writerow(cells)
        count += 1
    return count
