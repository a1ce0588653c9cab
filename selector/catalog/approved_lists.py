"""The shop's approved-parts lists: named lists giving parts a status, with the audit trail.

A library holds any number of named lists (say one per product line). On each list a
part has one status of :data:`selector.spec.list_statuses.LIST_STATUSES`:

``approved``
    may be designed in;
``conditional``
    may be designed in under its condition, shown beside every result that uses it;
``evaluating``
    usable only when a search asks for it (``--statuses``);
``no-new-design`` and ``banned``
    never usable.

A part not on a list is not usable from that list. This module checks input and reads
lists; :mod:`selector.catalog.list_changes` makes the changes, each with its audit event.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from selector.catalog import audit
from selector.catalog.models import LIST_NAME_LENGTH, ApprovedList, ListEntry, Part
from selector.catalog.user_text import checked_name
from selector.errors import OptionError, RailwrightError, UnknownPartError
from selector.spec.list_statuses import LIST_STATUSES, UNUSABLE_STATUSES
from selector.spec.stack_notation import part_id_order
from selector.spec.units import shown

if TYPE_CHECKING:
    import numpy as np

    from selector.physics.partset import PartSet

#: Statuses a search uses when it names a list but no statuses.
DEFAULT_USABLE_STATUSES: tuple[str, ...] = ("approved", "conditional")
#: Longest reason or condition text [characters].
TEXT_LIMIT = 2000


class UnknownListError(RailwrightError):
    """A list named by the user is not in the library (exit 1)."""


@dataclass(frozen=True)
class Entry:
    """A wanted status of one part: what an ``approved set`` or a list-CSV row asks for."""

    part: str
    status: str
    reason: str
    condition: str = ""

    def status_text(self) -> str:
        """``status``, or ``conditional: condition`` for a conditional part."""
        return f"{self.status}: {self.condition}" if self.condition else self.status


# Checking input ------------------------------------------------------------------------


def check_list_name(name: str, place: str = "LIST") -> str:
    """A list name stripped; :class:`OptionError` naming ``place`` when unusable."""
    return checked_name(name, place, kind="list name", longest=LIST_NAME_LENGTH,
                        missing="give the name of an approved-parts list")  # fmt: skip


def status_problem(status: str) -> str | None:
    """Why ``status`` is not a list status, or None."""
    if status in LIST_STATUSES:
        return None
    return f"'{shown(status[:40])}' is not a list status; expected one of {', '.join(LIST_STATUSES)}"


def entry_problems(status: str, reason: str, condition: str) -> list[tuple[str, str]]:
    """Every problem of a wanted status as ``(field, message)``; empty when it is fine.

    A status needs a reason; a ``conditional`` status needs its condition, and no other
    status carries one (it would never be shown).
    """
    problems = []
    status_message = status_problem(status)
    if status_message:
        problems.append(("status", status_message))
    if not reason:
        problems.append(("reason", "missing; every status change needs a reason"))
    for name, text in (("reason", reason), ("condition", condition)):
        if len(text) > TEXT_LIMIT:
            problems.append((name, f"longer than {TEXT_LIMIT} characters"))
        elif any(ord(character) < 32 for character in text):
            problems.append((name, "holds a control character; write it on one line"))
    if status == "conditional" and not condition:
        problems.append(("condition", "missing; a conditional part needs its condition of use"))
    elif condition and status != "conditional" and not status_message:
        problems.append(("condition", f"only a conditional part carries a condition, not a {status} one"))
    return problems


def check_statuses(statuses: Sequence[str] | None) -> tuple[str, ...]:
    """The usable statuses of a search: the default, or ``statuses`` checked."""
    if statuses is None:
        return DEFAULT_USABLE_STATUSES
    for status in statuses:
        problem = status_problem(status)
        if problem:
            raise OptionError(f"--statuses: {problem}")
        if status in UNUSABLE_STATUSES:
            raise OptionError(f"--statuses: '{status}' parts may never be designed in")
    return tuple(statuses)


# Reading -------------------------------------------------------------------------------


def find_list(session: Session, name: str, *, lock: bool = False) -> ApprovedList:
    """The list named ``name`` (locked for update when ``lock``); UnknownListError if none."""
    name = name.strip()
    query = select(ApprovedList).where(ApprovedList.name == name)
    found = session.scalar(query.with_for_update() if lock else query)
    if found is None:
        known = sorted(session.scalars(select(ApprovedList.name)))
        hint = f"known lists: {', '.join(known)}" if known else "the library has no lists yet"
        raise UnknownListError(
            f"unknown list '{shown(name[:60])}' ({hint}); create it with 'railwright approved create NAME'"
        )
    return found


def find_parts(session: Session, names: Sequence[str]) -> dict[str, Part]:
    """The library's parts among ``names``, by part id."""
    found: dict[str, Part] = {}
    for start in range(0, len(names), 500):
        chunk = list(names[start : start + 500])
        found.update({part.part: part for part in session.scalars(select(Part).where(Part.part.in_(chunk)))})
    return found


