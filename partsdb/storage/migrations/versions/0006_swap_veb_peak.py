"""Swap log: the reverse base-emitter voltage stress (``--veb-peak``) recorded with a swap.

Revision ID: 0006
Revises: 0005
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0006"
down_revision = "0005"
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table("swaps") as batch:
        batch.add_column(sa.Column("veb_peak", sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("swaps") as batch:
        batch.drop_column("veb_peak")
