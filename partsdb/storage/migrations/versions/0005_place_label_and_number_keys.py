"""Place labels, keys that compare numbers by value, 'nos' lots, undo links, reorder targets.

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-02

* ``locations.label``: free text saying what a drawer holds.
* ``locations.key`` recomputed: lower case, and every run of digits within a segment read as a
  number, so "C3/D2" and "C3/D02" are one place (the rule of ``services.stock.place_key`` at
  this revision, written out here so the migration never changes with the code). Places whose
  new keys collide are MERGED exactly as 0004 merges case duplicates: the first written
  (smallest id) keeps its path as written; the others' lots move into it (a lot of the same
  device and condition is merged, quantities added, its ledger entries re-pointed, so every
  ledger still sums to its lot), their sub-places are re-parented to it, and they are deleted.
* ``lots.condition`` may be 'nos' (new old stock).
* ``movements.undoes`` (unique, referencing ``movements.id``) and the reasons 'undo', 'edit' and
  'merge'.
* ``devices.reorder_to``: the stock to buy up to (NULL: twice the low-stock mark).

On SQLite a CHECK constraint can only change by rebuilding the table. ``lots`` is referenced by
``movements`` and foreign keys are enforced inside this transaction (the pragma cannot change
there), so ``movements`` is copied to a constraint-free table and dropped first, ``lots`` rebuilt,
and ``movements`` created anew with the new columns and filled from the copy, ids kept.
"""

from __future__ import annotations

import re

import sqlalchemy as sa
from alembic import op

revision = "0005"
down_revision = "0004"
branch_labels = None
depends_on = None

_DIGITS = re.compile(r"\d+")
_CONDITIONS_OLD = "condition IN ('new', 'used', 'pulled', 'tested')"
_CONDITIONS_NEW = "condition IN ('new', 'nos', 'used', 'pulled', 'tested')"
_REASONS_OLD = "reason IN ('receive', 'take', 'return', 'move', 'count')"
_REASONS_NEW = ("reason IN ('receive', 'take', 'return', 'move', 'count', 'undo', "
                "'edit', 'merge', 'import')")


def _key(path: str) -> str:
    return _DIGITS.sub(lambda m: str(int(m.group())), str(path).lower())


def _merge_duplicates(conn: sa.Connection) -> None:
    places = conn.execute(sa.text("SELECT id, path FROM locations ORDER BY id")).all()
    keeper: dict[str, int] = {}
    for place_id, path in places:
        key = _key(path)
        if key not in keeper:
            keeper[key] = place_id
            conn.execute(sa.text("UPDATE locations SET key = :key WHERE id = :id"),
                         {"key": key, "id": place_id})
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


def _movements_table(reasons: str, with_undoes: bool) -> list[sa.schema.SchemaItem]:
    items: list[sa.schema.SchemaItem] = [
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id", ondelete="RESTRICT"),
                  nullable=False),
        sa.Column("change", sa.Integer(), nullable=False),
        sa.Column("reason", sa.String(16), nullable=False),
        sa.Column("job", sa.String(64), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
    ]
    if with_undoes:
        items.append(sa.Column("undoes", sa.Integer(),
                               sa.ForeignKey("movements.id", ondelete="RESTRICT"),
                               nullable=True))
    items.append(sa.CheckConstraint(reasons, name="ck_movements_reason"))
    return items


_COPIED = "id, at, lot_id, change, reason, job, note"


def _sqlite_rebuild(conditions: str, reasons: str, with_undoes: bool) -> None:
    conn = op.get_bind()
    conn.execute(sa.text(f"CREATE TABLE _movements_copy AS SELECT {_COPIED} FROM movements"))
    op.drop_index("ix_movements_lot", table_name="movements")
    op.drop_index("ix_movements_job", table_name="movements")
    if not with_undoes:
        op.drop_index("uq_movements_undoes", table_name="movements")
    op.drop_table("movements")
    with op.batch_alter_table("lots", recreate="always") as batch:
        batch.drop_constraint("ck_lots_condition", type_="check")
        batch.create_check_constraint("ck_lots_condition", conditions)
    op.create_table("movements", *_movements_table(reasons, with_undoes))
    conn.execute(sa.text(f"INSERT INTO movements ({_COPIED}) SELECT {_COPIED} "
                         "FROM _movements_copy ORDER BY id"))
    conn.execute(sa.text("DROP TABLE _movements_copy"))
    op.create_index("ix_movements_lot", "movements", ["lot_id"])
    op.create_index("ix_movements_job", "movements", ["job"])
    if with_undoes:
        op.create_index("uq_movements_undoes", "movements", ["undoes"], unique=True)


def upgrade() -> None:
    conn = op.get_bind()
    op.add_column("locations", sa.Column("label", sa.String(120), nullable=True))
    op.add_column("devices", sa.Column("reorder_to", sa.Integer(), nullable=True))
    # Keys are recomputed with the unique index off, since a key may briefly equal another's.
    op.drop_index("uq_locations_key", table_name="locations")
    _merge_duplicates(conn)
    op.create_index("uq_locations_key", "locations", ["key"], unique=True)
    if conn.dialect.name == "sqlite":
        _sqlite_rebuild(_CONDITIONS_NEW, _REASONS_NEW, with_undoes=True)
        return
    op.drop_constraint("ck_lots_condition", "lots", type_="check")
    op.create_check_constraint("ck_lots_condition", "lots", _CONDITIONS_NEW)
    op.drop_constraint("ck_movements_reason", "movements", type_="check")
    op.create_check_constraint("ck_movements_reason", "movements", _REASONS_NEW)
    op.add_column("movements", sa.Column("undoes", sa.Integer(),
                                         sa.ForeignKey("movements.id", ondelete="RESTRICT"),
                                         nullable=True))
    op.create_index("uq_movements_undoes", "movements", ["undoes"], unique=True)


def downgrade() -> None:
    """Back to 0004 when nothing of this revision is in use (no 'nos' lot, no undo, edit or
    merge entry); keys go back to lower case (merged places stay merged)."""
    conn = op.get_bind()
    if conn.dialect.name == "sqlite":
        _sqlite_rebuild(_CONDITIONS_OLD, _REASONS_OLD, with_undoes=False)
    else:
        op.drop_index("uq_movements_undoes", table_name="movements")
        op.drop_column("movements", "undoes")
        op.drop_constraint("ck_movements_reason", "movements", type_="check")
        op.create_check_constraint("ck_movements_reason", "movements", _REASONS_OLD)
        op.drop_constraint("ck_lots_condition", "lots", type_="check")
        op.create_check_constraint("ck_lots_condition", "lots", _CONDITIONS_OLD)
    op.drop_index("uq_locations_key", table_name="locations")
    conn.execute(sa.text("UPDATE locations SET key = lower(path)"))
    op.create_index("uq_locations_key", "locations", ["key"], unique=True)
    # Plain DROP COLUMN (SQLite 3.35+): a batch rebuild of these referenced tables would trip
    # the foreign keys enforced in this transaction.
    conn.execute(sa.text("ALTER TABLE devices DROP COLUMN reorder_to"))
    conn.execute(sa.text("ALTER TABLE locations DROP COLUMN label"))
