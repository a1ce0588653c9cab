"""State shared by every command: which library the user asked for, opened once."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import click

if TYPE_CHECKING:
    from selector.catalog.store import Library


def notify_stderr(line: str) -> None:
    """Tell the user one line on stderr (library created or upgraded)."""
    click.echo(line, err=True)


@dataclass
class CliState:
    """The ``--db`` option as given (None: the default per-user library)."""

    db_option: str | None
    _library: Library | None = field(default=None, repr=False)

    def library(self, *, create_with_demo: bool | None = None) -> Library:
        """The library named by ``--db``, opened (created, upgraded) on first use."""
        if self._library is None:
            # Imported here: the store loads SQLAlchemy, which '--help' of a command and
            # the option checks before the library is needed should not wait for.
            from selector.catalog.store import open_library

            self._library = open_library(
                self.db_option, notify=notify_stderr, create_with_demo=create_with_demo
            )
        return self._library

    def close(self) -> None:
        """Release the library's connections, if it was opened (SQLite then tidies its
        write-ahead log files away)."""
        if self._library is not None:
            self._library.close()
            self._library = None
