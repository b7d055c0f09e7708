"""Places as records: add, list (a tree with labels and counts), rename, merge, remove, label.

A place is a row of ``locations`` addressed by its path ("C3/D02"); its identity is
:func:`partsdb.services.stock.place_key` (case-folded, numbers by value), its path stays as
first written. Every function works in the caller's transaction, so a refused operation
changes nothing.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from sqlalchemy import func, select, update
from sqlalchemy.orm import Session

from partsdb.limits import MAX_LOT, LimitError, check_text
from partsdb.services.stock import (
    StockError,
    _at_place,
    ensure_location,
    find_location,
    normalize_path,
    place_key,
    require_location,
)
from partsdb.storage.models import LocationRow, LotRow, MovementRow


@dataclass(frozen=True)
class PlaceInfo:
    """One place of the tree with what it holds."""

    path: str
    label: str | None
    depth: int
    """0 for a cabinet, 1 for a drawer in it, and so on."""
    lots: int
    """Lots held here (not below) with parts in them."""
    quantity: int
    """Parts held here (not below)."""
    total: int
    """Parts held here and in every place below."""

    def to_json(self) -> dict[str, object]:
        parent = self.path.rsplit("/", 1)[0] if "/" in self.path else None
        return {"path": self.path, "label": self.label, "parent": parent, "lots": self.lots,
                "quantity": self.quantity, "total": self.total}


def _natural(path: str) -> list[tuple[int, object]]:
    """Sort key: segment by segment, numbers by value ("D2" before "D10")."""
    parts = re.split(r"([0-9]+)", place_key(path))
    return [(1, int(p)) if p.isdigit() else (0, p) for p in parts if p]


def _check_label(label: str | None) -> str | None:
    text = (label or "").strip() or None
    try:
        check_text("label", text)
    except LimitError as err:
        raise StockError(str(err)) from None
    return text


def list_places(session: Session, under: str | None = None) -> list[PlaceInfo]:
    """Every place (or those at and below ``under``) in tree order, with labels and counts."""
    query = select(LocationRow)
    if under is not None:
        require_location(session, under)
        query = query.where(_at_place(under))
    places = session.scalars(query).all()
    held = {loc: (int(n), int(q or 0)) for loc, n, q in session.execute(
        select(LotRow.location_id, func.count(LotRow.id), func.sum(LotRow.quantity))
        .where(LotRow.quantity > 0).group_by(LotRow.location_id)).all()}
    keys = {p.id: p.key for p in places}
    totals: dict[int, int] = {}
    for p in places:
        prefix = p.key + "/"
        totals[p.id] = sum(held.get(o, (0, 0))[1] for o, k in keys.items()
                           if k == p.key or k.startswith(prefix))
    ordered = sorted(places, key=lambda p: [_natural(s) for s in p.path.split("/")])
    return [PlaceInfo(p.path, p.label, p.path.count("/"), held.get(p.id, (0, 0))[0],
                      held.get(p.id, (0, 0))[1], totals[p.id]) for p in ordered]


def label_of(session: Session, path: str) -> str | None:
    return require_location(session, path).label


def add_place(session: Session, path: str, label: str | None = None) -> PlaceInfo:
    """A new place (and any missing parents); refused when it exists already, in any spelling."""
    text = _check_label(label)
    existing = find_location(session, path)
    if existing is not None:
        raise StockError(f"place: {normalize_path(path)} exists already (as {existing.path})")
    row = ensure_location(session, path)
    row.label = text
    session.flush()
    return PlaceInfo(row.path, row.label, row.path.count("/"), 0, 0, 0)


def set_label(session: Session, path: str, label: str | None) -> str | None:
    """Set (or, with an empty text, clear) what a place's label says."""
    row = require_location(session, path)
    row.label = _check_label(label)
    session.flush()
    return row.label


def _repath(session: Session, row: LocationRow, new_path: str,
            parent_id: int | None) -> None:
    """Give ``row`` the path ``new_path`` and rewrite every place below it to match."""
    old_prefix = row.path + "/"
    below = session.scalars(select(LocationRow).where(
        LocationRow.key.like(_like_prefix(row.key), escape="\\"))).all()
    row.path = new_path
    row.name = new_path.rsplit("/", 1)[-1]
    row.key = place_key(new_path)
    row.parent_id = parent_id
    for child in below:
        child.path = new_path + "/" + child.path[len(old_prefix):]
        child.key = place_key(child.path)
    session.flush()


def _like_prefix(key: str) -> str:
    return key.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "/%"


def _parent_for(session: Session, path: str) -> int | None:
    return ensure_location(session, path.rsplit("/", 1)[0]).id if "/" in path else None


