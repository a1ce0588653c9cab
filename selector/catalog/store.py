"""The parts library store: opening a library, reading it and writing to it.

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
the same transaction. Where a library lives is :mod:`selector.catalog.library_location`,
its engine :mod:`selector.catalog.library_engine`, its schema
:mod:`selector.catalog.schema_revision`.
"""

from __future__ import annotations

import random
import time
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from functools import partial
from typing import TypeVar

from sqlalchemy import Engine, delete, insert, select, update
from sqlalchemy.exc import DBAPIError, IntegrityError, SQLAlchemyError
from sqlalchemy.orm import Session

from selector.catalog import audit
from selector.catalog.import_plan import ImportPlan, plan_changes
from selector.catalog.library_engine import WRITE_OPTION, first_line, make_engine, worth_retrying
from selector.catalog.library_location import (
    LibraryLocation,
    check_sqlite_file,
    prepare_folder,
    resolve_location,
)
from selector.catalog.models import (
    RECORD_COLUMNS,
    ApprovedList,
    ImportLog,
    ListEntry,
    Part,
    utc_now,
)
from selector.catalog.parts_import import PartsFile, load_parts_csv, merged_records
from selector.catalog.resources import demo_csv_path
from selector.catalog.schema_revision import migrate, recorded_revision
from selector.errors import LibraryError, OptionError, UnknownPartError
from selector.files import output_files
from selector.physics.partset import PartSet
from selector.spec.part_fields import FAMILIES
from selector.spec.stack_notation import part_id_order

#: Tries of a write transaction that meets a busy database, and the first pause [s]
#: (doubled each time, randomised ±50 % so that waiting writers do not collide again).
WRITE_ATTEMPTS = 8
FIRST_RETRY_PAUSE_S = 0.05

T = TypeVar("T")

Notify = Callable[[str], None]


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
            return recorded_revision(connection) or ""

    @contextmanager
    def _connect(self):
        try:
            with self.engine.connect() as connection:
                yield connection
        except SQLAlchemyError as error:
            raise LibraryError(f"{self.location_text()}: {first_line(error)}") from None

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
        engine = self.engine.execution_options(**{WRITE_OPTION: True})
        for attempt in range(WRITE_ATTEMPTS):
            try:
                with Session(engine, expire_on_commit=False) as session, session.begin():
                    return work(session)
            except DBAPIError as error:
                if not worth_retrying(error) or attempt == WRITE_ATTEMPTS - 1:
                    raise self._library_error(error) from None
            except SQLAlchemyError as error:
                raise self._library_error(error) from None
            time.sleep(FIRST_RETRY_PAUSE_S * 2**attempt * random.uniform(0.5, 1.5))
        raise AssertionError("unreachable: the last attempt returns or raises")

    def _library_error(self, error: SQLAlchemyError) -> LibraryError:
        if isinstance(error, IntegrityError):
            return LibraryError(f"{self.location_text()}: refused by the database ({first_line(error)})")
        if worth_retrying(error):
            return LibraryError(
                f"{self.location_text()}: still busy with other writers after {WRITE_ATTEMPTS} tries; "
                "try again in a moment"
            )
        return LibraryError(f"{self.location_text()}: {first_line(error)}")

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
            Validated records (see :func:`selector.catalog.part_validation.validate_rows`).
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
            creating = check_sqlite_file(location.path)
        except OSError as error:  # e.g. a name longer than the file system allows
            raise OptionError(f"--db: '{location.path}': {error.strerror or error}") from None
        if creating:
            prepare_folder(location)
    engine = make_engine(location)
    library = Library(engine, location)
    try:
        library.created = migrate(engine, location.text(), notify)
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
