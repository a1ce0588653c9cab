"""The parts library store: where it lives, opening it, migrating it, reading and writing.

A library is an SQLite file (default) or a database URL such as PostgreSQL for a shared
team library. Its schema is made only by the Alembic migrations; opening a library at an
older schema revision upgrades it to head and says so through ``notify``. SQLite runs
with foreign keys on, write-ahead logging and a busy timeout, and every write is one
transaction, so a failed import leaves the library as it was.

Every write goes through :meth:`Library.write`: SQLite's write lock is taken at BEGIN
(``BEGIN IMMEDIATE``), and a transaction that still meets a busy or locked database (or,
on PostgreSQL, a serialisation failure or deadlock) is run again, a bounded number of
times with growing randomised pauses, so concurrent users queue instead of failing.
Every change to a part is recorded in the audit trail (:mod:`selector.catalog.audit`) in
the same transaction.
"""

from __future__ import annotations

import random
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from functools import partial
from pathlib import Path
from typing import TYPE_CHECKING, TypeVar

import platformdirs
from sqlalchemy import Engine, create_engine, delete, event, insert, inspect, select, update
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError, DBAPIError, IntegrityError, SQLAlchemyError
from sqlalchemy.orm import Session
from sqlalchemy.pool import StaticPool

from selector.catalog import audit
from selector.catalog.models import (
    RECORD_COLUMNS,
    ApprovedList,
    ImportLog,
    ListEntry,
    Part,
    utc_now,
)
from selector.catalog.parts_import import (
    ImportPlan,
    PartsFile,
    load_parts_csv,
    merged_records,
    plan_changes,
)
from selector.catalog.resources import demo_csv_path, migrations_folder
from selector.errors import LibraryError, OptionError, UnknownPartError
from selector.files import output_files
from selector.physics.partset import PartSet
from selector.spec.part_fields import FAMILIES
from selector.spec.stack_notation import part_id_order

if TYPE_CHECKING:
    from alembic.config import Config
    from alembic.script import ScriptDirectory

#: File name of the default library inside the per-user data directory.
DEFAULT_LIBRARY_FILE = "library.sqlite"
#: How long SQLite waits for another writer before giving up [ms].
BUSY_TIMEOUT_MS = 30_000

_SQLITE_MAGIC = b"SQLite format 3\x00"
#: Execution option that marks a transaction as a writer.
_WRITE_OPTION = "railwright_write"
#: Tries of a write transaction that meets a busy database, and the first pause [s]
#: (doubled each time, randomised ±50 % so that waiting writers do not collide again).
WRITE_ATTEMPTS = 8
FIRST_RETRY_PAUSE_S = 0.05
#: Database backends the migrations (and the audit trail's guard) support.
SUPPORTED_BACKENDS: tuple[str, ...] = ("sqlite", "postgresql")
#: PostgreSQL advisory-lock key that serialises concurrent schema upgrades.
_MIGRATION_LOCK_KEY = 7_302_551
#: SQLSTATEs after which PostgreSQL asks for the transaction to be run again.
_RETRY_SQLSTATES = frozenset({"40001", "40P01", "55P03"})

T = TypeVar("T")

Notify = Callable[[str], None]


def default_library_path() -> Path:
    """The per-user library file (platformdirs' user data directory for railwright)."""
    return platformdirs.user_data_path("railwright", appauthor=False) / DEFAULT_LIBRARY_FILE


@dataclass(frozen=True)
class LibraryLocation:
    """Where a library lives: its URL, its file (SQLite) and whether it is the default."""

    url: URL
    path: Path | None
    is_default: bool

    def text(self) -> str:
        """The file path, or the URL with any password shown as ``***``."""
        if self.path is not None:
            return str(self.path)
        return _masked(self.url.render_as_string(hide_password=False))


#: Longest ``--db`` value read [characters] (far past any real path or URL).
MAX_DB_OPTION_LENGTH = 1024


def resolve_location(db_option: str | None) -> LibraryLocation:
    """Read the ``--db`` value: None (default), a file path, or an SQLAlchemy URL."""
    if db_option is not None and len(db_option) > MAX_DB_OPTION_LENGTH:
        raise OptionError(f"--db: {len(db_option)} characters is too long for a path or URL (at most "
                          f"{MAX_DB_OPTION_LENGTH})")  # fmt: skip
    try:
        return _resolved_location(db_option)
    except (ValueError, OSError) as error:  # a port that is no number, a bracket left open, an unusable path
        detail = error.strerror if isinstance(error, OSError) and error.strerror else "not a usable path or URL"
        raise OptionError(f"--db: '{_masked(db_option or '')}': {detail}") from None


