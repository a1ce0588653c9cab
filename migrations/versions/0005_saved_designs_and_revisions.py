"""Saved designs and their append-only revisions.

``saved_designs`` holds one row per design name; ``design_revisions`` one row per save:
the spec (file name, text, SHA-256, options), the stack, the resistor, the verdict and
contract figures, a JSON snapshot of every used part's record and list entries, the
library's content hash, the schema revision and the tool version.

Self-contained on purpose: the values below are written out rather than imported from
the models, so this revision keeps making the same schema however the models evolve.

``design_revisions`` refuses UPDATE and DELETE at the database itself, as
``audit_events`` does since revision 0002: :func:`create_append_only_guard` takes the
table's name and installs SQLite triggers that ``RAISE(ABORT, …)`` or a PostgreSQL
trigger function (which also refuses TRUNCATE); the trigger and function names follow
revision 0002's (``<table>_no_update``, ``<table>_no_delete``, ``<table>_refuse_change()``,
``<table>_append_only``, ``<table>_no_truncate``). A later revision that rebuilds the
table in SQLite batch mode must create the triggers again.

Revision ID: 0005
Revises: 0003
Create Date: 2026-12-05
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0005"
down_revision = "0003"
branch_labels = None
depends_on = None

_REVISIONS_REFUSAL = "saved design revisions are append-only: they cannot be changed or deleted"


def create_append_only_guard(table: str, refusal: str) -> None:
    """Make the database refuse UPDATE and DELETE (and, on PostgreSQL, TRUNCATE) on ``table``.

    Parameters
    ----------
    table : str
        The table's name (an SQL identifier written out by a revision, never user text).
    refusal : str
        The message the database gives when it refuses (no single quotes).
    """
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        for suffix, statement in (("no_update", "UPDATE"), ("no_delete", "DELETE")):
            op.execute(
                f"CREATE TRIGGER {table}_{suffix} BEFORE {statement} ON {table} "
                f"BEGIN SELECT RAISE(ABORT, '{refusal}'); END"
            )
    elif dialect == "postgresql":
        op.execute(
            f"CREATE FUNCTION {table}_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$\n"
            f"BEGIN\n    RAISE EXCEPTION '{refusal}';\nEND\n$$"
        )
        op.execute(
            f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON {table} "
            f"FOR EACH ROW EXECUTE FUNCTION {table}_refuse_change()"
        )
        op.execute(
            f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
            f"FOR EACH STATEMENT EXECUTE FUNCTION {table}_refuse_change()"
        )
    else:
        raise NotImplementedError(f"no append-only guard for the {dialect} database")


def drop_append_only_guard(table: str) -> None:
    """Remove what :func:`create_append_only_guard` installed on ``table``."""
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        for suffix in ("no_update", "no_delete"):
            op.execute(f"DROP TRIGGER IF EXISTS {table}_{suffix}")
    elif dialect == "postgresql":
        op.execute(f"DROP TRIGGER IF EXISTS {table}_no_truncate ON {table}")
        op.execute(f"DROP TRIGGER IF EXISTS {table}_append_only ON {table}")
        op.execute(f"DROP FUNCTION IF EXISTS {table}_refuse_change()")


def upgrade() -> None:
    op.create_table(
        "saved_designs",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=100), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(length=128), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_saved_designs")),
        sa.UniqueConstraint("name", name=op.f("uq_saved_designs_name")),
    )
    op.create_table(
        "design_revisions",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("design_id", sa.Integer(), nullable=False),
        sa.Column("revision", sa.Integer(), nullable=False),
        sa.Column("saved_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("saved_by", sa.String(length=128), nullable=False),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("spec_file", sa.String(length=1000), nullable=True),
        sa.Column("spec_text", sa.Text(), nullable=False),
        sa.Column("spec_sha256", sa.String(length=64), nullable=True),
        sa.Column("spec_options", sa.Text(), nullable=False),
        sa.Column("stack", sa.Text(), nullable=False),
        sa.Column("resistor_ohm", sa.Float(), nullable=False),
        sa.Column("resistor_chosen", sa.Boolean(), nullable=False),
        sa.Column("list_name", sa.String(length=100), nullable=True),
        sa.Column("feasible", sa.Boolean(), nullable=False),
        sa.Column("meets", sa.Boolean(), nullable=False),
        sa.Column("list_allows", sa.Boolean(), nullable=False),
        sa.Column("figures", sa.Text(), nullable=False),
        sa.Column("list_notes", sa.Text(), nullable=False),
        sa.Column("parts_used", sa.Text(), nullable=False),
        sa.Column("snapshot", sa.Text(), nullable=False),
        sa.Column("library_sha256", sa.String(length=64), nullable=False),
        sa.Column("schema_revision", sa.String(length=32), nullable=False),
        sa.Column("tool_version", sa.String(length=32), nullable=False),
        sa.ForeignKeyConstraint(
            ["design_id"], ["saved_designs.id"],
            name=op.f("fk_design_revisions_design_id_saved_designs"), ondelete="RESTRICT",
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_design_revisions")),
        sa.UniqueConstraint("design_id", "revision", name=op.f("uq_design_revisions_design_id")),
    )
    create_append_only_guard("design_revisions", _REVISIONS_REFUSAL)


def downgrade() -> None:
    drop_append_only_guard("design_revisions")
    op.drop_table("design_revisions")
    op.drop_table("saved_designs")
