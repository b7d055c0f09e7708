"""Index devices.updated_at: the ranking cache asks for the newest change on every call.

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02
"""

from __future__ import annotations

from alembic import op

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_index("ix_devices_updated_at", "devices", ["updated_at"])


def downgrade() -> None:
    op.drop_index("ix_devices_updated_at", table_name="devices")
