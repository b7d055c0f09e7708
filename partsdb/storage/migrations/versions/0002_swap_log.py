"""Swap log: substitutions made in repairs, with their circuit stress and outcome.

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "swaps",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("original", sa.String(64), nullable=False),
        sa.Column("original_key", sa.String(64), nullable=False),
        sa.Column("substitute", sa.String(64), nullable=False),
        sa.Column("substitute_key", sa.String(64), nullable=False),
        sa.Column("job", sa.String(64), nullable=False),
        sa.Column("outcome", sa.String(16), nullable=True),
        *[sa.Column(name, sa.Float(), nullable=True) for name in (
            "vce_peak", "ic_peak", "power", "ambient", "freq", "heatsink")],
        sa.Column("policy", sa.String(64), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.CheckConstraint("outcome IS NULL OR outcome IN ('worked', 'failed')",
                           name="ck_swaps_outcome"),
    )
    op.create_index("ix_swaps_original_key", "swaps", ["original_key"])
    op.create_index("ix_swaps_substitute_key", "swaps", ["substitute_key"])


def downgrade() -> None:
    op.drop_table("swaps")
