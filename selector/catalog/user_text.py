"""Checks of the names a user gives the library: of a list, a saved design, a person.

A name is kept as one printable line (no control, line-separator or direction-override
characters, which could forge or hide lines of a listing or of the history) and capped
at its column's length.
"""

from __future__ import annotations

from selector.errors import OptionError
from selector.spec.units import shown


def checked_name(text: str, place: str, *, kind: str, longest: int, missing: str) -> str:
    """``text`` stripped, or :class:`OptionError` naming ``place``.

    Parameters
    ----------
    text : str
        The name as given.
    place : str
        Where it was given (an option or argument), the message's first word.
    kind : str
        What it names, for the message (``"list name"``).
    longest : int [characters]
        Longest name kept.
    missing : str
        What to do when it is empty (``"give the saved design a name"``).
    """
    cleaned = text.strip()
    if not cleaned:
        raise OptionError(f"{place}: empty; {missing}")
    if len(cleaned) > longest or not cleaned.isprintable():
        raise OptionError(f"{place}: '{shown(cleaned[:40])}' is not a usable {kind} (one line, at most {longest} characters)")
    return cleaned
