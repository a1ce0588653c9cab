"""The SQLAlchemy engine of a parts library: SQLite's connection settings (foreign keys,
write-ahead logging, a busy timeout, the write lock taken at BEGIN for writers), a database
error's first line for messages, and which errors mean "busy, run it again".
"""

from __future__ import annotations

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.exc import ArgumentError, SQLAlchemyError
from sqlalchemy.pool import StaticPool

from selector.catalog.library_location import LibraryLocation
from selector.errors import LibraryError

#: How long SQLite waits for another writer before giving up [ms].
BUSY_TIMEOUT_MS = 30_000
#: Execution option that marks a transaction as a writer.
WRITE_OPTION = "railwright_write"
#: SQLSTATEs after which PostgreSQL asks for the transaction to be run again.
_RETRY_SQLSTATES = frozenset({"40001", "40P01", "55P03"})


def make_engine(location: LibraryLocation) -> Engine:
    """An engine for the library at ``location``; :class:`LibraryError` when its driver is missing or it is unusable."""
    try:
        if location.url.get_backend_name() == "sqlite":
            in_memory = location.path is None
            engine = create_engine(
                location.url,
                poolclass=StaticPool if in_memory else None,
                connect_args={"timeout": BUSY_TIMEOUT_MS / 1000, "check_same_thread": not in_memory},
            )
            _configure_sqlite(engine)
            return engine
        return create_engine(location.url, pool_pre_ping=True)
    except ImportError as error:
        raise LibraryError(
            f"{location.text()}: cannot use this database: its driver is not installed "
            f"({first_line(error)}); install it with: pip install 'railwright[postgres]'"
        ) from None
    except (ArgumentError, SQLAlchemyError) as error:
        raise LibraryError(f"{location.text()}: cannot use this database ({first_line(error)})") from None


def _configure_sqlite(engine: Engine) -> None:
    """Foreign keys, WAL and a busy timeout on every connection; real transactions.

    The driver's own implicit transactions are switched off so that SQLAlchemy's BEGIN
    also covers schema changes (pysqlite otherwise commits before DDL).
    """

    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection, _record) -> None:
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        cursor.execute("PRAGMA journal_mode=WAL")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection) -> None:
        # A writer takes the write lock at BEGIN, so two imports queue on the busy
        # timeout instead of one failing when it upgrades a read lock.
        writing = connection.get_execution_options().get(WRITE_OPTION, False)
        connection.exec_driver_sql("BEGIN IMMEDIATE" if writing else "BEGIN")


def first_line(error: BaseException) -> str:
    """The first line of a database error (the driver's own where there is one), for a message."""
    text = str(getattr(error, "orig", None) or error)
    return text.strip().splitlines()[0] if text.strip() else type(error).__name__


def worth_retrying(error: BaseException) -> bool:
    """Whether a database error means "busy, run the transaction again"."""
    original = getattr(error, "orig", None)
    if getattr(original, "sqlstate", None) in _RETRY_SQLSTATES:
        return True
    message = str(original or error).lower()
    return "database is locked" in message or "database is busy" in message
