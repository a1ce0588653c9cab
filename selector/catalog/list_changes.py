"""Changes to the approved-parts lists, each recorded as an audit event.

Every change of an entry needs a reason and a person and is recorded as an audit event
(:mod:`selector.catalog.audit`) in the same transaction as the change. Writes lock the
list's row first (PostgreSQL ``SELECT … FOR UPDATE``; SQLite's write lock covers the
whole database), so concurrent changes to one list are serialised and none is lost.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from sqlalchemy import select
from sqlalchemy.orm import Session

from selector.catalog import audit
from selector.catalog.approved_lists import (
    TEXT_LIMIT,
    Entry,
    check_list_name,
    entry_problems,
    find_list,
    find_parts,
)
from selector.catalog.models import ApprovedList, ListEntry, Part, utc_now
from selector.errors import InputDataError, OptionError, UnknownPartError


def create_list(library, name: str, *, description: str = "", by: str | None = None) -> None:
    """Make a new, empty list; refuses a name already in use."""
    name = check_list_name(name)
    actor = audit.person(by)
    description = description.strip()
    if len(description) > TEXT_LIMIT or not description.isprintable():
        raise OptionError(f"--description: must be one line of at most {TEXT_LIMIT} characters")

    def work(session: Session) -> None:
        if session.scalar(select(ApprovedList.id).where(ApprovedList.name == name)) is not None:
            raise InputDataError(f"the list '{name}' already exists")
        now = utc_now()
        session.add(ApprovedList(name=name, description=description, created_at=now, created_by=actor))
        audit.record_events(
            session, [audit.Event(audit.ACTION_LIST_CREATED, description or "new list", list_name=name)],
            actor=actor, at=now,
        )

    library.write(work)


def rename_list(library, old: str, new: str, *, reason: str | None, by: str | None = None) -> None:
    """Rename a list; its entries and history stay (events keep the name they were made under)."""
    new = check_list_name(new, "NEW")
    reason = _required_reason(reason)
    actor = audit.person(by)

    def work(session: Session) -> None:
        approved_list = find_list(session, old, lock=True)
        if session.scalar(select(ApprovedList.id).where(ApprovedList.name == new)) is not None:
            raise InputDataError(f"the list '{new}' already exists")
        approved_list.name = new
        audit.record_events(
            session,
            [audit.Event(audit.ACTION_LIST_RENAMED, reason, list_name=new, old_value=old, new_value=new)],
            actor=actor, at=utc_now(),
        )

    library.write(work)


def _required_reason(reason: str | None) -> str:
    return audit.required_reason(reason, "every change to a list needs a reason")


@dataclass
class ListPlan:
    """What setting entries does to a list: entries added, changed (old text) and unchanged."""

    added: list[Entry] = field(default_factory=list)
    changed: list[tuple[Entry, str]] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)

    def summary(self) -> str:
        """One line: how many entries are added, changed and unchanged."""
        return f"{len(self.added)} added, {len(self.changed)} changed, {len(self.unchanged)} unchanged"

    def lines(self) -> list[str]:
        """Every entry's fate, one line each; unchanged parts on one line."""
        out = [f"add {entry.part}: {entry.status_text()}" for entry in self.added]
        out += [f"change {entry.part}: {old} \u2192 {entry.status_text()}" for entry, old in self.changed]
        if self.unchanged:
            out.append("unchanged: " + ", ".join(self.unchanged))
        return out


