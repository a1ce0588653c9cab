"""State shared by every command: which library the user asked for, opened once."""

from __future__ import annotations

from dataclasses import dataclass, field

import click

from selector.catalog.store import Library, open_library


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
            self._library = open_library(
                self.db_option, notify=notify_stderr, create_with_demo=create_with_demo
            )
        return self._library
