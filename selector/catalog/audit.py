"""The audit trail: every change to a part or a list entry as an append-only event.

Each event holds who (``actor``), when (``occurred_at``, UTC), what (``action``, the
``part`` and ``list_name`` it concerns), ``old_value`` → ``new_value`` and why
(``reason``). Events are only ever inserted: the database itself refuses UPDATE and
DELETE on the table (triggers of revision 0002), and nothing in the tool tries.

This module builds event rows and reads them back; the writes happen inside the store's
and the lists' own transactions, so an event is recorded exactly when its change is.
"""

from __future__ import annotations

import getpass
import os
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime, time

from sqlalchemy import insert, select
from sqlalchemy.orm import Session

from selector.catalog.import_plan import ImportPlan
from selector.catalog.models import PERSON_LENGTH, AuditEvent
from selector.catalog.user_text import checked_name
from selector.errors import OptionError
from selector.files.csv_cells import format_number
from selector.spec.units import shown

ACTION_PART_ADDED = "part added"
ACTION_PART_CHANGED = "part changed"
ACTION_PART_REMOVED = "part removed"
ACTION_STATUS_SET = "status set"
ACTION_ENTRY_REMOVED = "entry removed"
ACTION_LIST_CREATED = "list created"
ACTION_LIST_RENAMED = "list renamed"

#: Columns of ``railwright history --csv``.
HISTORY_COLUMNS: tuple[str, ...] = (
    "id", "when_utc", "who", "action", "part", "list", "old", "new", "why",
)  # fmt: skip


def current_user() -> str:
    """The person to record when none is given: the OS user, else ``unknown``."""
    try:
        name = getpass.getuser()
    except (KeyError, OSError, ImportError):
        name = os.environ.get("USERNAME", "")
    return name.strip()[:PERSON_LENGTH] or "unknown"


#: Longest reason kept [characters] (the lists' text limit).
REASON_LIMIT = 2000


def required_reason(reason: str | None, what: str = "every change needs a reason", option: str = "--reason") -> str:
    """A change's reason: required, one printable line (no control, line-separator or
    direction-override characters, which could forge or hide history lines), capped."""
    cleaned = (reason or "").strip()
    if not cleaned:
        raise OptionError(f"{option}: missing; {what}")
    if len(cleaned) > REASON_LIMIT or not cleaned.isprintable():
        raise OptionError(f"{option}: must be one line of at most {REASON_LIMIT} printable characters")
    return cleaned


def person(by: str | None, option: str = "--by") -> str:
    """Who makes a change: ``by`` checked (one printable line), or the OS user."""
    if by is None:
        return current_user()
    return checked_name(by, option, kind="name", longest=PERSON_LENGTH,
                        missing="give the name of the person making the change")  # fmt: skip


@dataclass(frozen=True)
class Event:
    """One event before it is written (see :class:`selector.catalog.models.AuditEvent`)."""

    action: str
    reason: str
    part: str | None = None
    list_name: str | None = None
    old_value: str | None = None
    new_value: str | None = None


def record_events(session: Session, events: Iterable[Event], *, actor: str, at: datetime) -> int:
    """Insert events in the session's transaction; returns how many.

    Parameters
    ----------
    session : Session
        The transaction that makes the changes the events describe.
    events : iterable of Event
    actor : str
        Who made the changes.
    at : datetime
        When (timezone-aware, UTC).
    """
    rows = [
        {
            "occurred_at": at,
            "actor": actor,
            "action": event.action,
            "part": event.part,
            "list_name": event.list_name,
            "old_value": event.old_value,
            "new_value": event.new_value,
            "reason": event.reason,
        }
        for event in events
    ]
    if rows:
        session.execute(insert(AuditEvent), rows)
    return len(rows)


def _value_text(value: object) -> str:
    if value is None or value == "":
        return "(empty)"
    if isinstance(value, float):
        return format_number(value)
    return str(value)


def record_text(record: dict[str, object], columns: Sequence[str]) -> str:
    """``column=value`` for every given column, joined by ``; `` (exact numbers)."""
    return "; ".join(
        f"{column}={_value_text(record.get(column))}"
        for column in columns
        if record.get(column) not in (None, "")
    )


def import_events(plan: ImportPlan, columns: Sequence[str], reason: str) -> list[Event]:
    """One event per part an import adds (its values) or changes (old → new per column)."""
    events = [
        Event(ACTION_PART_ADDED, reason, part=str(record["part"]), new_value=record_text(record, columns))
        for record in plan.added
    ]
    for record, changes in plan.changed:
        events.append(
            Event(
                ACTION_PART_CHANGED,
                reason,
                part=str(record["part"]),
                old_value="; ".join(f"{change.column}={_value_text(change.old)}" for change in changes),
                new_value="; ".join(f"{change.column}={_value_text(change.new)}" for change in changes),
            )
        )
    return events


def as_utc(moment: datetime) -> datetime:
    """A stored time as timezone-aware UTC (SQLite hands back naive UTC times)."""
    return moment.replace(tzinfo=UTC) if moment.tzinfo is None else moment.astimezone(UTC)


def parse_since(text: str, option: str = "--since") -> datetime:
    """Read a ``--since`` value: an ISO date or date-time; without an offset it is UTC.

    Raises
    ------
    OptionError
        When the text is not an ISO date or date-time.
    """
    cleaned = text.strip()
    try:
        if len(cleaned) == 10:
            return datetime.combine(date.fromisoformat(cleaned), time(), tzinfo=UTC)
        return as_utc(datetime.fromisoformat(cleaned.replace("Z", "+00:00")))
    except OverflowError:  # a real date whose UTC time lies past year 9999
        raise OptionError(f"{option}: '{shown(cleaned[:40])}' is beyond the last representable time") from None
    except ValueError:
        raise OptionError(
            f"{option}: '{shown(cleaned[:40])}' is not a date; write e.g. 2026-12-01 or 2026-12-01T14:30"
        ) from None


def history_query(part: str | None = None, list_name: str | None = None, since: datetime | None = None):
    """The SELECT of events about ``part`` and/or ``list_name`` at or after ``since``, oldest first."""
    query = select(AuditEvent).order_by(AuditEvent.id)
    if part is not None:
        query = query.where(AuditEvent.part == part)
    if list_name is not None:
        query = query.where(AuditEvent.list_name == list_name)
    if since is not None:
        # In UTC: SQLite stores and compares the UTC text form, PostgreSQL the instant.
        query = query.where(AuditEvent.occurred_at >= since.astimezone(UTC))
    return query


def event_row(event: AuditEvent) -> dict[str, object]:
    """An event as a row of :data:`HISTORY_COLUMNS` (time as ISO 8601 UTC text)."""
    return {
        "id": event.id,
        "when_utc": as_utc(event.occurred_at).isoformat(timespec="seconds"),
        "who": event.actor,
        "action": event.action,
        "part": event.part or "",
        "list": event.list_name or "",
        "old": event.old_value or "",
        "new": event.new_value or "",
        "why": event.reason,
    }


def has_events(library, part: str | None = None, list_name: str | None = None) -> bool:
    """Whether any event is about ``part`` and/or ``list_name``."""
    with library.session() as session:
        return session.scalar(history_query(part, list_name).limit(1)) is not None


def history(
    library, part: str | None = None, list_name: str | None = None, since: datetime | None = None
) -> list[dict[str, object]]:
    """Events about a part and/or a list at or after ``since``, oldest first, as rows of
    :data:`HISTORY_COLUMNS`."""
    with library.session() as session:
        return [event_row(event) for event in session.scalars(history_query(part, list_name, since))]
