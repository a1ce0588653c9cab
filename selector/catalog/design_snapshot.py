"""What a design rests on, part by part: each used part's record and its list entries.

A saved design keeps this snapshot as it was at the save; a report shows it as it is
today; :func:`snapshot_changes` says, field by field, what differs between the two.

The snapshot is a JSON-able dict ``{part: {"record": {...}, "lists": {list: {...}}}}``:
``record`` has :data:`selector.catalog.models.RECORD_COLUMNS` (floats exact, None when
not given); each list entry has :data:`ENTRY_FIELDS` (``since`` as ISO 8601 UTC text).
A field added to list entries later (say a re-qualification flag) goes into
:data:`ENTRY_FIELDS` and :func:`_entry_values`, and is then snapshotted, compared and
shown like the others.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from selector.catalog import audit
from selector.catalog.models import RECORD_COLUMNS, ApprovedList, ListEntry, Part
from selector.files.csv_cells import format_number

#: The ``source`` of every bundled demo set (library/demo_parts.csv).
DEMO_SOURCE = "invented demo data"
#: Fields of a list entry in a snapshot, in the order shown.
ENTRY_FIELDS: tuple[str, ...] = ("status", "reason", "by", "since", "condition")
#: Entry fields whose change is a change of the part's standing on the list (who set it,
#: and when, change with them).
COMPARED_ENTRY_FIELDS: tuple[str, ...] = ("status", "reason", "condition")


def _entry_values(entry: ListEntry) -> dict[str, object]:
    return {
        "status": entry.status,
        "reason": entry.reason,
        "by": entry.changed_by,
        "since": audit.as_utc(entry.since).isoformat(timespec="seconds"),
        "condition": entry.condition,
    }


def part_snapshot(session: Session, names: Sequence[str]) -> dict[str, dict]:
    """Each named part's record and entries on every list, as the database has them now.

    Parts not in the library are left out (the caller decides what their absence means).
    """
    wanted = list(dict.fromkeys(names))
    found: dict[str, dict] = {}
    for start in range(0, len(wanted), 500):
        chunk = wanted[start : start + 500]
        for part in session.scalars(select(Part).where(Part.part.in_(chunk))):
            found[part.part] = {"record": part.record(), "lists": {}}
        rows = session.execute(
            select(Part.part, ApprovedList.name, ListEntry)
            .join(ListEntry, ListEntry.part_id == Part.id)
            .join(ApprovedList, ApprovedList.id == ListEntry.list_id)
            .where(Part.part.in_(chunk))
        )
        for part, list_name, entry in rows:
            found[part]["lists"][list_name] = _entry_values(entry)
    for entry in found.values():
        entry["lists"] = dict(sorted(entry["lists"].items()))
    return {name: found[name] for name in wanted if name in found}


def value_text(value: object) -> str:
    """A snapshot value as shown in a comparison: exact numbers, ``(not given)`` for None."""
    if value is None or value == "":
        return "(not given)"
    if isinstance(value, float):
        return format_number(value)
    return str(value)


@dataclass(frozen=True)
class FieldChange:
    """One field of a part's record that differs from the snapshot."""

    part: str
    field: str
    old: object
    new: object

    def text(self) -> str:
        return f"{self.part}: {self.field} {value_text(self.old)} \u2192 {value_text(self.new)}"


def entry_text(entry: Mapping[str, object] | None) -> str:
    """A list entry in one phrase: ``banned (supplier discontinued)``, ``not on the list``."""
    if entry is None:
        return "not on the list"
    text = str(entry["status"])
    if entry.get("condition"):
        text += f": {entry['condition']}"
    return f"{text} ({entry['reason']})" if entry.get("reason") else text


@dataclass(frozen=True)
class StatusChange:
    """A part's entry on one list that differs from the snapshot (None: not on the list)."""

    part: str
    list_name: str
    old: dict | None
    new: dict | None

    def text(self) -> str:
        return f"{self.part} on '{self.list_name}': {entry_text(self.old)} \u2192 {entry_text(self.new)}"


def _same(old: object, new: object) -> bool:
    # Exact comparison, but a number written as 3 and read back as 3.0 is the same value.
    if isinstance(old, (int, float)) and isinstance(new, (int, float)):
        return float(old) == float(new)
    return old == new


def snapshot_changes(saved: Mapping[str, dict], today: Mapping[str, dict]) -> tuple[
    list[FieldChange], list[StatusChange], list[str]
]:
    """What differs between a saved snapshot and today's, part by part.

    Returns
    -------
    field_changes : list of FieldChange
        Per part still in the library, every record field that differs, in column order.
    status_changes : list of StatusChange
        Per part still in the library, every list whose entry differs (by
        :data:`COMPARED_ENTRY_FIELDS`), by list name.
    missing : list of str
        Parts of the snapshot no longer in the library.
    """
    field_changes, status_changes, missing = [], [], []
    for part, then in saved.items():
        now = today.get(part)
        if now is None:
            missing.append(part)
            continue
        for column in RECORD_COLUMNS:
            old, new = then["record"].get(column), now["record"].get(column)
            if not _same(old, new):
                field_changes.append(FieldChange(part, column, old, new))
        for list_name in sorted(set(then["lists"]) | set(now["lists"])):
            old, new = then["lists"].get(list_name), now["lists"].get(list_name)
            if old is None or new is None or any(old.get(f) != new.get(f) for f in COMPARED_ENTRY_FIELDS):
                status_changes.append(StatusChange(part, list_name, old, new))
    return field_changes, status_changes, missing


def uses_demo_data(snapshot: Mapping[str, dict]) -> bool:
    """Whether any part of the snapshot is a bundled, invented demo set."""
    return any(entry["record"].get("source") == DEMO_SOURCE for entry in snapshot.values())
