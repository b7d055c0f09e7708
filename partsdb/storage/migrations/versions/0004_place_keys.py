"""Places get a normalised unique key: "case0" and "CASE0" are one place.

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-02

``locations.key`` is the lower-cased path (the rule of ``services.stock.place_key`` at this
revision, written out here so the migration never changes with the code). Places that already
differ only in case are merged, deterministically: the one with the smallest id (the first
written) keeps its path; the others' lots move into it (a lot of the same device and condition
is merged, quantities added, its ledger entries re-pointed, so every ledger still sums to its
lot), their sub-places are re-parented to it, and they are deleted.
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0004"
down_revision = "0003"
branch_labels = None
depends_on = None


def _merge_case_duplicates(conn: sa.Connection) -> None:
    places = conn.execute(sa.text("SELECT id, path FROM locations ORDER BY id")).all()
    keeper: dict[str, int] = {}
    for place_id, path in places:
        key = str(path).lower()
        if key not in keeper:
            keeper[key] = place_id
            continue
        into = keeper[key]
        conn.execute(sa.text("UPDATE locations SET parent_id = :into WHERE parent_id = :dup"),
                     {"into": into, "dup": place_id})
        lots = conn.execute(sa.text(
            "SELECT id, device_id, condition, quantity FROM lots WHERE location_id = :dup "
            "ORDER BY id"), {"dup": place_id}).all()
        for lot_id, device_id, condition, quantity in lots:
            same = conn.execute(sa.text(
                "SELECT id FROM lots WHERE location_id = :into AND device_id = :device "
                "AND condition = :condition"),
                {"into": into, "device": device_id, "condition": condition}).scalar()
            if same is None:
                conn.execute(sa.text("UPDATE lots SET location_id = :into WHERE id = :lot"),
                             {"into": into, "lot": lot_id})
                continue
            conn.execute(sa.text("UPDATE lots SET quantity = quantity + :q WHERE id = :same"),
                         {"q": quantity, "same": same})
            conn.execute(sa.text("UPDATE movements SET lot_id = :same WHERE lot_id = :lot"),
                         {"same": same, "lot": lot_id})
            conn.execute(sa.text("DELETE FROM lots WHERE id = :lot"), {"lot": lot_id})
        conn.execute(sa.text("DELETE FROM locations WHERE id = :dup"), {"dup": place_id})


def upgrade() -> None:
    # A plain ADD COLUMN (NOT NULL needs a default on SQLite) and a unique index: no table
    # rebuild, so SQLite's foreign keys from lots and sub-places are never in the way.
    op.add_column("locations", sa.Column("key", sa.String(255), nullable=False,
                                         server_default=""))
    conn = op.get_bind()
    conn.execute(sa.text("UPDATE locations SET key = lower(path)"))
    _merge_case_duplicates(conn)
    op.create_index("uq_locations_key", "locations", ["key"], unique=True)


def downgrade() -> None:
    op.drop_index("uq_locations_key", table_name="locations")
    with op.batch_alter_table("locations") as batch:
        batch.drop_column("key")
