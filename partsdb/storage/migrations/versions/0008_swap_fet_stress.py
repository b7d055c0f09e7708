"""Swap log: the field-effect stresses (``--vds-peak``, ``--id-peak``, ``--drive``, ``--fsw``,
``--gate-current``) recorded with a swap.

Revision ID: 0008
Revises: 0007
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0008"
down_revision = "0007"
branch_labels = None
depends_on = None

COLUMNS = ("vds_peak", "id_peak", "drive", "fsw", "gate_current")


def upgrade() -> None:
    with op.batch_alter_table("swaps") as batch:
        for name in COLUMNS:
            batch.add_column(sa.Column(name, sa.Float(), nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("swaps") as batch:
        for name in reversed(COLUMNS):
            batch.drop_column(name)
