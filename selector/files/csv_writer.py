"""The one CSV writer: every CSV the tool writes goes through :func:`write_rows`, so text
cells are spreadsheet-safe (:mod:`selector.files.csv_cells`) and floats read back exactly."""

from __future__ import annotations

import contextlib
import csv
import io
import sys
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import TextIO

from selector.errors import OptionError
from selector.files.csv_cells import format_number, neutralise_cell


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
