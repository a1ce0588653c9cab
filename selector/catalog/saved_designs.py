"""Saved designs: a checked stack and resistor, kept with the evidence it rested on.

Each save of a name appends a revision (1, 2, …) to ``design_revisions``; the database
refuses to change or delete a revision (triggers of revision 0005), like the audit
trail. A revision keeps the spec (file name, text, SHA-256, options), the stack, the
resistor, the verdict and contract figures, a snapshot of every used part's record and
list entries (:mod:`selector.catalog.design_snapshot`), the library's content hash
(:mod:`selector.catalog.library_hash`), the schema revision, the tool version, who and
when. The save itself is an audit event (``design saved``).

This module stores and reads revisions and answers "which saved designs use this part";
running the check is the API's job (:func:`selector.api.save_design`).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from selector.catalog import audit
from selector.catalog.design_snapshot import part_snapshot
from selector.catalog.library_hash import content_hash
from selector.catalog.models import DESIGN_NAME_LENGTH, DesignRevision, SavedDesign, utc_now
from selector.catalog.user_text import checked_name
from selector.errors import LibraryError, OptionError, RailwrightError
from selector.spec.spec_source import SpecSource
from selector.spec.units import format_quantity, shown

ACTION_DESIGN_SAVED = "design saved"
#: Longest reason text [characters] (as for list entries).
REASON_LIMIT = 2000
#: PostgreSQL advisory-lock key that serialises saves with each other and with part
#: removals (SQLite's write lock already covers the whole database).
_DESIGNS_LOCK_KEY = 7_302_552


class UnknownDesignError(RailwrightError):
    """A saved design named by the user is not in the library (exit 1)."""


def check_design_name(name: str, place: str = "NAME") -> str:
    """A design name stripped; :class:`OptionError` naming ``place`` when unusable."""
    return checked_name(name, place, kind="design name", longest=DESIGN_NAME_LENGTH,
                        missing="give the saved design a name")  # fmt: skip


def check_reason(reason: str | None, place: str = "--reason") -> str:
    """A save's reason stripped; :class:`OptionError` when missing or not one line."""
    cleaned = (reason or "").strip()
    if not cleaned:
        raise OptionError(f"{place}: missing; every save of a design needs a reason")
    if len(cleaned) > REASON_LIMIT or not cleaned.isprintable():
        raise OptionError(f"{place}: must be one line of at most {REASON_LIMIT} characters")
    return cleaned


def verdict_text(meets: bool, feasible: bool, list_allows: bool, reason: str) -> str:
    """A verdict in words: the list's first, then the electrical one."""
    if meets:
        electrical = "meets the spec at every corner"
    elif feasible:
        electrical = "feasible, but outside the tolerance window"
    else:
        electrical = f"not feasible ({reason})"
    return electrical if list_allows else f"uses parts its list does not allow; {electrical}"


@dataclass(frozen=True)
class DesignContent:
    """What a save stores about the design itself (the API fills it from a check).

    Attributes
    ----------
    spec_source : SpecSource
    stack : str
        Stack notation as the check wrote it.
    resistor_ohm : float [Ω]
    resistor_chosen : bool
        Whether the check chose the resistor from the series.
    list_name : str or None
        The spec's approved-parts list.
    feasible, meets, list_allows : bool
    figures : dict
        The contract figures of ``check --json`` (no corners).
    list_warnings, list_conditions : list of str
    snapshot : dict
        :func:`selector.catalog.design_snapshot.part_snapshot` of the used parts, taken
        before the check; the save refuses when the database no longer agrees.
    """

    spec_source: SpecSource
    stack: str
    resistor_ohm: float
    resistor_chosen: bool
    list_name: str | None
    feasible: bool
    meets: bool
    list_allows: bool
    figures: dict
    list_warnings: list[str] = field(default_factory=list)
    list_conditions: list[str] = field(default_factory=list)
    snapshot: dict = field(default_factory=dict)

    @property
    def positive(self) -> bool:
        """Meets the spec and uses only parts its list allows."""
        return self.meets and self.list_allows

    @property
    def verdict(self) -> str:
        return verdict_text(self.meets, self.feasible, self.list_allows, str(self.figures.get("reason", "")))

    def summary(self) -> str:
        """``STACK with R``, the way a design is named in messages."""
        return f"{self.stack} with {format_quantity(self.resistor_ohm, 'Ω')}"


@dataclass(frozen=True)
class SavedRevision:
    """One stored revision of a saved design.

    Attributes
    ----------
    name : str
    revision, revisions : int
        This revision's number and how many the design has.
    saved_at : datetime
        UTC.
    saved_by, reason : str
    content : DesignContent
    library_sha256, schema_revision, tool_version : str
    """

    name: str
    revision: int
    revisions: int
    saved_at: datetime
    saved_by: str
    reason: str
    content: DesignContent
    library_sha256: str
    schema_revision: str
    tool_version: str

    @property
    def parts_used(self) -> list[str]:
        return list(self.content.snapshot)


