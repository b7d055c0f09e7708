"""SQLAlchemy ORM tables: devices, the location tree, lots, the movement ledger, the swap log.

The schema itself is owned by the Alembic migrations in ``migrations/versions``; a test checks
that these models and the migrations agree. Quantities are stored in SI base units (°C for
temperatures), optional values as NULL, never 0.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import (
    Boolean,
    CheckConstraint,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship


def utcnow() -> datetime:
    return datetime.now(UTC).replace(tzinfo=None)


class Base(DeclarativeBase):
    pass


class DeviceRow(Base):
    """One device type (see :class:`partsdb.device.Device` for the meaning of each field)."""

    __tablename__ = "devices"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    designation: Mapped[str] = mapped_column(String(64))
    key: Mapped[str] = mapped_column(String(64), unique=True)
    kind: Mapped[str] = mapped_column(String(16))
    polarity: Mapped[str] = mapped_column(String(8))
    material: Mapped[str] = mapped_column(String(8))
    vceo: Mapped[float | None] = mapped_column(Float)
    vcbo: Mapped[float | None] = mapped_column(Float)
    vebo: Mapped[float | None] = mapped_column(Float)
    ic_max: Mapped[float | None] = mapped_column(Float)
    ptot: Mapped[float | None] = mapped_column(Float)
    ptot_ref: Mapped[str | None] = mapped_column(String(8))
    tj_max: Mapped[float | None] = mapped_column(Float)
    hfe_min: Mapped[float | None] = mapped_column(Float)
    hfe_max: Mapped[float | None] = mapped_column(Float)
    hfe_ic: Mapped[float | None] = mapped_column(Float)
    ft: Mapped[float | None] = mapped_column(Float)
    vbe_on: Mapped[float | None] = mapped_column(Float)
    vbe_ic: Mapped[float | None] = mapped_column(Float)
    vce_sat: Mapped[float | None] = mapped_column(Float)
    icbo: Mapped[float | None] = mapped_column(Float)
    mode: Mapped[str | None] = mapped_column(String(16))
    rth_jc: Mapped[float | None] = mapped_column(Float)
    vds: Mapped[float | None] = mapped_column(Float)
    vgs_max: Mapped[float | None] = mapped_column(Float)
    id_max: Mapped[float | None] = mapped_column(Float)
    id_max_ref: Mapped[str | None] = mapped_column(String(8))
    rds_on: Mapped[float | None] = mapped_column(Float)
    rds_on_vgs: Mapped[float | None] = mapped_column(Float)
    rds_on_id: Mapped[float | None] = mapped_column(Float)
    vgs_th_min: Mapped[float | None] = mapped_column(Float)
    vgs_th_max: Mapped[float | None] = mapped_column(Float)
    qg: Mapped[float | None] = mapped_column(Float)
    qgd: Mapped[float | None] = mapped_column(Float)
    ciss: Mapped[float | None] = mapped_column(Float)
    body_diode: Mapped[bool | None] = mapped_column(Boolean)
    trr: Mapped[float | None] = mapped_column(Float)
    vgs_off_min: Mapped[float | None] = mapped_column(Float)
    vgs_off_max: Mapped[float | None] = mapped_column(Float)
    idss_min: Mapped[float | None] = mapped_column(Float)
    idss_max: Mapped[float | None] = mapped_column(Float)
    yfs: Mapped[float | None] = mapped_column(Float)
    yfs_id: Mapped[float | None] = mapped_column(Float)
    en: Mapped[float | None] = mapped_column(Float)
    package: Mapped[str | None] = mapped_column(String(32))
    pinout: Mapped[str | None] = mapped_column(String(8))
    application: Mapped[str | None] = mapped_column(String(64))
    obsolete: Mapped[bool] = mapped_column(Boolean, default=False)
    notes: Mapped[str | None] = mapped_column(Text)
    low_stock: Mapped[int | None] = mapped_column(Integer)
    reorder_to: Mapped[int | None] = mapped_column(Integer)
    warnings: Mapped[str | None] = mapped_column(Text)
    """Consistency warnings, one per line (designation vs fields)."""
    updated_at: Mapped[datetime] = mapped_column(DateTime, default=utcnow, onupdate=utcnow)

    lots: Mapped[list[LotRow]] = relationship(back_populates="device")

    __table_args__ = (
        CheckConstraint("kind IN ('bjt', 'darlington', 'mosfet', 'jfet')", name="ck_devices_kind"),
        CheckConstraint("polarity IN ('npn', 'pnp', 'n', 'p')", name="ck_devices_polarity"),
        CheckConstraint("mode IS NULL OR mode IN ('enhancement', 'depletion')",
                        name="ck_devices_mode"),
        Index("ix_devices_pol_kind", "polarity", "kind"),
        Index("ix_devices_updated_at", "updated_at"),
    )


class LocationRow(Base):
    """A place in the cabinet / drawer / bin tree, addressed by its full path ("C2/D14").

    ``path`` is kept as first written, for display; ``key`` is the normalised path
    (``services.stock.place_key``) and is what makes a place unique, so "case0" and "CASE0"
    are one place."""

    __tablename__ = "locations"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    parent_id: Mapped[int | None] = mapped_column(ForeignKey("locations.id", ondelete="RESTRICT"))
    name: Mapped[str] = mapped_column(String(64))
    path: Mapped[str] = mapped_column(String(255), unique=True)
    key: Mapped[str] = mapped_column(String(255), server_default="")
    label: Mapped[str | None] = mapped_column(String(120))
    """What the drawer holds, in the technician's words ("Si PNP audio, TO-92")."""

    __table_args__ = (Index("uq_locations_key", "key", unique=True),)


