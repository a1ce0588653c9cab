"""The spread of a part's temperature coefficient (physics contract version 2).

``tc_tol_v_per_k`` [V/K]: the ± spread of the temperature coefficient, for every family;
NULL means "not given" (the contract's default 0). Existing parts keep NULL, so every
existing result stays the same until the shop gives the spread.

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-03
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.add_column(sa.Column("tc_tol_v_per_k", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("parts") as batch:
        batch.drop_column("tc_tol_v_per_k")
