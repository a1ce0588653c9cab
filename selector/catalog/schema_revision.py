"""The schema revision of a parts library: the installation's head read without Alembic,
the library's own by one query, and the migration to head (through Alembic, only when
they differ), which refuses a foreign database and a newer schema.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

from sqlalchemy import Engine, inspect
from sqlalchemy.exc import DBAPIError, SQLAlchemyError

from selector.catalog.library_engine import WRITE_OPTION, first_line
from selector.catalog.resources import migrations_folder
from selector.errors import LibraryError

if TYPE_CHECKING:
    from alembic.config import Config
    from alembic.script import ScriptDirectory

#: PostgreSQL advisory-lock key that serialises concurrent schema upgrades.
_MIGRATION_LOCK_KEY = 7_302_551


def alembic_config(connection=None) -> Config:
    """An Alembic configuration for the packaged migrations, bound to ``connection``."""
    from alembic.config import Config

    config = Config()
    config.set_main_option("script_location", str(migrations_folder()))
    if connection is not None:
        config.attributes["connection"] = connection
    return config


def head_revision() -> str:
    """The newest schema revision this installation knows, read without Alembic.

    Revision files are named ``NNNN_what_it_does.py`` with revision id ``NNNN`` and each
    revises the one before, so the head is the prefix of the greatest file name
    (``tests/test_startup.py`` checks that Alembic finds the same head).
    """
    names = sorted(path.name for path in (migrations_folder() / "versions").glob("[0-9]*_*.py"))
    if not names:
        raise LibraryError("the installation is incomplete: no schema revisions found; reinstall railwright")
    return names[-1].split("_", 1)[0]


def recorded_revision(connection) -> str | None:
    """The one revision in the library's ``alembic_version`` table, by one query.

    None when it cannot be read that way (no such table yet, none or several rows, not a
    database): the caller then asks Alembic, which tells those cases apart.
    """
    try:
        rows = connection.exec_driver_sql("SELECT version_num FROM alembic_version").scalars().all()
    except DBAPIError:
        return None
    return rows[0] if len(rows) == 1 else None


def migrate(engine: Engine, text: str, notify: Callable[[str], None]) -> bool:
    """Bring the schema of the library at ``engine`` (shown as ``text``) to head; True when
    the library was created just now (``notify`` is told of an upgrade).

    A library already at head costs one query and no Alembic import; anything else
    (new, older, newer or foreign) goes through Alembic.
    """
    head = head_revision()
    try:
        with engine.connect() as connection:
            if recorded_revision(connection) == head:
                return False
        from alembic import command
        from alembic.script import ScriptDirectory

        script = ScriptDirectory.from_config(alembic_config())
        head = script.get_current_head()
        with engine.begin() as connection:
            current = _current_revision(connection, script, text)
        if current != head:
            # As a writer: people opening an old (or new) library at the same moment
            # queue here and each reads the revision again, so exactly one upgrades.
            writer = engine.execution_options(**{WRITE_OPTION: True})
            with writer.begin() as connection:
                if connection.dialect.name == "postgresql":
                    connection.exec_driver_sql(f"SELECT pg_advisory_xact_lock({_MIGRATION_LOCK_KEY})")
                current = _current_revision(connection, script, text)
                if current != head:
                    command.upgrade(alembic_config(connection), "head")
    except LibraryError:
        raise
    except SQLAlchemyError as error:
        message = first_line(error)
        if "not a database" in message or "malformed" in message:
            raise LibraryError(f"{text}: not a railwright library ({message})") from None
        raise LibraryError(f"{text}: cannot open the library ({message})") from None
    if current is None:
        return True
    if current != head:
        notify(f"upgraded the library {text} from schema revision {current} to {head}")
    return False


def _current_revision(connection, script: ScriptDirectory, text: str) -> str | None:
    """The library's revision; refuses a foreign database and a newer schema."""
    from alembic.runtime.migration import MigrationContext

    current = MigrationContext.configure(connection).get_current_revision()
    if current is None and inspect(connection).get_table_names():
        raise LibraryError(f"{text}: holds a database, but not a railwright library")
    if current is not None:
        try:
            script.get_revision(current)
        except Exception:
            raise LibraryError(
                f"{text}: written by a newer railwright (schema revision {current}); "
                "upgrade railwright to open it"
            ) from None
    return current
