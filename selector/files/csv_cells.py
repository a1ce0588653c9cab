"""Spreadsheet-safe CSV cells: neutralising text a spreadsheet would run as a formula.

Every CSV the tool writes (parts, approved lists, shortlists, history) passes its text
cells through :func:`neutralise_cell` (in :func:`selector.files.csv_writer.write_rows`). A text cell that begins with ``=``, ``+``, ``-``,
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

import math

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
