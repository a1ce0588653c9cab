"""The one CSV writer: every CSV the tool writes goes through :func:`write_rows`, so text
cells are spreadsheet-safe (:mod:`selector.files.csv_cells`) and floats read back exactly."""

from __future__ import annotations

import csv
import io
import sys
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import TextIO

from selector.files.csv_cells import format_number, neutralise_cell
from selector.files.output_files import checked_destination, write_atomically


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
    option: str = "--csv",
) -> int:
    """Write mappings as CSV with safe cells and exact floats; returns the row count.

    Parameters
    ----------
    destination : path or text stream
        A file path (written as UTF-8, replaced only once complete, never over the
        library: :mod:`selector.files.output_files`), ``"-"`` for standard output, or an
        open stream. An unwritable or refused path raises ``OptionError`` naming it.
    columns : sequence of str
        Header, in order; keys missing from a row are written empty.
    rows : iterable of mapping
        The rows.
    option : str
        The option or argument that named the file, for messages.
    """
    if destination == "-":
        destination = sys.stdout
    if isinstance(destination, (str, Path)):
        checked_destination(destination, option)
        buffer = io.StringIO()
        count = write_rows(buffer, columns, rows)
        write_atomically(destination, buffer.getvalue(), option)
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