def apply_entries(
    library,
    list_name: str,
    entries: Sequence[Entry],
    *,
    by: str | None = None,
    dry_run: bool = False,
) -> ListPlan:
    """Give parts their wanted statuses on a list, all in one transaction, with events.

    Parameters
    ----------
    library : Library
    list_name : str
    entries : sequence of Entry
        Checked wanted statuses (see :func:`entry_problems`), one per part.
    by : str, optional
        Who makes the change; default the OS user.
    dry_run : bool
        Plan only; write nothing.

    Raises
    ------
    UnknownListError
        When the list does not exist.
    UnknownPartError
        When a part is not in the library (every unknown part named, one per line;
        :func:`selector.catalog.approved_list_csv.import_list_file` names file lines).
    """
    actor = audit.person(by)

    def plan(session: Session) -> tuple[ListPlan, ApprovedList, dict[str, Part], dict[int, ListEntry]]:
        approved_list = find_list(session, list_name, lock=not dry_run)
        parts = find_parts(session, [entry.part for entry in entries])
        unknown = [entry.part for entry in entries if entry.part not in parts]
        if unknown:
            raise UnknownPartError(
                "\n".join(f"unknown part '{part}' (not in the library {library.location_text()})" for part in unknown)
            )
        current = {
            entry.part_id: entry
            for entry in session.scalars(select(ListEntry).where(ListEntry.list_id == approved_list.id))
        }
        result = ListPlan()
        for entry in entries:
            existing = current.get(parts[entry.part].id)
            if existing is None:
                result.added.append(entry)
                continue
            old = Entry(entry.part, existing.status, existing.reason, existing.condition)
            if old == entry:
                result.unchanged.append(entry.part)
            else:
                result.changed.append((entry, old.status_text()))
        return result, approved_list, parts, current

    if dry_run:
        with library.session() as session:
            return plan(session)[0]

    def work(session: Session) -> ListPlan:
        result, approved_list, parts, current = plan(session)
        now = utc_now()
        events = []
        for entry in result.added:
            session.add(
                ListEntry(list_id=approved_list.id, part_id=parts[entry.part].id, status=entry.status,
                          reason=entry.reason, condition=entry.condition, since=now, changed_by=actor)
            )
            events.append(audit.Event(audit.ACTION_STATUS_SET, entry.reason, part=entry.part,
                                      list_name=list_name, new_value=entry.status_text()))
        for entry, old_text in result.changed:
            row = current[parts[entry.part].id]
            row.status, row.reason, row.condition = entry.status, entry.reason, entry.condition
            row.since, row.changed_by = now, actor
            events.append(audit.Event(audit.ACTION_STATUS_SET, entry.reason, part=entry.part,
                                      list_name=list_name, old_value=old_text, new_value=entry.status_text()))
        audit.record_events(session, events, actor=actor, at=now)
        return result

    return library.write(work)


def set_status(
    library,
    list_name: str,
    part: str,
    status: str,
    *,
    reason: str | None,
    by: str | None = None,
    condition: str | None = None,
) -> ListPlan:
    """Give one part a status on a list (``railwright approved set``).

    Raises
    ------
    OptionError
        For an unknown status, a missing reason, or a condition that does not fit the
        status; each names its option.
    UnknownListError, UnknownPartError
        When the list or the part does not exist.
    """
    entry = Entry(part.strip(), status.strip().lower(), (reason or "").strip(), (condition or "").strip())
    problems = entry_problems(entry.status, entry.reason, entry.condition)
    if problems:
        where, message = problems[0]
        raise OptionError(f"{'STATUS' if where == 'status' else '--' + where}: {message}")
    return apply_entries(library, list_name, [entry], by=by)


def drop_entry(library, list_name: str, part: str, *, reason: str | None, by: str | None = None) -> None:
    """Take a part off a list (the removal is an audit event with the last status)."""
    reason = _required_reason(reason)
    actor = audit.person(by)

    def work(session: Session) -> None:
        approved_list = find_list(session, list_name, lock=True)
        found = session.execute(
            select(ListEntry)
            .join(Part, Part.id == ListEntry.part_id)
            .where(ListEntry.list_id == approved_list.id, Part.part == part)
        ).scalar()
        if found is None:
            raise UnknownPartError(f"{part} is not on the list '{list_name}'")
        old = Entry(part, found.status, found.reason, found.condition).status_text()
        session.delete(found)
        audit.record_events(
            session,
            [audit.Event(audit.ACTION_ENTRY_REMOVED, reason, part=part, list_name=list_name, old_value=old)],
            actor=actor, at=utc_now(),
        )

    library.write(work)

