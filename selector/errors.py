"""Domain exceptions raised by the library API.

Every user-facing failure is one of these. The command-line layer turns them into
``click.ClickException`` with the class's ``exit_code`` (DESIGN §4: 1 bad input data,
2 usage), so a user error is one line on stderr and never a traceback.
"""

from __future__ import annotations

#: Exit code of a negative verdict (DESIGN §4): ``check`` when the design does not meet,
#: ``seek --require-meeting`` when nothing meets, ``designs verify`` when a saved design
#: no longer holds. Not an error: the output says why.
NEGATIVE_VERDICT_EXIT = 3


class RailwrightError(Exception):
    """Base of every error the tool reports to a user as one line."""

    exit_code = 1


class InputDataError(RailwrightError):
    """A file's content is malformed or out of range (exit 1)."""


class QuantityError(InputDataError):
    """A quantity text cannot be read, or is of the wrong kind."""


class StackNotationError(RailwrightError):
    """A stack text such as ``2*QZ-1 + ZR-39`` is malformed (exit 2: it comes from an option)."""

    exit_code = 2


class OptionError(RailwrightError):
    """A command-line option value is invalid (exit 2)."""

    exit_code = 2


class SpecError(InputDataError):
    """A rail requirement is malformed or contradicts itself (exit 1)."""


class SpecOptionError(SpecError, OptionError):
    """A rail requirement's command-line option is malformed or contradicts the rest (exit 2:
    it comes from an option, like click's own usage errors)."""

    exit_code = 2


class UnknownPartError(RailwrightError):
    """A part named by the user is not in the library (exit 1)."""


class LibraryError(RailwrightError):
    """The parts library cannot be opened, read or written (exit 1)."""


class SearchError(RailwrightError):
    """A search cannot run as asked: empty library, absurd size (exit 1)."""