def missing_parts(library, names: Sequence[str]) -> set[str]:
    """Which of ``names`` are not parts of the library."""
    with library.session() as session:
        return set(names) - set(find_parts(session, names))


def check_history_subject(library, part: str | None, list_name: str | None) -> None:
    """Refuse a part or list the library never had: not in it now and named by no event.

    Raises
    ------
    UnknownPartError, UnknownListError
    """
    if part and missing_parts(library, [part]) and not audit.has_events(library, part=part):
        raise UnknownPartError(f"unknown part '{shown(part[:60])}': not in the library, and no event names it")
    if list_name and not audit.has_events(library, list_name=list_name):
        with library.session() as session:
            find_list(session, list_name)


def lists_summary(library) -> list[dict[str, object]]:
    """Every list with its description, creator and count of parts per status, by name."""
    with library.session() as session:
        counts = Counter(
            {(name, status): count for name, status, count in session.execute(
                select(ApprovedList.name, ListEntry.status, func.count())
                .join(ListEntry, ListEntry.list_id == ApprovedList.id)
                .group_by(ApprovedList.name, ListEntry.status)
            )}
        )
        rows = []
        for entry in session.scalars(select(ApprovedList)):
            row = {"list": entry.name, "description": entry.description, "created_by": entry.created_by,
                   "created_at": audit.as_utc(entry.created_at)}
            row.update({status: counts[(entry.name, status)] for status in LIST_STATUSES})
            rows.append(row)
    return sorted(rows, key=lambda row: row["list"])


def list_entries(library, list_name: str, status: str | None = None) -> list[dict[str, object]]:
    """The entries of a list (optionally of one status) in part-id order.

    Each row has ``part, status, reason, condition, since`` (UTC) and ``by``, plus the
    part's ``family``, ``package``, ``description`` and key parameters
    (:data:`KEY_PARAMETERS`).
    """
    if status is not None and status_problem(status):
        raise OptionError(f"--status: {status_problem(status)}")
    with library.session() as session:
        approved_list = find_list(session, list_name)
        query = (
            select(ListEntry, Part)
            .join(Part, Part.id == ListEntry.part_id)
            .where(ListEntry.list_id == approved_list.id)
        )
        if status is not None:
            query = query.where(ListEntry.status == status)
        rows = [
            {
                "part": part.part,
                "status": entry.status,
                "reason": entry.reason,
                "condition": entry.condition,
                "since": audit.as_utc(entry.since).isoformat(timespec="seconds"),
                "by": entry.changed_by,
                **{column: getattr(part, column) for column in KEY_PARAMETERS},
            }
            for entry, part in session.execute(query)
        ]
    return sorted(rows, key=lambda row: part_id_order(row["part"]))


#: Part columns an exported list carries beside each entry, for the reader's benefit.
KEY_PARAMETERS: tuple[str, ...] = ("family", "package", "vz_v", "izt_a", "is_a", "n", "pd_w", "description")


