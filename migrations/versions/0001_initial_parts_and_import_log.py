"""Initial schema: the parts table and the import log.

Self-contained on purpose: the values below are written out rather than imported from
the models, so this revision keeps making the same schema however the models evolve.

Revision ID: 0001
Revises:
Create Date: 2026-12-01
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None

_FAMILY_CHECK = "family IN ('signal', 'rectifier', 'schottky', 'led', 'zener')"

_NUMERIC_COLUMNS = (
    "is_a", "n", "rs_ohm", "eg_ev", "xti", "tnom_c", "vf_tol_v", "vz_v", "izt_a",
    "zzt_ohm", "izk_a", "zzk_ohm", "vz_tol_pct", "tc_v_per_k", "pd_w", "tj_max_c",
    "theta_ja_k_per_w", "if_max_a", "i_min_a",
)  # fmt: skip


def upgrade() -> None:
    op.create_table(
        "parts",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("part", sa.String(length=64), nullable=False),
        sa.Column("family", sa.String(length=16), nullable=False),
        sa.Column("description", sa.String(length=500), nullable=False),
        sa.Column("package", sa.String(length=64), nullable=False),
        *(sa.Column(name, sa.Float(), nullable=True) for name in _NUMERIC_COLUMNS),
        sa.Column("source", sa.String(length=500), nullable=False),
        sa.Column("model_extra", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("updated_at", sa.DateTime(timezone=True), nullable=False),
        sa.CheckConstraint(_FAMILY_CHECK, name=op.f("ck_parts_family_known")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_parts")),
        sa.UniqueConstraint("part", name=op.f("uq_parts_part")),
    )
    op.create_table(
        "import_log",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("imported_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("imported_by", sa.String(length=128), nullable=False),
        sa.Column("kind", sa.String(length=32), nullable=False),
        sa.Column("file_name", sa.String(length=1000), nullable=False),
        sa.Column("file_sha256", sa.String(length=64), nullable=False),
        sa.Column("rows_added", sa.Integer(), nullable=False),
        sa.Column("rows_changed", sa.Integer(), nullable=False),
        sa.Column("rows_unchanged", sa.Integer(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_import_log")),
    )


def downgrade() -> None:
    op.drop_table("import_log")
    op.drop_table("parts")