def rename_place(session: Session, old: str, new: str) -> str:
    """Rename a place (its sub-places follow); refused when the new path is another place."""
    row = require_location(session, old)
    new_path = normalize_path(new)
    new_key = place_key(new_path)
    if new_key.startswith(row.key + "/"):
        raise StockError(f"place rename: {new_path} is inside {row.path}; expected a path "
                         "outside it")
    other = find_location(session, new_path)
    if other is not None and other.id != row.id:
        raise StockError(f"place rename: {other.path} exists already; use `place merge "
                         f"{row.path} {other.path}` to put the two together")
    _repath(session, row, new_path, _parent_for(session, new_path))
    return row.path


@dataclass(frozen=True)
class MergeReport:
    into: str
    lots_moved: int
    parts_moved: int
    places_removed: int

    def to_json(self) -> dict[str, object]:
        return {"into": self.into, "lots_moved": self.lots_moved,
                "parts_moved": self.parts_moved, "places_removed": self.places_removed}


def merge_places(session: Session, from_: str, into: str) -> MergeReport:
    """Put place ``from_`` into ``into``: its lots move there (one 'merge' ledger entry each,
    lots of the same device and condition joined), its sub-places follow (merged with
    same-named ones), and ``from_`` is deleted."""
    src = require_location(session, from_)
    dst = require_location(session, into)
    if src.id == dst.id:
        raise StockError(f"place merge: {src.path} and {dst.path} are the same place")
    if dst.key.startswith(src.key + "/") or src.key.startswith(dst.key + "/"):
        raise StockError(f"place merge: {src.path} and {dst.path} are one inside the other; "
                         "expected two separate places")
    counts = [0, 0, 0]
    _merge(session, src, dst, counts)
    return MergeReport(dst.path, counts[0], counts[1], counts[2])


def _merge(session: Session, src: LocationRow, dst: LocationRow, counts: list[int]) -> None:
    note = f"place {src.path} merged into {dst.path}"
    for lot in session.scalars(select(LotRow).where(LotRow.location_id == src.id)
                               .order_by(LotRow.id)).all():
        same = session.scalars(select(LotRow).where(
            LotRow.device_id == lot.device_id, LotRow.location_id == dst.id,
            LotRow.condition == lot.condition)).first()
        if same is None:
            lot.location_id = dst.id
            keeper, qty = lot, lot.quantity
        else:
            # The lot joins the one already there: its history goes with it, so the ledger of
            # the joined lot still sums to its quantity.
            qty = lot.quantity
            if same.quantity + qty > MAX_LOT:
                raise StockError(f"place merge: {same.quantity} + {qty} parts would exceed the "
                                 f"lot limit {MAX_LOT:,}; nothing was changed")
            session.execute(update(MovementRow).where(MovementRow.lot_id == lot.id)
                            .values(lot_id=same.id).execution_options(synchronize_session=False))
            session.execute(update(LotRow).where(LotRow.id == same.id)
                            .values(quantity=LotRow.quantity + qty)
                            .execution_options(synchronize_session=False))
            session.delete(lot)
            keeper = same
        session.flush()
        session.add(MovementRow(lot_id=keeper.id, change=0, reason="merge",
                                note=f"{note} ({qty} parts)"))
        counts[0] += 1
        counts[1] += qty
    for child in session.scalars(select(LocationRow).where(LocationRow.parent_id == src.id)
                                 .order_by(LocationRow.id)).all():
        twin = find_location(session, dst.path + "/" + child.name)
        if twin is None:
            _repath(session, child, dst.path + "/" + child.name, dst.id)
        else:
            _merge(session, child, twin, counts)
    session.flush()
    session.delete(src)
    session.flush()
    counts[2] += 1
    session.expire_all()


def remove_place(session: Session, path: str) -> str:
    """Delete an empty place: no sub-places and no lots (not even empty ones, whose ledger
    history would be lost; merge such a place into another instead)."""
    row = require_location(session, path)
    children = session.scalar(select(func.count()).select_from(LocationRow)
                              .where(LocationRow.parent_id == row.id)) or 0
    if children:
        raise StockError(f"place remove: {row.path} holds {children} sub-place"
                         f"{'' if children == 1 else 's'}; remove or merge them first")
    lots = session.execute(select(func.count(), func.coalesce(func.sum(LotRow.quantity), 0))
                           .where(LotRow.location_id == row.id)).one()
    if lots[0]:
        raise StockError(f"place remove: {row.path} is not empty ({lots[0]} lot"
                         f"{'' if lots[0] == 1 else 's'}, {lots[1]} parts, with their ledger); "
                         "move the parts out or merge it into another place")
    removed = row.path
    session.delete(row)
    session.flush()
    return removed
