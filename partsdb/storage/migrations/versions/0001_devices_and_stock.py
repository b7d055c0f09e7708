"""Devices, the location tree, lots and the movement ledger.

Revision ID: 0001
Revises:
Create Date: 2026-12-02
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table(
        "devices",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("designation", sa.String(64), nullable=False),
        sa.Column("key", sa.String(64), nullable=False),
        sa.Column("kind", sa.String(16), nullable=False),
        sa.Column("polarity", sa.String(8), nullable=False),
        sa.Column("material", sa.String(8), nullable=False),
        *[sa.Column(name, sa.Float(), nullable=True) for name in (
            "vceo", "vcbo", "vebo", "ic_max", "ptot")],
        sa.Column("ptot_ref", sa.String(8), nullable=True),
        *[sa.Column(name, sa.Float(), nullable=True) for name in (
            "tj_max", "hfe_min", "hfe_max", "hfe_ic", "ft", "vbe_on", "vbe_ic", "vce_sat",
            "icbo")],
        sa.Column("package", sa.String(32), nullable=True),
        sa.Column("pinout", sa.String(8), nullable=True),
        sa.Column("application", sa.String(64), nullable=True),
        sa.Column("obsolete", sa.Boolean(), nullable=False),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("low_stock", sa.Integer(), nullable=True),
        sa.Column("warnings", sa.Text(), nullable=True),
        sa.Column("updated_at", sa.DateTime(), nullable=False),
        sa.CheckConstraint("kind IN ('bjt', 'darlington')", name="ck_devices_kind"),
        sa.CheckConstraint("polarity IN ('npn', 'pnp')", name="ck_devices_polarity"),
        sa.UniqueConstraint("key"),
    )
    op.create_index("ix_devices_pol_kind", "devices", ["polarity", "kind"])
    op.create_table(
        "locations",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("parent_id", sa.Integer(),
                  sa.ForeignKey("locations.id", ondelete="RESTRICT"), nullable=True),
        sa.Column("name", sa.String(64), nullable=False),
        sa.Column("path", sa.String(255), nullable=False),
        sa.UniqueConstraint("path"),
    )
    op.create_table(
        "lots",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("device_id", sa.Integer(), sa.ForeignKey("devices.id", ondelete="RESTRICT"),
                  nullable=False),
        sa.Column("location_id", sa.Integer(),
                  sa.ForeignKey("locations.id", ondelete="RESTRICT"), nullable=False),
        sa.Column("condition", sa.String(16), nullable=False),
        sa.Column("quantity", sa.Integer(), nullable=False),
        sa.Column("note", sa.Text(), nullable=True),
        sa.CheckConstraint("quantity >= 0", name="ck_lots_quantity_nonnegative"),
        sa.CheckConstraint("condition IN ('new', 'used', 'pulled', 'tested')",
                           name="ck_lots_condition"),
        sa.UniqueConstraint("device_id", "location_id", "condition", name="uq_lots_place"),
    )
    op.create_index("ix_lots_location", "lots", ["location_id"])
    op.create_table(
        "movements",
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id", ondelete="RESTRICT"),
                  nullable=False),
        sa.Column("change", sa.Integer(), nullable=False),
        sa.Column("reason", sa.String(16), nullable=False),
        sa.Column("job", sa.String(64), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.CheckConstraint("reason IN ('receive', 'take', 'return', 'move', 'count')",
                           name="ck_movements_reason"),
    )
    op.create_index("ix_movements_lot", "movements", ["lot_id"])
    op.create_index("ix_movements_job", "movements", ["job"])


def downgrade() -> None:
    op.drop_table("movements")
    op.drop_table("lots")
    op.drop_table("locations")
    op.drop_table("devices")
