"""Approved-parts lists, their entries, and the append-only audit trail.

Self-contained on purpose: the values below are written out rather than imported from
the models, so this revision keeps making the same schema however the models evolve.

The audit table refuses UPDATE and DELETE at the database itself: SQLite triggers that
``RAISE(ABORT, …)``, a PostgreSQL trigger function (also refusing TRUNCATE). A later
revision that rebuilds ``audit_events`` in SQLite batch mode must create the triggers
again, because a rebuilt table loses them.

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-01
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None

_STATUS_CHECK = "status IN ('approved', 'conditional', 'evaluating', 'no-new-design', 'banned')"
_REFUSAL = "audit events are append-only: they cannot be changed or deleted"

_SQLITE_TRIGGERS = {
    "audit_events_no_update": "UPDATE",
    "audit_events_no_delete": "DELETE",
}

_POSTGRESQL_FUNCTION = f"""
CREATE FUNCTION audit_events_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION '{_REFUSAL}';
END
$$
"""


def upgrade() -> None:
    op.create_table(
        "approved_lists",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=100), nullable=False),
        sa.Column("description", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(length=128), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_approved_lists")),
        sa.UniqueConstraint("name", name=op.f("uq_approved_lists_name")),
    )
    op.create_table(
        "list_entries",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("list_id", sa.Integer(), nullable=False),
        sa.Column("part_id", sa.Integer(), nullable=False),
        sa.Column("status", sa.String(length=16), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("condition", sa.Text(), nullable=False),
        sa.Column("since", sa.DateTime(timezone=True), nullable=False),
        sa.Column("changed_by", sa.String(length=128), nullable=False),
        sa.CheckConstraint(_STATUS_CHECK, name=op.f("ck_list_entries_status_known")),
        sa.ForeignKeyConstraint(
            ["list_id"], ["approved_lists.id"],
            name=op.f("fk_list_entries_list_id_approved_lists"), ondelete="RESTRICT",
        ),
        sa.ForeignKeyConstraint(
            ["part_id"], ["parts.id"], name=op.f("fk_list_entries_part_id_parts"), ondelete="RESTRICT"
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_list_entries")),
        sa.UniqueConstraint("list_id", "part_id", name=op.f("uq_list_entries_list_id")),
    )
    op.create_index(op.f("ix_list_entries_part_id"), "list_entries", ["part_id"])
    op.create_table(
        "audit_events",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("occurred_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("actor", sa.String(length=128), nullable=False),
        sa.Column("action", sa.String(length=32), nullable=False),
        sa.Column("part", sa.String(length=64), nullable=True),
        sa.Column("list_name", sa.String(length=100), nullable=True),
        sa.Column("old_value", sa.Text(), nullable=True),
        sa.Column("new_value", sa.Text(), nullable=True),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_events")),
    )
    op.create_index("ix_audit_events_part", "audit_events", ["part"])
    op.create_index("ix_audit_events_occurred_at", "audit_events", ["occurred_at"])
    _create_append_only_guard()


def _create_append_only_guard() -> None:
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        for name, statement in _SQLITE_TRIGGERS.items():
            op.execute(
                f"CREATE TRIGGER {name} BEFORE {statement} ON audit_events "
                f"BEGIN SELECT RAISE(ABORT, '{_REFUSAL}'); END"
            )
    elif dialect == "postgresql":
        op.execute(_POSTGRESQL_FUNCTION)
        op.execute(
            "CREATE TRIGGER audit_events_append_only BEFORE UPDATE OR DELETE ON audit_events "
            "FOR EACH ROW EXECUTE FUNCTION audit_events_refuse_change()"
        )
        op.execute(
            "CREATE TRIGGER audit_events_no_truncate BEFORE TRUNCATE ON audit_events "
            "FOR EACH STATEMENT EXECUTE FUNCTION audit_events_refuse_change()"
        )
    else:
        raise NotImplementedError(f"no append-only guard for the {dialect} database")


def downgrade() -> None:
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        for name in _SQLITE_TRIGGERS:
            op.execute(f"DROP TRIGGER IF EXISTS {name}")
    elif dialect == "postgresql":
        op.execute("DROP TRIGGER IF EXISTS audit_events_no_truncate ON audit_events")
        op.execute("DROP TRIGGER IF EXISTS audit_events_append_only ON audit_events")
        op.execute("DROP FUNCTION IF EXISTS audit_events_refuse_change()")
    op.drop_index("ix_audit_events_occurred_at", table_name="audit_events")
    op.drop_index("ix_audit_events_part", table_name="audit_events")
    op.drop_table("audit_events")
    op.drop_index(op.f("ix_list_entries_part_id"), table_name="list_entries")
    op.drop_table("list_entries")
    op.drop_table("approved_lists")