def lock_saved_designs(session: Session) -> None:
    """Serialise this write with every other save and part removal (PostgreSQL; SQLite's
    write lock, taken at BEGIN, already does)."""
    if session.get_bind().dialect.name == "postgresql":
        session.execute(select(func.pg_advisory_xact_lock(_DESIGNS_LOCK_KEY)))


def save_revision(
    library, name: str, content: DesignContent, *, reason: str, by: str | None, schema_revision: str,
    tool_version: str,
) -> SavedRevision:
    """Append a revision of ``name`` (the design is created by its first save).

    Raises
    ------
    LibraryError
        When a used part's record or list entries changed since ``content.snapshot``.
    """
    name = check_design_name(name)
    reason = check_reason(reason)
    actor = audit.person(by)

    def work(session: Session) -> SavedRevision:
        lock_saved_designs(session)
        if part_snapshot(session, list(content.snapshot)) != content.snapshot:
            raise LibraryError(
                f"the parts or list entries of '{name}' changed while it was being checked; save it again"
            )
        now = utc_now()
        design = session.scalar(select(SavedDesign).where(SavedDesign.name == name))
        if design is None:
            design = SavedDesign(name=name, created_at=now, created_by=actor)
            session.add(design)
            session.flush()
        number = (session.scalar(
            select(func.max(DesignRevision.revision)).where(DesignRevision.design_id == design.id)) or 0) + 1
        row = DesignRevision(
            design_id=design.id, revision=number, saved_at=now, saved_by=actor, reason=reason,
            **_content_columns(content), library_sha256=content_hash(session),
            schema_revision=schema_revision, tool_version=tool_version,
        )
        session.add(row)
        audit.record_events(session, [audit.Event(
            ACTION_DESIGN_SAVED, reason, list_name=content.list_name,
            new_value=f"'{name}' revision {number}: {content.summary()}; {content.verdict}",
        )], actor=actor, at=now)
        session.flush()
        return _revision(name, row, number)

    return library.write(work)


def _content_columns(content: DesignContent) -> dict[str, object]:
    source = content.spec_source
    return {
        "spec_file": source.file_name, "spec_text": source.text, "spec_sha256": source.sha256,
        "spec_options": json.dumps(source.overrides, ensure_ascii=False),
        "stack": content.stack, "resistor_ohm": float(content.resistor_ohm),
        "resistor_chosen": bool(content.resistor_chosen), "list_name": content.list_name,
        "feasible": bool(content.feasible), "meets": bool(content.meets), "list_allows": bool(content.list_allows),
        "figures": json.dumps(content.figures, ensure_ascii=False),
        "list_notes": json.dumps({"warnings": content.list_warnings, "conditions": content.list_conditions},
                                 ensure_ascii=False),
        "parts_used": json.dumps(list(content.snapshot), ensure_ascii=False),
        "snapshot": json.dumps(content.snapshot, ensure_ascii=False),
    }


def _revision(name: str, row: DesignRevision, revisions: int) -> SavedRevision:
    notes = json.loads(row.list_notes)
    content = DesignContent(
        spec_source=SpecSource(row.spec_file, row.spec_text, row.spec_sha256, json.loads(row.spec_options)),
        stack=row.stack, resistor_ohm=row.resistor_ohm, resistor_chosen=row.resistor_chosen,
        list_name=row.list_name, feasible=row.feasible, meets=row.meets, list_allows=row.list_allows,
        figures=json.loads(row.figures), list_warnings=notes["warnings"], list_conditions=notes["conditions"],
        snapshot=json.loads(row.snapshot),
    )
    return SavedRevision(name, row.revision, revisions, audit.as_utc(row.saved_at), row.saved_by, row.reason,
                         content, row.library_sha256, row.schema_revision, row.tool_version)


def _find_design(session: Session, name: str) -> SavedDesign:
    found = session.scalar(select(SavedDesign).where(SavedDesign.name == name.strip()))
    if found is None:
        known = sorted(session.scalars(select(SavedDesign.name)))
        if known:
            hint = f"saved designs: {', '.join(known[:20])}" + (" …" if len(known) > 20 else "")
        else:
            hint = "the library has no saved designs yet"
        raise UnknownDesignError(f"unknown saved design '{shown(name.strip()[:60])}' ({hint})")
    return found


