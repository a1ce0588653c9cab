"""Writing the library's parts to a parts CSV that imports back exactly.

Floats are written as their shortest exact text (``repr``) and text cells are made
spreadsheet-safe, both by :func:`selector.files.csv_cells.write_rows`; the import reverses
the safety prefix, so export → import finds every part unchanged.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import TextIO

from selector.catalog.models import RECORD_COLUMNS
from selector.files.csv_writer import write_rows

#: Columns of an exported parts CSV: the contract columns, then ``source`` and
#: ``model_extra`` (DESIGN §4 allows more columns).
EXPORT_COLUMNS: tuple[str, ...] = RECORD_COLUMNS


def write_parts_csv(destination: str | Path | TextIO, records: Iterable[Mapping[str, object]], option: str = "--csv") -> int:
    """Write part records as a parts CSV; returns how many were written.

    Raises
    ------
    OSError
        When the destination cannot be written (the caller names it to the user).
    """
    return write_rows(destination, EXPORT_COLUMNS, records, option)
