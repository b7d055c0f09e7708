"""Field-effect transistors: the kinds 'mosfet' and 'jfet', the channel polarities 'n' and 'p',
and the FET columns of ``devices`` (see ``partsdb.device.FIELDS`` for their meaning).

Revision ID: 0007
Revises: 0006
Create Date: 2026-12-02

On SQLite the kind and polarity CHECK constraints change only by rebuilding ``devices``, which
``lots`` references (and ``movements`` references ``lots``); foreign keys are enforced inside
this transaction. As in 0005, the referencing tables are copied to constraint-free tables and
dropped, ``devices`` is rebuilt, and ``lots`` and ``movements`` are created anew and filled
from the copies, ids kept.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import sqlalchemy as sa
from alembic import op

revision = "0007"
down_revision = "0006"
branch_labels = None
depends_on = None

_KINDS_OLD = "kind IN ('bjt', 'darlington')"
_KINDS_NEW = "kind IN ('bjt', 'darlington', 'mosfet', 'jfet')"
_POLARITIES_OLD = "polarity IN ('npn', 'pnp')"
_POLARITIES_NEW = "polarity IN ('npn', 'pnp', 'n', 'p')"
_MODES = "mode IS NULL OR mode IN ('enhancement', 'depletion')"

# Written out here (not read from partsdb.device) so the migration never changes with the code.
_FLOATS_BEFORE_BODY_DIODE = ("rth_jc", "vds", "vgs_max", "id_max")
_FLOATS_AFTER_REF = ("rds_on", "rds_on_vgs", "rds_on_id", "vgs_th_min", "vgs_th_max", "qg", "qgd",
                     "ciss")
_FLOATS_AFTER_BODY_DIODE = ("trr", "vgs_off_min", "vgs_off_max", "idss_min", "idss_max", "yfs",
                            "yfs_id", "en")


def _new_columns() -> list[sa.Column[Any]]:
    return [
        sa.Column("mode", sa.String(16), nullable=True),
        *[sa.Column(name, sa.Float(), nullable=True) for name in _FLOATS_BEFORE_BODY_DIODE],
        sa.Column("id_max_ref", sa.String(8), nullable=True),
        *[sa.Column(name, sa.Float(), nullable=True) for name in _FLOATS_AFTER_REF],
        sa.Column("body_diode", sa.Boolean(), nullable=True),
        *[sa.Column(name, sa.Float(), nullable=True) for name in _FLOATS_AFTER_BODY_DIODE],
    ]


_LOTS = "id, device_id, location_id, condition, quantity, note"
_MOVEMENTS = "id, at, lot_id, change, reason, job, note, undoes"


def _lots_table() -> list[sa.schema.SchemaItem]:
    return [
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("device_id", sa.Integer(), sa.ForeignKey("devices.id", ondelete="RESTRICT"),
                  nullable=False),
        sa.Column("location_id", sa.Integer(),
                  sa.ForeignKey("locations.id", ondelete="RESTRICT"), nullable=False),
        sa.Column("condition", sa.String(16), nullable=False),
        sa.Column("quantity", sa.Integer(), nullable=False),
        sa.Column("note", sa.Text(), nullable=True),
        sa.CheckConstraint("quantity >= 0", name="ck_lots_quantity_nonnegative"),
        sa.CheckConstraint("condition IN ('new', 'nos', 'used', 'pulled', 'tested')",
                           name="ck_lots_condition"),
        sa.UniqueConstraint("device_id", "location_id", "condition", name="uq_lots_place"),
    ]


def _movements_table() -> list[sa.schema.SchemaItem]:
    return [
        sa.Column("id", sa.Integer(), primary_key=True),
        sa.Column("at", sa.DateTime(), nullable=False),
        sa.Column("lot_id", sa.Integer(), sa.ForeignKey("lots.id", ondelete="RESTRICT"),
                  nullable=False),
        sa.Column("change", sa.Integer(), nullable=False),
        sa.Column("reason", sa.String(16), nullable=False),
        sa.Column("job", sa.String(64), nullable=True),
        sa.Column("note", sa.Text(), nullable=True),
        sa.Column("undoes", sa.Integer(), sa.ForeignKey("movements.id", ondelete="RESTRICT"),
                  nullable=True),
        sa.CheckConstraint("reason IN ('receive', 'take', 'return', 'move', 'count', 'undo', "
                           "'edit', 'merge', 'import')", name="ck_movements_reason"),
    ]


def _sqlite_rebuild(alter: Callable[[object], None]) -> None:
    conn = op.get_bind()
    conn.execute(sa.text(f"CREATE TABLE _movements_copy AS SELECT {_MOVEMENTS} FROM movements"))
    conn.execute(sa.text(f"CREATE TABLE _lots_copy AS SELECT {_LOTS} FROM lots"))
    for index in ("ix_movements_lot", "ix_movements_job", "uq_movements_undoes"):
        op.drop_index(index, table_name="movements")
    op.drop_table("movements")
    op.drop_index("ix_lots_location", table_name="lots")
    op.drop_table("lots")
    with op.batch_alter_table("devices", recreate="always") as batch:
        alter(batch)
    op.create_table("lots", *_lots_table())
    op.create_index("ix_lots_location", "lots", ["location_id"])
    op.create_table("movements", *_movements_table())
    conn.execute(sa.text(f"INSERT INTO lots ({_LOTS}) SELECT {_LOTS} FROM _lots_copy ORDER BY id"))
    conn.execute(sa.text(f"INSERT INTO movements ({_MOVEMENTS}) SELECT {_MOVEMENTS} "
                         "FROM _movements_copy ORDER BY id"))
    conn.execute(sa.text("DROP TABLE _movements_copy"))
    conn.execute(sa.text("DROP TABLE _lots_copy"))
    op.create_index("ix_movements_lot", "movements", ["lot_id"])
    op.create_index("ix_movements_job", "movements", ["job"])
    op.create_index("uq_movements_undoes", "movements", ["undoes"], unique=True)


def _checks(target: object, kinds: str, polarities: str, with_mode: bool) -> None:
    """Replace the kind and polarity checks (and add or drop the mode check) on a batch or,
    with ``target`` None, on the PostgreSQL table directly."""
    for name, condition in (("ck_devices_kind", kinds), ("ck_devices_polarity", polarities)):
        if target is None:
            op.drop_constraint(name, "devices", type_="check")
            op.create_check_constraint(name, "devices", condition)
        else:
            target.drop_constraint(name, type_="check")  # type: ignore[attr-defined]
            target.create_check_constraint(name, condition)  # type: ignore[attr-defined]
    if with_mode:
        if target is None:
            op.create_check_constraint("ck_devices_mode", "devices", _MODES)
        else:
            target.create_check_constraint("ck_devices_mode", _MODES)  # type: ignore[attr-defined]


def upgrade() -> None:
    conn = op.get_bind()

    def alter(batch: object) -> None:
        for column in _new_columns():
            batch.add_column(column)  # type: ignore[attr-defined]
        _checks(batch, _KINDS_NEW, _POLARITIES_NEW, with_mode=True)

    if conn.dialect.name == "sqlite":
        _sqlite_rebuild(alter)
        return
    for column in _new_columns():
        op.add_column("devices", column)
    _checks(None, _KINDS_NEW, _POLARITIES_NEW, with_mode=True)


def downgrade() -> None:
    """Back to 0006 when no FET record is stored (the old schema has no place for one)."""
    conn = op.get_bind()
    fets = conn.execute(sa.text("SELECT count(*) FROM devices WHERE kind IN ('mosfet', 'jfet') "
                                "OR polarity IN ('n', 'p')")).scalar()
    if fets:
        raise RuntimeError(f"{fets} FET record(s) stored; remove them before going back to "
                           "schema 0006, which has no place for them")
    names = [c.name for c in _new_columns()]

    def alter(batch: object) -> None:
        batch.drop_constraint("ck_devices_mode", type_="check")  # type: ignore[attr-defined]
        _checks(batch, _KINDS_OLD, _POLARITIES_OLD, with_mode=False)
        for name in names:
            batch.drop_column(name)  # type: ignore[attr-defined]

    if conn.dialect.name == "sqlite":
        _sqlite_rebuild(alter)
        return
    op.drop_constraint("ck_devices_mode", "devices", type_="check")
    _checks(None, _KINDS_OLD, _POLARITIES_OLD, with_mode=False)
    for name in names:
        op.drop_column("devices", name)