def saved_revision(library, name: str, revision: int | None = None) -> SavedRevision:
    """One revision of a design (default its latest).

    Raises
    ------
    UnknownDesignError
        When no design has that name.
    OptionError
        When the design has no such revision (``--revision``).
    """
    with library.session() as session:
        design = _find_design(session, name)
        rows = {row.revision: row for row in session.scalars(
            select(DesignRevision).where(DesignRevision.design_id == design.id))}
        number = max(rows) if revision is None else revision
        if number not in rows:
            raise OptionError(f"--revision: '{design.name}' has revisions 1 … {max(rows)}, not {revision}")
        return _revision(design.name, rows[number], max(rows))


def _latest_query():
    latest = (
        select(DesignRevision.design_id, func.max(DesignRevision.revision).label("revision"))
        .group_by(DesignRevision.design_id)
        .subquery()
    )
    return (
        select(SavedDesign.name, DesignRevision, latest.c.revision)
        .join(DesignRevision, DesignRevision.design_id == SavedDesign.id)
        .join(latest, (latest.c.design_id == DesignRevision.design_id) & (latest.c.revision == DesignRevision.revision))
    )


def latest_revisions(library, names: Sequence[str] | None = None) -> list[SavedRevision]:
    """The latest revision of every design (or of the named ones, in that order), by name.

    Raises
    ------
    UnknownDesignError
        For the first name no design has.
    """
    with library.session() as session:
        if names:
            wanted = [_find_design(session, name).name for name in names]
        found = {name: _revision(name, row, count) for name, row, count in session.execute(_latest_query())}
    if not names:
        return [found[name] for name in sorted(found)]
    return [found[name] for name in dict.fromkeys(wanted)]


def revision_history(library, name: str) -> list[SavedRevision]:
    """Every revision of one design, oldest first."""
    with library.session() as session:
        design = _find_design(session, name)
        rows = list(session.scalars(select(DesignRevision).where(DesignRevision.design_id == design.id)
                                    .order_by(DesignRevision.revision)))
        return [_revision(design.name, row, len(rows)) for row in rows]


def designs_using(session: Session, part: str, list_name: str | None = None) -> list[tuple[str, int]]:
    """``(design, revision)`` of every design whose latest revision uses ``part``, by name.

    With ``list_name``, only designs whose spec names that approved-parts list.
    """
    query = _latest_query().where(DesignRevision.parts_used.contains(json.dumps(part), autoescape=True))
    if list_name is not None:
        query = query.where(DesignRevision.list_name == list_name)
    return sorted((name, row.revision) for name, row, _ in session.execute(query) if part in json.loads(row.parts_used))


def where_used(library, part: str, list_name: str | None = None) -> list[tuple[str, int]]:
    """:func:`designs_using` in its own reading transaction."""
    with library.session() as session:
        return designs_using(session, part, list_name)


def used_by_text(users: Sequence[tuple[str, int]]) -> str:
    """``'a' (revision 2), 'b' (revision 1)``."""
    return ", ".join(f"'{name}' (revision {revision})" for name, revision in users)


#: Columns of ``railwright designs export``.
EXPORT_COLUMNS: tuple[str, ...] = (
    "design", "revision", "revisions", "saved_utc", "saved_by", "reason", "stack", "resistor_ohm",
    "resistor_chosen", "list", "verdict", "meets", "feasible", "list_allows", "vout_nom_v", "vout_low_v",
    "vout_high_v", "error_v", "margin", "i_min_a", "parts", "library_sha256", "spec_file", "spec_sha256",
    "spec_options", "schema_revision", "tool_version",
)  # fmt: skip


def export_row(saved: SavedRevision) -> dict[str, object]:
    """One revision as a row of :data:`EXPORT_COLUMNS` (numbers exact, SI units)."""
    content, figures = saved.content, saved.content.figures
    return {
        "design": saved.name, "revision": saved.revision, "revisions": saved.revisions,
        "saved_utc": saved.saved_at.isoformat(timespec="seconds"), "saved_by": saved.saved_by,
        "reason": saved.reason, "stack": content.stack, "resistor_ohm": content.resistor_ohm,
        "resistor_chosen": content.resistor_chosen, "list": content.list_name or "", "verdict": content.verdict,
        "meets": content.meets, "feasible": content.feasible, "list_allows": content.list_allows,
        **{key: figures.get(key) for key in ("vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "margin", "i_min_a")},
        "parts": " ".join(saved.parts_used), "library_sha256": saved.library_sha256,
        "spec_file": content.spec_source.file_name or "", "spec_sha256": content.spec_source.sha256 or "",
        "spec_options": " ".join(content.spec_source.option_texts()),
        "schema_revision": saved.schema_revision, "tool_version": saved.tool_version,
    }


def audit_chain_status(library) -> str | None:
    """Whether the audit trail's hash chain is intact, in one line; None while the library
    keeps no chain.

    This is the one place ``designs verify`` and the report ask. A library revision that
    chains every audit event (and saved revision) to the previous one by SHA-256 answers
    here, e.g. ``"hash chain intact (1234 events)"`` or the first broken event.
    """
    return None