def _resolved_location(db_option: str | None) -> LibraryLocation:
    if db_option is None:
        path = default_library_path()
        return LibraryLocation(URL.create("sqlite", database=str(path)), path, True)
    text = db_option.strip()
    if not text:
        raise OptionError("--db: empty; give a library file path or a database URL")
    if "://" in text:
        if text.partition("://")[2].split("/", 1)[0].count("@") > 1:
            # An '@' in the password, not encoded: the driver would take part of the
            # password for the host name and print it in its error.
            raise OptionError(f"--db: '{_masked(text)}': more than one '@' before the host; write an '@' in the "
                              "password as %40")  # fmt: skip
        try:
            url = make_url(text)
            url.port  # noqa: B018 - SQLAlchemy reads the port only when asked
        except ArgumentError:
            raise OptionError(f"--db: '{_masked(text)}' is not a database URL") from None
        if url.get_backend_name() not in SUPPORTED_BACKENDS:
            raise OptionError(
                f"--db: '{_masked(text)}': {url.get_backend_name()} is not supported; "
                "use an SQLite file or a postgresql+psycopg:// URL"
            )
        if url.get_backend_name() == "sqlite" and url.database not in (None, "", ":memory:"):
            path = Path(url.database).expanduser().resolve()
            return LibraryLocation(url.set(database=str(path)), path, False)
        return LibraryLocation(url, None, False)
    path = Path(text).expanduser().resolve()
    return LibraryLocation(URL.create("sqlite", database=str(path)), path, False)


def _masked(text: str) -> str:
    """A ``--db`` value safe to print: the password — everything between the user name's
    ``:`` and the last ``@``, whatever characters it holds — and any ``password=`` in the
    query become ``***``."""
    import re

    scheme, separator, rest = text.partition("://")
    if separator and "@" in rest:
        userinfo, host = rest.rsplit("@", 1)
        user, colon, _ = userinfo.partition(":")
        rest = f"{user}:***@{host}" if colon else f"{userinfo}@{host}"
    rest = re.sub(r"(?i)(password=)[^&]*", r"\1***", rest)
    return f"{scheme}{separator}{rest}"


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
        writing = connection.get_execution_options().get(_WRITE_OPTION, False)
        connection.exec_driver_sql("BEGIN IMMEDIATE" if writing else "BEGIN")


def _make_engine(location: LibraryLocation) -> Engine:
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
            f"({_first_line(error)}); install it with: pip install 'railwright[postgres]'"
        ) from None
    except (ArgumentError, SQLAlchemyError) as error:
        raise LibraryError(f"{location.text()}: cannot use this database ({_first_line(error)})") from None


def _first_line(error: BaseException) -> str:
    text = str(getattr(error, "orig", None) or error)
    return text.strip().splitlines()[0] if text.strip() else type(error).__name__


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


def _recorded_revision(connection) -> str | None:
    """The one revision in the library's ``alembic_version`` table, by one query.

    None when it cannot be read that way (no such table yet, none or several rows, not a
    database): the caller then asks Alembic, which tells those cases apart.
    """
    try:
        rows = connection.exec_driver_sql("SELECT version_num FROM alembic_version").scalars().all()
    except DBAPIError:
        return None
    return rows[0] if len(rows) == 1 else None


def _check_sqlite_file(path: Path) -> bool:
    """Whether ``path`` is a new library; refuse a folder or a file that is not SQLite."""
    if path.is_dir():
        raise LibraryError(f"{path}: is a folder, not a library file")
    if not path.exists():
        return True
    if path.stat().st_size == 0:
        # An empty file may be a library truncated by a failed copy: never start afresh in it.
        raise LibraryError(f"{path}: not a railwright library (an empty file)")
    try:
        with path.open("rb") as handle:
            magic = handle.read(len(_SQLITE_MAGIC))
    except OSError as error:
        raise LibraryError(f"{path}: cannot read ({error.strerror or error})") from None
    if magic != _SQLITE_MAGIC:
        raise LibraryError(f"{path}: not a railwright library (not an SQLite database file)")
    _refuse_foreign_database(path)
    return False