class LotRow(Base):
    """A quantity of one device in one place and condition."""

    __tablename__ = "lots"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    device_id: Mapped[int] = mapped_column(ForeignKey("devices.id", ondelete="RESTRICT"))
    location_id: Mapped[int] = mapped_column(ForeignKey("locations.id", ondelete="RESTRICT"))
    condition: Mapped[str] = mapped_column(String(16), default="new")
    quantity: Mapped[int] = mapped_column(Integer, default=0)
    note: Mapped[str | None] = mapped_column(Text)

    device: Mapped[DeviceRow] = relationship(back_populates="lots")
    location: Mapped[LocationRow] = relationship()

    __table_args__ = (
        CheckConstraint("quantity >= 0", name="ck_lots_quantity_nonnegative"),
        CheckConstraint("condition IN ('new', 'nos', 'used', 'pulled', 'tested')",
                        name="ck_lots_condition"),
        UniqueConstraint("device_id", "location_id", "condition", name="uq_lots_place"),
        Index("ix_lots_location", "location_id"),
    )


class MovementRow(Base):
    """One ledger entry: a signed change of a lot's quantity, written with the change itself."""

    __tablename__ = "movements"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[datetime] = mapped_column(DateTime, default=utcnow)
    lot_id: Mapped[int] = mapped_column(ForeignKey("lots.id", ondelete="RESTRICT"))
    change: Mapped[int] = mapped_column(Integer)
    reason: Mapped[str] = mapped_column(String(16))
    job: Mapped[str | None] = mapped_column(String(64))
    note: Mapped[str | None] = mapped_column(Text)
    undoes: Mapped[int | None] = mapped_column(ForeignKey("movements.id", ondelete="RESTRICT"))
    """The movement this entry compensates (reason 'undo'); unique, so a movement is undone
    at most once even by two benches at the same moment."""

    lot: Mapped[LotRow] = relationship()

    __table_args__ = (
        CheckConstraint("reason IN ('receive', 'take', 'return', 'move', 'count', 'undo', "
                        "'edit', 'merge', 'import')", name="ck_movements_reason"),
        Index("ix_movements_lot", "lot_id"),
        Index("ix_movements_job", "job"),
        Index("uq_movements_undoes", "undoes", unique=True),
    )


class SwapRow(Base):
    """A substitution made in a repair, with the circuit stress it was judged against."""

    __tablename__ = "swaps"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    at: Mapped[datetime] = mapped_column(DateTime, default=utcnow)
    original: Mapped[str] = mapped_column(String(64))
    original_key: Mapped[str] = mapped_column(String(64), index=True)
    substitute: Mapped[str] = mapped_column(String(64))
    substitute_key: Mapped[str] = mapped_column(String(64), index=True)
    job: Mapped[str] = mapped_column(String(64))
    outcome: Mapped[str | None] = mapped_column(String(16))
    vce_peak: Mapped[float | None] = mapped_column(Float)
    veb_peak: Mapped[float | None] = mapped_column(Float)
    ic_peak: Mapped[float | None] = mapped_column(Float)
    power: Mapped[float | None] = mapped_column(Float)
    ambient: Mapped[float | None] = mapped_column(Float)
    freq: Mapped[float | None] = mapped_column(Float)
    heatsink: Mapped[float | None] = mapped_column(Float)
    policy: Mapped[str | None] = mapped_column(String(64))
    note: Mapped[str | None] = mapped_column(Text)

    __table_args__ = (
        CheckConstraint("outcome IS NULL OR outcome IN ('worked', 'failed')",
                        name="ck_swaps_outcome"),
    )
