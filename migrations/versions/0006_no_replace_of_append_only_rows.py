"""Append-only rows cannot be replaced on SQLite either.

SQLite's ``REPLACE INTO`` (and ``INSERT OR REPLACE``) with an existing id deletes the old
row and inserts the new one; with ``recursive_triggers`` off that implicit delete fires no
DELETE trigger, so revisions 0002 and 0005's guards let an audit event or a saved design
revision be rewritten in place ("banned, failed qualification" became "approved,
qualified"). A BEFORE INSERT trigger that refuses an id already present closes that: it
runs before the conflict is resolved. PostgreSQL has no REPLACE, and its ``ON CONFLICT DO
UPDATE`` fires the UPDATE guard, so this revision changes nothing there.

Trigger names follow revision 0002's: ``<table>_no_replace``. A later revision that rebuilds
either table in SQLite batch mode must create the triggers again.

Revision ID: 0006
Revises: 0005
Create Date: 2026-12-03
"""

from __future__ import annotations

from alembic import op

revision = "0006"
down_revision = "0005"
branch_labels = None
depends_on = None

_TABLES = ("audit_events", "design_revisions")
_REFUSAL = "append-only rows cannot be replaced"


def upgrade() -> None:
    if op.get_bind().dialect.name != "sqlite":
        return
    for table in _TABLES:
        op.execute(
            f"CREATE TRIGGER {table}_no_replace BEFORE INSERT ON {table} "
            f"WHEN EXISTS (SELECT 1 FROM {table} WHERE id = NEW.id) "
            f"BEGIN SELECT RAISE(ABORT, '{_REFUSAL}'); END"
        )


def downgrade() -> None:
    if op.get_bind().dialect.name != "sqlite":
        return
    for table in _TABLES:
        op.execute(f"DROP TRIGGER IF EXISTS {table}_no_replace")