def _refuse_foreign_database(path: Path) -> None:
    """Refuse another program's SQLite file before our connection settings (WAL) touch it."""
    import sqlite3

    try:
        connection = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
        try:
            tables = {row[0] for row in connection.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        finally:
            connection.close()
    except sqlite3.DatabaseError as error:
        raise LibraryError(f"{path}: not a railwright library ({error})") from None
    if tables and "alembic_version" not in tables:
        raise LibraryError(f"{path}: holds a database, but not a railwright library")


class Library:
    """An open parts library. Create with :func:`open_library`."""

    def __init__(self, engine: Engine, location: LibraryLocation) -> None:
        self.engine = engine
        self.location = location
        #: True when :func:`open_library` made this library just now.
        self.created = False

    def location_text(self) -> str:
        """Where the library lives: the file path, or the URL with its password masked."""
        return self.location.text()

    def schema_revision(self) -> str:
        """The schema revision the library is at (e.g. ``"0001"``); empty if none."""
        with self._connect() as connection:
            return _recorded_revision(connection) or ""

    @contextmanager
    def _connect(self):
        try:
            with self.engine.connect() as connection:
                yield connection
        except SQLAlchemyError as error:
            raise LibraryError(f"{self.location_text()}: {_first_line(error)}") from None

    @contextmanager
    def session(self) -> Iterator[Session]:
        """A reading session inside one transaction (committed at the end, rolled back
        on an error).

        Database failures surface as :class:`LibraryError` naming the library. Writes
        go through :meth:`write`.
        """
        try:
            with Session(self.engine, expire_on_commit=False) as session, session.begin():
                yield session
        except SQLAlchemyError as error:
            raise self._library_error(error) from None

    def write(self, work: Callable[[Session], T]) -> T:
        """Run ``work(session)`` in one write transaction, committed when it returns.

        SQLite's write lock is taken at BEGIN, so other writers wait up to the busy
        timeout. A transaction that still meets a busy database, or a PostgreSQL
        serialisation failure or deadlock, is run again from the start: at most
        :data:`WRITE_ATTEMPTS` times, pausing :data:`FIRST_RETRY_PAUSE_S` · 2^k (±50 %)
        between tries. ``work`` must therefore only touch the database through the
        session. A domain error raised by ``work`` rolls the transaction back and
        propagates; database failures surface as :class:`LibraryError`.
        """
        engine = self.engine.execution_options(**{_WRITE_OPTION: True})
        for attempt in range(WRITE_ATTEMPTS):
            try:
                with Session(engine, expire_on_commit=False) as session, session.begin():
                    return work(session)
            except DBAPIError as error:
                if not _worth_retrying(error) or attempt == WRITE_ATTEMPTS - 1:
                    raise self._library_error(error) from None
            except SQLAlchemyError as error:
                raise self._library_error(error) from None
            time.sleep(FIRST_RETRY_PAUSE_S * 2**attempt * random.uniform(0.5, 1.5))
        raise AssertionError("unreachable: the last attempt returns or raises")

    def _library_error(self, error: SQLAlchemyError) -> LibraryError:
        if isinstance(error, IntegrityError):
            return LibraryError(f"{self.location_text()}: refused by the database ({_first_line(error)})")
        if _worth_retrying(error):
            return LibraryError(
                f"{self.location_text()}: still busy with other writers after {WRITE_ATTEMPTS} tries; "
                "try again in a moment"
            )
        return LibraryError(f"{self.location_text()}: {_first_line(error)}")

    def close(self) -> None:
        """Release the library's connections."""
        self.engine.dispose()

    # Reading ---------------------------------------------------------------------------

    def part_records(self, families: Sequence[str] | None = None) -> list[dict[str, object]]:
        """Every part as a record (parts-CSV columns plus ``source``), in part-id order
        (:func:`selector.spec.stack_notation.part_id_order`).

        Raises
        ------
        OptionError
            When a family is not one of :data:`selector.physics.partset.FAMILIES`.
        """
        query = select(Part)
        if families is not None:
            unknown = [family for family in families if family not in FAMILIES]
            if unknown:
                raise OptionError(
                    f"--family: unknown family '{unknown[0]}'; expected one of {', '.join(FAMILIES)}"
                )
            query = query.where(Part.family.in_(list(families)))
        with self.session() as session:
            records = [part.record() for part in session.scalars(query)]
        # Sorted here, not in SQL, so the order is the same on every database's collation;
        # numbers in ids by value (Z2V4 before Z10V).
        return sorted(records, key=lambda record: part_id_order(record["part"]))

    def load_partset(
        self,
        families: Sequence[str] | None = None,
        *,
        list_name: str | None = None,
        statuses: Sequence[str] | None = None,
    ) -> PartSet:
        """The library's parts as arrays, in part-id order.

        Parameters
        ----------
        families : sequence of str, optional
            Only parts of these families.
        list_name : str, optional
            Only parts usable on this approved-parts list (see
            :func:`selector.catalog.approved_lists.list_view`).
        statuses : sequence of str, optional
            Usable statuses on that list; default approved and conditional.
        """
        parts = PartSet.from_records(self.part_records(families))
        if list_name is None:
            return parts
        from selector.catalog.approved_lists import list_view

        return parts.select(list_view(self, parts, list_name, statuses).usable)

    def part_record(self, part: str) -> dict[str, object]:
        """One part's record; :class:`UnknownPartError` when it is not in the library."""
        with self.session() as session:
            found = session.scalar(select(Part).where(Part.part == part))
            if found is None:
                raise UnknownPartError(f"unknown part '{part}' (not in the library {self.location_text()})")
            return found.record()

    def import_history(self) -> list[dict[str, object]]:
        """The import log, oldest first."""
        with self.session() as session:
            entries = session.scalars(select(ImportLog).order_by(ImportLog.id))
            return [
                {column: getattr(entry, column) for column in ImportLog.__table__.columns.keys()}
                for entry in entries
            ]

    # Writing ---------------------------------------------------------------------------

    def import_records(
        self,
        records: Iterable[dict[str, object]],
        *,
        kind: str,
        file_name: str,
        file_sha256: str,
        dry_run: bool = False,
        complete: Callable[[dict[str, dict[str, object]]], list[dict[str, object]]] | None = None,
        reason: str | None = None,
        by: str | None = None,
    ) -> ImportPlan:
        """Add new parts and update changed ones in one transaction, and log the import.

        Parameters
        ----------
        records : iterable of dict
            Validated records (see :func:`selector.catalog.parts_import.validate_rows`).
        kind : str
            What is imported, for the log: ``parts csv``, ``model cards``, ``datasheet fit``.
        file_name, file_sha256 : str
            The imported file and the SHA-256 of its bytes, for the log.
        dry_run : bool
            Plan only; write nothing (not even the log).
        complete : callable, optional
            Given the library's current records of the parts concerned (by part id), in
            the same transaction, returns the records to import — a partial file's
            records completed from them (:func:`selector.catalog.parts_import.merged_records`).
        reason, by : str, optional
            Why and who, for the audit trail (default: "KIND import of FILE", the OS user).

        Returns
        -------
        ImportPlan
            What was (or, with ``dry_run``, would be) added, changed and left unchanged.
        """
        records = list(records)
        if dry_run:
            with self.session() as session:
                return _plan_import(session, records, complete)[0]
        actor = audit.person(by)
        reason = (reason or f"{kind} import of {file_name}")[:1000]

        def work(session: Session) -> ImportPlan:
            plan, existing = _plan_import(session, records, complete)
            now = utc_now()
            if plan.added:
                session.execute(
                    insert(Part),
                    [_writable(record) | {"created_at": now, "updated_at": now} for record in plan.added],
                )
            if plan.changed:
                session.execute(
                    update(Part),
                    [
                        _writable(record) | {"id": existing[record["part"]].id, "updated_at": now}
                        for record, _ in plan.changed
                    ],
                )
            session.add(
                ImportLog(
                    imported_at=now,
                    imported_by=actor,
                    kind=kind,
                    file_name=file_name[:1000],
                    file_sha256=file_sha256,
                    rows_added=len(plan.added),
                    rows_changed=len(plan.changed),
                    rows_unchanged=len(plan.unchanged),
                )
            )
            audit.record_events(session, audit.import_events(plan, RECORD_COLUMNS[1:], reason), actor=actor, at=now)
            return plan

        return self.write(work)

    def import_parts_file(self, parts_file: PartsFile, *, kind: str = "parts csv", dry_run: bool = False) -> ImportPlan:
        """Import a validated :class:`PartsFile` (see :meth:`import_records`): a column the
        file lacks leaves that field of an existing part unchanged (DESIGN §4)."""
        return self.import_records(
            parts_file.records,
            kind=kind,
            file_name=parts_file.label,
            file_sha256=parts_file.sha256,
            dry_run=dry_run,
            complete=None if parts_file.columns is None else partial(merged_records, parts_file),
        )

    def set_fields(self, part: str, settings: dict[str, str], *, reason: str, by: str | None = None,
                   dry_run: bool = False) -> ImportPlan:  # fmt: skip
        """Change some fields of one part in one transaction, with the import's cell and
        whole-record checks, audit-logged old → new with ``reason`` (``parts set``).

        Raises
        ------
        UnknownPartError
            When the part is not in the library.
        InputDataError, OptionError
            For a value or a merged record the import would refuse.
        """
        from selector.catalog.parts_import import setting_file

        why = audit.required_reason(reason, "say why the part's data changes, e.g. 'datasheet rev C'")
        current = self.part_record(part)
        label = f"parts set {part}"
        parts_file = setting_file(part, settings.get("family", str(current["family"])), settings, label)
        return self.import_records(parts_file.records, kind="parts set", file_name=label, file_sha256=parts_file.sha256,
                                   dry_run=dry_run, complete=partial(merged_records, parts_file), reason=why,
                                   by=by)  # fmt: skip

    def import_demo_sets(self) -> ImportPlan:
        """Add the bundled invented demo parts the library lacks.

        A demo part already in the library is never changed, whatever its data now (a
        user may have edited it): the plan lists it as unchanged, and the import only adds.
        """
        demo = load_parts_csv(demo_csv_path())

        def missing_only(existing: dict[str, dict[str, object]]) -> list[dict[str, object]]:
            return [existing.get(str(record["part"]), record) for record in demo.records]

        return self.import_records(demo.records, kind="demo sets", file_name=demo_csv_path().name,
                                   file_sha256=demo.sha256, complete=missing_only)  # fmt: skip

    def remove_part(self, part: str, *, by: str | None = None, reason: str | None = None) -> None:
        """Delete one part, recording its last values in the audit trail.

        A part that an approved-parts list references is not removed (refusal, not
        retirement): it must be taken off every list first (``approved drop``), or be
        kept and marked ``banned`` or ``no-new-design`` there, which keeps it out of
        every design while its record stays readable. Nor is a part that the latest
        revision of a saved design uses (:mod:`selector.catalog.saved_designs`).

        Raises
        ------
        UnknownPartError
            When the part is not in the library.
        LibraryError
            When lists reference the part (the message names each list and status), or
            saved designs use it (the message names each design).
        """
        from selector.catalog.saved_designs import designs_using, lock_saved_designs, used_by_text

        actor = audit.person(by)
        why = audit.required_reason(reason) if (reason or "").strip() else "removed from the library"

        def work(session: Session) -> None:
            lock_saved_designs(session)
            found = session.scalar(select(Part).where(Part.part == part))
            if found is None:
                raise UnknownPartError(f"unknown part '{part}' (not in the library {self.location_text()})")
            users = designs_using(session, part)
            if users:
                raise LibraryError(
                    f"cannot remove {part}: the saved design(s) {used_by_text(users)} use it; mark it banned or "
                    "no-new-design on its lists instead (the saved snapshots keep its data either way)"
                )
            on_lists = session.execute(
                select(ApprovedList.name, ListEntry.status)
                .join(ListEntry, ListEntry.list_id == ApprovedList.id)
                .where(ListEntry.part_id == found.id)
            ).all()
            if on_lists:
                named = ", ".join(f"'{name}' ({status})" for name, status in sorted(on_lists))
                raise LibraryError(
                    f"cannot remove {part}: it is on the approved-parts list(s) {named}; "
                    f"take it off each first with 'railwright approved drop LIST {part} --reason TEXT'"
                )
            old = audit.record_text(found.record(), RECORD_COLUMNS[1:])
            session.execute(delete(Part).where(Part.id == found.id))
            audit.record_events(
                session, [audit.Event(audit.ACTION_PART_REMOVED, why, part=part, old_value=old)],
                actor=actor, at=utc_now(),
            )

        self.write(work)


def _plan_import(session: Session, records: list[dict[str, object]], complete=None) -> tuple[ImportPlan, dict[str, Part]]:
    wanted = [record["part"] for record in records]
    existing = {
        part.part: part
        for chunk in _chunks(wanted, 500)
        for part in session.scalars(select(Part).where(Part.part.in_(chunk)))
    }
    current = {name: part.record() for name, part in existing.items()}
    if complete is not None:
        records = complete(current)
    return plan_changes(current, records), existing


def _worth_retrying(error: BaseException) -> bool:
    """Whether a database error means "busy, run the transaction again"."""
    original = getattr(error, "orig", None)
    if getattr(original, "sqlstate", None) in _RETRY_SQLSTATES:
        return True
    message = str(original or error).lower()
    return "database is locked" in message or "database is busy" in message


def _chunks(items: Sequence[str], size: int) -> Iterator[Sequence[str]]:
    for start in range(0, len(items), size):
        yield items[start : start + size]


def _writable(record: dict[str, object]) -> dict[str, object]:
    return {column: record.get(column) for column in RECORD_COLUMNS}


def open_library(
    db_option: str | None,
    *,
    notify: Notify | None = None,
    create_with_demo: bool | None = None,
) -> Library:
    """Open (and when needed create or upgrade) the library named by ``--db``.

    Parameters
    ----------
    db_option : str or None
        A file path or SQLAlchemy URL; None for the default per-user library.
    notify : callable taking one str, optional
        Told, in one line, when the library is created or upgraded.
    create_with_demo : bool, optional
        Whether a library created now gets the demo sets. Default (None): the default
        library does, a library at an explicit location starts empty (DESIGN §4).

    Raises
    ------
    LibraryError
        When the location is not a railwright library, cannot be created, or has a
        schema newer than this installation knows.
    """
    notify = notify or (lambda _line: None)
    location = resolve_location(db_option)
    if location.path is not None:
        # No output of this process may be written over the library's files.
        output_files.protect(location.path)
        try:
            creating = _check_sqlite_file(location.path)
        except OSError as error:  # e.g. a name longer than the file system allows
            raise OptionError(f"--db: '{location.path}': {error.strerror or error}") from None
        if creating:
            _prepare_folder(location)
    engine = _make_engine(location)
    library = Library(engine, location)
    try:
        library.created = _migrate(library, notify)
        if library.created:
            seed = location.is_default if create_with_demo is None else create_with_demo
            if seed:
                plan = library.import_demo_sets()
                notify(
                    f"created the library {location.text()} with the invented demo sets "
                    f"({len(plan.added)} parts)"
                )
            else:
                notify(f"created an empty library {location.text()}")
    except BaseException:
        library.close()
        raise
    return library


def _prepare_folder(location: LibraryLocation) -> None:
    folder = location.path.parent
    if folder.is_dir():
        return
    if not location.is_default:
        raise LibraryError(f"{location.path}: cannot create the library; folder {folder} does not exist")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise LibraryError(f"{folder}: cannot create the library folder ({error.strerror or error})") from None


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


def _migrate(library: Library, notify: Notify) -> bool:
    """Bring the schema to head; True when the library was created just now.

    A library already at head costs one query and no Alembic import; anything else
    (new, older, newer or foreign) goes through Alembic.
    """
    text = library.location_text()
    head = head_revision()
    try:
        with library.engine.connect() as connection:
            if _recorded_revision(connection) == head:
                return False
        from alembic import command
        from alembic.script import ScriptDirectory

        script = ScriptDirectory.from_config(alembic_config())
        head = script.get_current_head()
        with library.engine.begin() as connection:
            current = _current_revision(connection, script, text)
        if current != head:
            # As a writer: people opening an old (or new) library at the same moment
            # queue here and each reads the revision again, so exactly one upgrades.
            writer = library.engine.execution_options(**{_WRITE_OPTION: True})
            with writer.begin() as connection:
                if connection.dialect.name == "postgresql":
                    connection.exec_driver_sql(f"SELECT pg_advisory_xact_lock({_MIGRATION_LOCK_KEY})")
                current = _current_revision(connection, script, text)
                if current != head:
                    command.upgrade(alembic_config(connection), "head")
    except LibraryError:
        raise
    except SQLAlchemyError as error:
        message = _first_line(error)
        if "not a database" in message or "malformed" in message:
            raise LibraryError(f"{text}: not a railwright library ({message})") from None
        raise LibraryError(f"{text}: cannot open the library ({message})") from None
    if current is None:
        return True
    if current != head:
        notify(f"upgraded the library {text} from schema revision {current} to {head}")
    return False
