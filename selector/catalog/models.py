"""SQLAlchemy 2.x typed ORM models of the parts library.

Parts and the import log (revision 0001); approved-parts lists, their entries and the
append-only audit trail (revision 0002); the temperature-coefficient spread of a part
(revision 0003); saved designs and their append-only revisions (revision 0005).

The database schema is made only by the Alembic migrations in ``migrations/``; these
models describe the same schema for queries, and a test asserts the two never drift
(Alembic's autogenerate comparison must find nothing).

Every numeric column is an SI float (V, A, Ω, W, °C, V/K, K/W, eV, percent points);
NULL means "not given", and the physics contract's defaults (DESIGN §3) are applied only
when a :class:`selector.physics.partset.PartSet` is built.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import (
    Boolean,
    CheckConstraint,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

from selector.spec.list_statuses import LIST_STATUSES
from selector.spec.part_fields import FAMILIES, NUMERIC_COLUMNS

#: Constraint names are fixed so that SQLite batch migrations can find them again.
NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

#: Longest part id (matches ``selector.spec.stack_notation.PART_ID_PATTERN``).
PART_ID_LENGTH = 64
PACKAGE_LENGTH = 64
DESCRIPTION_LENGTH = 500
SOURCE_LENGTH = 500

LIST_NAME_LENGTH = 100
PERSON_LENGTH = 128
EVENT_ACTION_LENGTH = 32
DESIGN_NAME_LENGTH = 100

#: SQL text of the family CHECK constraint, shared with the initial migration.
FAMILY_CHECK_SQL = "family IN (" + ", ".join(f"'{family}'" for family in FAMILIES) + ")"
#: SQL text of the list-status CHECK constraint, compared with revision 0002 by a test.
STATUS_CHECK_SQL = "status IN (" + ", ".join(f"'{status}'" for status in LIST_STATUSES) + ")"


def utc_now() -> datetime:
    """The current time, timezone-aware in UTC."""
    return datetime.now(UTC)


class Base(DeclarativeBase):
    """Declarative base with the library's constraint naming convention."""

    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class Part(Base):
    """One parameter set: a forward element or a zener, by the shop's own part id."""

    __tablename__ = "parts"
    __table_args__ = (CheckConstraint(FAMILY_CHECK_SQL, name="family_known"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    part: Mapped[str] = mapped_column(String(PART_ID_LENGTH), unique=True)
    family: Mapped[str] = mapped_column(String(16))
    description: Mapped[str] = mapped_column(String(DESCRIPTION_LENGTH), default="")
    package: Mapped[str] = mapped_column(String(PACKAGE_LENGTH), default="")
    is_a: Mapped[float | None] = mapped_column(Float)
    n: Mapped[float | None] = mapped_column(Float)
    rs_ohm: Mapped[float | None] = mapped_column(Float)
    eg_ev: Mapped[float | None] = mapped_column(Float)
    xti: Mapped[float | None] = mapped_column(Float)
    tnom_c: Mapped[float | None] = mapped_column(Float)
    vf_tol_v: Mapped[float | None] = mapped_column(Float)
    vz_v: Mapped[float | None] = mapped_column(Float)
    izt_a: Mapped[float | None] = mapped_column(Float)
    zzt_ohm: Mapped[float | None] = mapped_column(Float)
    izk_a: Mapped[float | None] = mapped_column(Float)
    zzk_ohm: Mapped[float | None] = mapped_column(Float)
    vz_tol_pct: Mapped[float | None] = mapped_column(Float)
    tc_v_per_k: Mapped[float | None] = mapped_column(Float)
    #: Spread (±) of the temperature coefficient, any family (revision 0003).
    tc_tol_v_per_k: Mapped[float | None] = mapped_column(Float)
    pd_w: Mapped[float | None] = mapped_column(Float)
    tj_max_c: Mapped[float | None] = mapped_column(Float)
    theta_ja_k_per_w: Mapped[float | None] = mapped_column(Float)
    if_max_a: Mapped[float | None] = mapped_column(Float)
    i_min_a: Mapped[float | None] = mapped_column(Float)
    source: Mapped[str] = mapped_column(String(SOURCE_LENGTH), default="")
    #: Model-card parameters the physics does not use, kept as ``NAME=value`` text.
    model_extra: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    updated_at: Mapped[datetime] = mapped_column(
        DateTime(timezone=True), default=utc_now, onupdate=utc_now
    )

    def record(self) -> dict[str, object]:
        """The part as a mapping of the parts-CSV columns plus ``source``."""
        return {column: getattr(self, column) for column in RECORD_COLUMNS}


class ImportLog(Base):
    """One import into the library: when, who, which file, and what it did."""

    __tablename__ = "import_log"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    imported_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    imported_by: Mapped[str] = mapped_column(String(128))
    #: What was imported: ``parts csv``, ``model cards``, ``datasheet fit``, ``demo sets``.
    kind: Mapped[str] = mapped_column(String(32))
    file_name: Mapped[str] = mapped_column(String(1000))
    file_sha256: Mapped[str] = mapped_column(String(64))
    rows_added: Mapped[int] = mapped_column(Integer)
    rows_changed: Mapped[int] = mapped_column(Integer)
    rows_unchanged: Mapped[int] = mapped_column(Integer)


class ApprovedList(Base):
    """One named approved-parts list of the shop (e.g. one per product line)."""

    __tablename__ = "approved_lists"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(LIST_NAME_LENGTH), unique=True)
    description: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    created_by: Mapped[str] = mapped_column(String(PERSON_LENGTH))


class ListEntry(Base):
    """A part's current status on one list, with the reason, person and time it was set.

    The foreign key to ``parts`` restricts deletion: a part a list references cannot be
    removed until it is taken off every list (the store refuses first, naming the lists).
    """

    __tablename__ = "list_entries"
    __table_args__ = (
        UniqueConstraint("list_id", "part_id"),
        CheckConstraint(STATUS_CHECK_SQL, name="status_known"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    list_id: Mapped[int] = mapped_column(ForeignKey("approved_lists.id", ondelete="RESTRICT"))
    part_id: Mapped[int] = mapped_column(ForeignKey("parts.id", ondelete="RESTRICT"), index=True)
    status: Mapped[str] = mapped_column(String(16))
    reason: Mapped[str] = mapped_column(Text)
    #: Condition of use of a ``conditional`` part; empty for every other status.
    condition: Mapped[str] = mapped_column(Text, default="")
    since: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    changed_by: Mapped[str] = mapped_column(String(PERSON_LENGTH))


class AuditEvent(Base):
    """One change to a part or a list entry: who, when (UTC), what, old → new, and why.

    Append-only: revision 0002 installs triggers that make the database refuse UPDATE
    and DELETE on this table. ``part`` and ``list_name`` are kept as text, not foreign
    keys, so that the history of a removed part or a renamed list stays readable.
    """

    __tablename__ = "audit_events"
    __table_args__ = (
        Index("ix_audit_events_part", "part"),
        Index("ix_audit_events_occurred_at", "occurred_at"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    occurred_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    actor: Mapped[str] = mapped_column(String(PERSON_LENGTH))
    #: ``part added``, ``part changed``, ``part removed``, ``status set``, ``entry removed``,
    #: ``list created``, ``list renamed``.
    action: Mapped[str] = mapped_column(String(EVENT_ACTION_LENGTH))
    part: Mapped[str | None] = mapped_column(String(PART_ID_LENGTH))
    list_name: Mapped[str | None] = mapped_column(String(LIST_NAME_LENGTH))
    old_value: Mapped[str | None] = mapped_column(Text)
    new_value: Mapped[str | None] = mapped_column(Text)
    reason: Mapped[str] = mapped_column(Text)


class SavedDesign(Base):
    """One saved design, by name; its content is in its revisions (revision 0005)."""

    __tablename__ = "saved_designs"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(DESIGN_NAME_LENGTH), unique=True)
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    created_by: Mapped[str] = mapped_column(String(PERSON_LENGTH))


class DesignRevision(Base):
    """One save of a design: what was checked, what it gave, and the evidence it rested on.

    Append-only: revision 0005 installs triggers that make the database refuse UPDATE
    and DELETE on this table, as for the audit events. ``parts_used`` (a JSON list of
    part ids) and ``snapshot`` (JSON: each used part's record and list entries) are
    text, not foreign keys, so a revision stays readable whatever happens to the parts.
    """

    __tablename__ = "design_revisions"
    __table_args__ = (UniqueConstraint("design_id", "revision"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    design_id: Mapped[int] = mapped_column(ForeignKey("saved_designs.id", ondelete="RESTRICT"))
    #: 1 for the first save of a name, then 2, 3, …
    revision: Mapped[int] = mapped_column(Integer)
    saved_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utc_now)
    saved_by: Mapped[str] = mapped_column(String(PERSON_LENGTH))
    reason: Mapped[str] = mapped_column(Text)
    #: The spec: file name as given (NULL when options gave everything), text, SHA-256
    #: of its bytes, and the options given as a JSON object.
    spec_file: Mapped[str | None] = mapped_column(String(1000))
    spec_text: Mapped[str] = mapped_column(Text)
    spec_sha256: Mapped[str | None] = mapped_column(String(64))
    spec_options: Mapped[str] = mapped_column(Text)
    stack: Mapped[str] = mapped_column(Text)
    resistor_ohm: Mapped[float] = mapped_column(Float)
    resistor_chosen: Mapped[bool] = mapped_column(Boolean)
    list_name: Mapped[str | None] = mapped_column(String(LIST_NAME_LENGTH))
    feasible: Mapped[bool] = mapped_column(Boolean)
    meets: Mapped[bool] = mapped_column(Boolean)
    #: Whether the spec's list allowed every part (true without a list).
    list_allows: Mapped[bool] = mapped_column(Boolean)
    #: JSON: the contract figures of ``check --json`` (without the corners).
    figures: Mapped[str] = mapped_column(Text)
    #: JSON: the list's warnings and conditions of use at the save.
    list_notes: Mapped[str] = mapped_column(Text)
    parts_used: Mapped[str] = mapped_column(Text)
    snapshot: Mapped[str] = mapped_column(Text)
    library_sha256: Mapped[str] = mapped_column(String(64))
    schema_revision: Mapped[str] = mapped_column(String(32))
    tool_version: Mapped[str] = mapped_column(String(32))


#: Text columns of a part record, and every column a record carries.
TEXT_COLUMNS: tuple[str, ...] = ("part", "family", "description", "package")
RECORD_COLUMNS: tuple[str, ...] = TEXT_COLUMNS + NUMERIC_COLUMNS + ("source", "model_extra")
