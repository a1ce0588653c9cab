"""State shared by every command: which library the user asked for."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass
class CliState:
    """The ``--db`` option as given (None: the default per-user library)."""

    db_option: str | None