@dataclass(frozen=True)
class ListView:
    """One list's view of a PartSet: per part, its status, condition and usability.

    Attributes
    ----------
    list_name : str
    statuses : tuple of str
        The statuses counted as usable.
    status : ndarray of str
        Per part, its status on the list; empty when the part is not on it.
    condition : ndarray of str
        Per part, its condition of use (conditional parts), else empty.
    reason : ndarray of str
        Per part, the reason of its current status, else empty.
    usable : ndarray of bool
        Per part, whether a design may use it.
    """

    list_name: str
    statuses: tuple[str, ...]
    status: np.ndarray
    condition: np.ndarray
    reason: np.ndarray
    usable: np.ndarray

    def unusable_message(self, position: int, part: str) -> str | None:
        """Why the part at ``position`` may not be used, or None when it may."""
        if self.usable[position]:
            return None
        status = self.status[position]
        if not status:
            return f"{part} is not on the list '{self.list_name}'"
        note = "" if status in UNUSABLE_STATUSES else f" (usable here: {', '.join(self.statuses)})"
        return f"{part} is {status} on the list '{self.list_name}'{note}: {self.reason[position]}"


def list_view(library, parts: PartSet, list_name: str, statuses: Sequence[str] | None = None) -> ListView:
    """Status, condition and usability of every part of ``parts`` on a list.

    Parameters
    ----------
    library : Library
        The open library holding the list.
    parts : PartSet
        The parts to look up (typically the whole library's, or a search's).
    list_name : str
    statuses : sequence of str, optional
        Usable statuses; default approved and conditional. ``no-new-design`` and
        ``banned`` are refused.

    Raises
    ------
    UnknownListError
        When the list does not exist.
    OptionError
        For an unknown or never-usable status.
    """
    usable_statuses = check_statuses(statuses)
    with library.session() as session:
        approved_list = find_list(session, list_name)
        rows = session.execute(
            select(Part.part, ListEntry.status, ListEntry.condition, ListEntry.reason)
            .join(Part, Part.id == ListEntry.part_id)
            .where(ListEntry.list_id == approved_list.id)
        ).all()
    by_part = {part: (status, condition, reason) for part, status, condition, reason in rows}
    looked_up = [by_part.get(str(part), ("", "", "")) for part in parts.part]
    import numpy as np  # here: list commands that build no view load no numpy

    status = np.array([row[0] for row in looked_up], dtype=object)
    condition = np.array([row[1] if row[0] == "conditional" else "" for row in looked_up], dtype=object)
    reason = np.array([row[2] for row in looked_up], dtype=object)
    usable = np.isin(status.astype(str), list(usable_statuses))
    return ListView(list_name, usable_statuses, status, condition, reason, usable)


def stack_notes(view: ListView, parts: PartSet, stack: Sequence[int]) -> tuple[list[str], list[str]]:
    """What a list says about a stack's parts: warnings for each part a design may not
    use (naming its status), and ``PART: condition`` for each conditional part.

    Parameters
    ----------
    view : ListView
        The list's view of ``parts``.
    parts : PartSet
    stack : sequence of int
        Positions in ``parts`` of the stack's elements (repeats allowed).
    """
    warnings, conditions = [], []
    for position in dict.fromkeys(int(index) for index in stack if index >= 0):
        name = str(parts.part[position])
        message = view.unusable_message(position, name)
        if message:
            warnings.append(message)
        elif view.condition[position]:
            conditions.append(f"{name}: {view.condition[position]}")
    return warnings, conditions


def compare_lists(library, first: str, second: str) -> list[dict[str, str]]:
    """Parts whose status (or condition) differs between two lists, in part-id order.

    Each row: ``part``, and the status text on each list (empty when not on it).
    """
    texts = []
    for name in (first, second):
        texts.append(
            {
                row["part"]: Entry(row["part"], row["status"], row["reason"], row["condition"]).status_text()
                for row in list_entries(library, name)
            }
        )
    parts = sorted(set(texts[0]) | set(texts[1]), key=part_id_order)
    return [
        {"part": part, first: texts[0].get(part, ""), second: texts[1].get(part, "")}
        for part in parts
        if texts[0].get(part) != texts[1].get(part)
    ]
