"""Stock: places, lots and the movement ledger.

Every change of a quantity is one atomic statement at the database
(``UPDATE lots SET quantity = quantity + :delta WHERE id = :id AND quantity + :delta >= 0``)
plus its ledger entry, in the caller's transaction; so two benches taking from the same drawer
at once can never lose an update or drive a count below zero, and the ledger of a lot always
sums to its quantity.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime

from sqlalchemy import func, select, update
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session
from sqlalchemy.sql.elements import ColumnElement

from partsdb.errors import InvalidInput
from partsdb.limits import MAX_LENGTH, MAX_LOT, LimitError, check_lot_total, check_quantity, check_text
from partsdb.lots import CONDITIONS
from partsdb.services.catalog import NotFound, require_row
from partsdb.storage.models import DeviceRow, LocationRow, LotRow, MovementRow, utcnow

_SEGMENT = re.compile(r"^[A-Za-z0-9][A-Za-z0-9 ._#+-]{0,63}$")


class StockError(InvalidInput):
    """A stock operation refused; nothing was changed. The message says why."""


@dataclass(frozen=True)
class LotView:
    designation: str
    location: str
    condition: str
    quantity: int
    note: str | None = None
    low_stock: int | None = None
    device_total: int | None = None
    label: str | None = None
    """The place's label (what the drawer holds), if it has one."""

    @property
    def low(self) -> bool:
        return (self.low_stock is not None and self.device_total is not None
                and self.device_total < self.low_stock)

    def to_json(self) -> dict[str, object]:
        return {"designation": self.designation, "location": self.location,
                "quantity": self.quantity, "condition": self.condition, "note": self.note,
                "label": self.label}


@dataclass
class StockSummary:
    quantity: int = 0
    locations: list[str] = field(default_factory=list)


@dataclass(frozen=True)
class LedgerEntry:
    id: int
    at: datetime
    designation: str
    location: str
    condition: str
    change: int
    reason: str
    job: str | None
    note: str | None
    undoes: int | None = None
    """For an 'undo' entry: the id of the movement it compensates."""

    def to_json(self) -> dict[str, object]:
        return {"id": self.id, "at": self.at.isoformat(timespec="seconds") + "+00:00",
                "designation": self.designation, "location": self.location,
                "condition": self.condition, "change": self.change, "reason": self.reason,
                "job": self.job, "note": self.note, "undoes": self.undoes}

    def describe(self) -> str:
        """One line for a confirmation: "#12 receive +5 AC951 at C1/D02 (new)"."""
        return (f"#{self.id} {self.reason} {self.change:+d} {self.designation} at "
                f"{self.location} ({self.condition})")


# ---------------------------------------------------------------- places

def normalize_path(path: str) -> str:
    """"c2 / d14/" -> "c2/d14"; each segment checked. Paths compare by :func:`place_key`."""
    segments = [s.strip() for s in str(path).replace("\\", "/").split("/")]
    segments = [s for s in segments if s]
    if not segments:
        raise StockError(f"location: {path!r} is empty; expected a path such as C2/D14")
    for seg in segments:
        if not _SEGMENT.match(seg):
            raise StockError(f"location: segment {seg[:70]!r} of {path[:70]!r} is not valid; "
                             "expected 1 to 64 letters, digits, spaces or . _ # + - "
                             "(such as C2/D14/B3)")
    joined = "/".join(segments)
    if len(joined) > MAX_LENGTH["location"]:
        raise StockError(f"location: {joined[:40]!r}... is {len(joined)} characters long; "
                         f"expected at most {MAX_LENGTH['location']}")
    return joined


_DIGITS = re.compile(r"[0-9]+")


def place_key(path: str) -> str:
    """The key that makes a place unique (``locations.key``): the checked path, case-folded,
    with every run of digits read as a number ("C3/D02" and "c3/d2" are one place, key "c3/d2").

    The one definition of "the same place": every look-up and every new place goes through it
    (migration 0005 wrote this rule out to recompute the stored keys). The path itself is kept
    as first written, so the house numbering stays.
    """
    return _DIGITS.sub(lambda m: str(int(m.group())), normalize_path(path).lower())


def find_location(session: Session, path: str) -> LocationRow | None:
    return session.scalars(select(LocationRow).where(LocationRow.key == place_key(path))).first()


def _insert_place(session: Session, name: str, path: str, parent_id: int | None) -> None:
    """INSERT ... ON CONFLICT (key) DO NOTHING: a place made meanwhile by another bench is
    simply used (PostgreSQL docs, "INSERT ... ON CONFLICT"; SQLite "UPSERT")."""
    from sqlalchemy.dialects import postgresql, sqlite

    dialect = session.get_bind().dialect.name
    insert = postgresql.insert if dialect == "postgresql" else sqlite.insert
    session.execute(insert(LocationRow).values(name=name, path=path, key=place_key(path),
                                               parent_id=parent_id)
                    .on_conflict_do_nothing(index_elements=["key"]))


def ensure_location(session: Session, path: str) -> LocationRow:
    """The location at ``path``, creating it and any missing parents (an upsert, so two
    benches receiving into the same new place at once both succeed)."""
    canonical = normalize_path(path)
    parent: LocationRow | None = None
    so_far: list[str] = []
    for seg in canonical.split("/"):
        so_far.append(seg)
        here = find_location(session, "/".join(so_far))
        if here is None:
            _insert_place(session, seg, "/".join(so_far), None if parent is None else parent.id)
            here = find_location(session, "/".join(so_far))
            if here is None:  # pragma: no cover - the row exists (inserted or conflicting)
                raise StockError(f"location: {canonical!r} could not be created; try again")
        parent = here
    assert parent is not None
    return parent


class UnknownPlace(StockError):
    """A receive, move or return named a place that does not exist (and creating it was not
    asked for); ``suggestions`` are the closest existing places, best first."""

    def __init__(self, path: str, suggestions: list[str], how: str = "") -> None:
        self.path = path
        self.suggestions = suggestions
        hint = ("; did you mean " + " or ".join(suggestions) + "?") if suggestions else ""
        super().__init__(f"unknown place {path}{hint}{how}")


def closest_places(session: Session, path: str, limit: int = 3) -> list[str]:
    """Existing places whose keys are nearest to ``path``'s (rapidfuzz ratio, 60 or more)."""
    from rapidfuzz import fuzz, process

    rows = session.execute(select(LocationRow.key, LocationRow.path)).all()
    by_key = {key: p for key, p in rows}
    found = process.extract(place_key(path), list(by_key), scorer=fuzz.ratio, limit=limit,
                            score_cutoff=60)
    return [by_key[key] for key, _score, _i in found]


def destination(session: Session, path: str, create: bool) -> LocationRow:
    """The place parts go to: created (with its parents) when ``create``, else it must exist."""
    if create:
        return ensure_location(session, path)
    row = find_location(session, path)
    if row is None:
        raise UnknownPlace(normalize_path(path), closest_places(session, path))
    return row


def require_location(session: Session, path: str) -> LocationRow:
    row = find_location(session, path)
    if row is None:
        raise NotFound(f"location {path!r} not found")
    return row


def location_paths(session: Session) -> list[str]:
    return list(session.scalars(select(LocationRow.path).order_by(LocationRow.path)))


def place_labels(session: Session) -> dict[str, str]:
    """Path -> label of every place that has one."""
    return {p: label for p, label in session.execute(
        select(LocationRow.path, LocationRow.label).where(LocationRow.label.is_not(None)))
        if label is not None}


# ---------------------------------------------------------------- the atomic change

def _check_quantity(qty: int, allow_zero: bool = False) -> int:
    """Every quantity a service is given, checked against the one limit (limits.py)."""
    try:
        return check_quantity(qty, allow_zero=allow_zero)
    except LimitError as err:
        raise StockError(str(err)) from None


def _check_texts(job: str | None, note: str | None) -> None:
    try:
        check_text("job", job)
        check_text("note", note)
    except LimitError as err:
        raise StockError(str(err)) from None


def _apply(session: Session, lot: LotRow, delta: int, reason: str, job: str | None,
           note: str | None, refusal: str, at: datetime | None = None,
           undoes: int | None = None) -> None:
    """Change a lot by ``delta`` atomically and write its ledger entry, or raise StockError.

    The lot stays within 0 and :data:`~partsdb.limits.MAX_LOT` (the int32 column), checked in
    the same statement, so the refusal is the same on SQLite and PostgreSQL."""
    # Bounds written so that no value in the statement leaves PostgreSQL's int4 (quantity +
    # delta could): a decrease needs enough there, an increase room below MAX_LOT.
    bound = LotRow.quantity >= -delta if delta < 0 else LotRow.quantity <= MAX_LOT - delta
    result = session.execute(
        update(LotRow)
        .where(LotRow.id == lot.id, bound)
        .values(quantity=LotRow.quantity + delta)
        .execution_options(synchronize_session=False))
    if result.rowcount != 1:  # type: ignore[attr-defined]
        session.expire(lot, ["quantity"])
        if lot.quantity + delta > MAX_LOT:
            try:
                check_lot_total(lot.quantity + delta)
            except LimitError as err:
                raise StockError(f"{err}; nothing was changed") from None
        raise StockError(refusal.format(have=lot.quantity))
    session.add(MovementRow(lot_id=lot.id, change=delta, reason=reason, job=job, note=note,
                            undoes=undoes, **({"at": at} if at is not None else {})))
    session.flush()
    session.expire(lot, ["quantity"])


def _lot(session: Session, device: DeviceRow, location: LocationRow,
         condition: str) -> LotRow | None:
    return session.scalars(select(LotRow).where(
        LotRow.device_id == device.id, LotRow.location_id == location.id,
        LotRow.condition == condition)).first()


def _get_or_create_lot(session: Session, device: DeviceRow, location: LocationRow,
                       condition: str, note: str | None = None) -> LotRow:
    lot = _lot(session, device, location, condition)
    if lot is not None:
        return lot
    try:
        with session.begin_nested():
            lot = LotRow(device_id=device.id, location_id=location.id, condition=condition,
                         quantity=0, note=note)
            session.add(lot)
    except IntegrityError:  # created meanwhile by another bench
        lot = _lot(session, device, location, condition)
        assert lot is not None
    return lot


def _check_condition(condition: str) -> str:
    c = condition.strip().lower()
    if c not in CONDITIONS:
        raise StockError(f"condition: {condition!r} is not valid; expected one of "
                         + ", ".join(CONDITIONS))
    return c


def _pick_lot(session: Session, device: DeviceRow, location: LocationRow,
              condition: str | None, verb: str) -> LotRow:
    """The one lot of ``device`` at ``location`` an operation means, or a clear refusal."""
    if condition is not None:
        lot = _lot(session, device, location, _check_condition(condition))
        if lot is None:
            raise StockError(f"{device.designation}: no {condition} lot at {location.path}")
        return lot
    lots = session.scalars(select(LotRow).where(
        LotRow.device_id == device.id, LotRow.location_id == location.id)).all()
    if not lots:
        raise StockError(f"{device.designation}: nothing at {location.path} to {verb}")
    if len(lots) > 1:
        held = ", ".join(f"{lot.condition} {lot.quantity}" for lot in lots)
        raise StockError(f"{device.designation} at {location.path} is held in several conditions "
                         f"({held}); say which with --condition")
    return lots[0]


def _view(lot: LotRow) -> LotView:
    return LotView(lot.device.designation, lot.location.path, lot.condition, lot.quantity,
                   lot.note, lot.device.low_stock, label=lot.location.label)


# ---------------------------------------------------------------- operations

def receive(session: Session, designation: str, qty: int, to: str, condition: str = "new",
            job: str | None = None, note: str | None = None, create: bool = True) -> LotView:
    """Parts arrive (bought, salvaged): add to the lot at ``to`` in ``condition``.

    ``create=False`` (what the faces pass for typed input) refuses a place that does not exist
    with :class:`UnknownPlace`; the same holds for :func:`move` and :func:`return_parts`."""
    _check_quantity(qty)
    _check_texts(job, note)
    device = require_row(session, designation)
    lot = _get_or_create_lot(session, device, destination(session, to, create),
                             _check_condition(condition))
    _apply(session, lot, qty, "receive", job, note, "cannot receive")
    return _view(lot)


def take(session: Session, designation: str, qty: int, from_: str, condition: str | None = None,
         job: str | None = None, note: str | None = None) -> LotView:
    """Parts leave the drawer (for a job); refused if the lot holds fewer than ``qty``."""
    _check_quantity(qty)
    _check_texts(job, note)
    device = require_row(session, designation)
    lot = _pick_lot(session, device, require_location(session, from_), condition, "take")
    _apply(session, lot, -qty, "take", job, note,
           f"cannot take {qty} {device.designation} from {lot.location.path} "
           f"({lot.condition}): only {{have}} there; nothing was changed")
    return _view(lot)


def return_parts(session: Session, designation: str, qty: int, to: str,
                 condition: str | None = None, job: str | None = None,
                 note: str | None = None, create: bool = True) -> LotView:
    """Unused parts come back from a job into the drawer (the lot there, or a new ``used``)."""
    _check_quantity(qty)
    _check_texts(job, note)
    device = require_row(session, designation)
    location = destination(session, to, create)
    if condition is None:
        lots = session.scalars(select(LotRow).where(
            LotRow.device_id == device.id, LotRow.location_id == location.id)).all()
        if len(lots) > 1:
            held = ", ".join(lot.condition for lot in lots)
            raise StockError(f"{device.designation} at {location.path} is held in several "
                             f"conditions ({held}); say which with --condition")
        lot = lots[0] if lots else _get_or_create_lot(session, device, location, "used")
    else:
        lot = _get_or_create_lot(session, device, location, _check_condition(condition))
    _apply(session, lot, qty, "return", job, note, "cannot return")
    return _view(lot)


def move(session: Session, designation: str, qty: int, from_: str, to: str,
         condition: str | None = None, job: str | None = None,
         note: str | None = None, create: bool = True) -> tuple[LotView, LotView]:
    """Move parts between places: two ledger entries (out and in) in one transaction."""
    _check_quantity(qty)
    _check_texts(job, note)
    device = require_row(session, designation)
    source = _pick_lot(session, device, require_location(session, from_), condition, "move")
    target_place = destination(session, to, create)
    if target_place.id == source.location_id:
        raise StockError(f"move: from and to are the same place ({target_place.path})")
    target = _get_or_create_lot(session, device, target_place, source.condition)
    out = (source, -qty, f"cannot move {qty} {device.designation} from {source.location.path}: "
                         "only {have} there; nothing was changed")
    into = (target, qty, "cannot move")
    # Lots are changed in id order, so two benches moving between the same two drawers in
    # opposite directions take their row locks in the same order and cannot deadlock. Both
    # entries get one time stamp: that pairs them for an undo.
    at = utcnow()
    for lot, delta, refusal in sorted((out, into), key=lambda step: step[0].id):
        _apply(session, lot, delta, "move", job, note, refusal, at=at)
    return _view(source), _view(target)


def count(session: Session, designation: str, qty: int, at: str, condition: str | None = None,
          job: str | None = None, note: str | None = None) -> tuple[LotView, int]:
    """A stock-take: set the lot to the counted ``qty``; the ledger records the difference."""
    _check_quantity(qty, allow_zero=True)
    _check_texts(job, note)
    device = require_row(session, designation)
    location = ensure_location(session, at)
    lots = session.scalars(select(LotRow).where(
        LotRow.device_id == device.id, LotRow.location_id == location.id)).all()
    if condition is not None:
        lot = _get_or_create_lot(session, device, location, _check_condition(condition))
    elif len(lots) == 1:
        lot = lots[0]
    elif not lots:
        lot = _get_or_create_lot(session, device, location, "new")
    else:
        held = ", ".join(f"{lot.condition} {lot.quantity}" for lot in lots)
        raise StockError(f"{device.designation} at {location.path} is held in several conditions "
                         f"({held}); say which with --condition")
    # Compare-and-set: the difference is computed against the quantity this transaction saw.
    for _attempt in range(20):
        session.refresh(lot, ["quantity"])
        seen = lot.quantity
        result = session.execute(
            update(LotRow).where(LotRow.id == lot.id, LotRow.quantity == seen)
            .values(quantity=qty).execution_options(synchronize_session=False))
        if result.rowcount == 1:  # type: ignore[attr-defined]
            session.add(MovementRow(lot_id=lot.id, change=qty - seen, reason="count", job=job,
                                    note=note))
            session.flush()
            session.expire(lot, ["quantity"])
            return _view(lot), qty - seen
    raise StockError("count: the lot kept changing while counting; try again")


# ---------------------------------------------------------------- queries

def where(session: Session, designation: str) -> list[LotView]:
    """Every lot of a device, largest first (empty lots included: the drawer is known)."""
    device = require_row(session, designation)
    lots = session.scalars(select(LotRow).where(LotRow.device_id == device.id)).all()
    total = sum(lot.quantity for lot in lots)
    views = [LotView(device.designation, lot.location.path, lot.condition, lot.quantity,
                     lot.note, device.low_stock, total, lot.location.label) for lot in lots]
    return sorted(views, key=lambda v: (-v.quantity, v.location, v.condition))


def lots_at(session: Session, path: str | None, include_children: bool = True) -> list[LotView]:
    """Lots at a place (and below it), or everywhere when ``path`` is None."""
    totals = _device_totals(session)
    query = (select(LotRow, DeviceRow, LocationRow)
             .join(DeviceRow, LotRow.device_id == DeviceRow.id)
             .join(LocationRow, LotRow.location_id == LocationRow.id))
    if path is not None:
        query = query.where(_at_place(path, include_children))
    rows = session.execute(query.order_by(LocationRow.path, DeviceRow.key)).all()
    return [LotView(d.designation, loc.path, lot.condition, lot.quantity, lot.note,
                    d.low_stock, totals.get(d.id, 0), loc.label) for lot, d, loc in rows]


def _at_place(path: str, include_children: bool = True) -> ColumnElement[bool]:
    """The place at ``path`` (and the places in it): by key, with LIKE's ``%`` and ``_`` escaped,
    since ``_`` is allowed in a place name ("C_" must not match "C1")."""
    key = place_key(path)
    cond = LocationRow.key == key
    if include_children:
        escaped = key.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
        cond = cond | LocationRow.key.like(escaped + "/%", escape="\\")
    return cond


def _device_totals(session: Session) -> dict[int, int]:
    return dict(session.execute(  # type: ignore[arg-type]
        select(LotRow.device_id, func.sum(LotRow.quantity)).group_by(LotRow.device_id)).all())


@dataclass(frozen=True)
class LowStock:
    designation: str
    quantity: int
    threshold: int
    locations: list[str]


def low_stock(session: Session) -> list[LowStock]:
    """Devices (not lots) whose total stock, summed over every place and condition, is below
    their low-stock threshold; the one count of "low" every face shows."""
    totals = _device_totals(session)
    # Plain columns, not records, in table order, sorted here by key: a catalog of a million
    # devices has some 150,000 with a threshold, and building a record of each, or reading
    # them in the key index's order (a jump in the table per row), took seconds each (the
    # Drawers view counts them on its first screen).
    rows = session.execute(select(DeviceRow.id, DeviceRow.designation, DeviceRow.key,
                                  DeviceRow.low_stock)
                           .where(DeviceRow.low_stock.is_not(None))).tuples().all()
    low = sorted(((name, key, totals.get(ident, 0), int(mark or 0))
                  for ident, name, key, mark in rows if totals.get(ident, 0) < (mark or 0)),
                 key=lambda row: row[1])
    summary = stock_summary(session) if low else {}
    return [LowStock(name, total, mark, summary.get(key, StockSummary()).locations)
            for name, key, total, mark in low]


def stock_summary(session: Session) -> dict[str, StockSummary]:
    """Normalised key -> total quantity and the places holding some (largest first)."""
    rows = session.execute(
        select(DeviceRow.key, LocationRow.path, func.sum(LotRow.quantity))
        .join(LotRow, LotRow.device_id == DeviceRow.id)
        .join(LocationRow, LotRow.location_id == LocationRow.id)
        .group_by(DeviceRow.key, LocationRow.path)).all()
    out: dict[str, StockSummary] = {}
    per_place: dict[str, list[tuple[int, str]]] = {}
    for key, path, qty in rows:
        s = out.setdefault(key, StockSummary())
        s.quantity += int(qty or 0)
        if qty:
            per_place.setdefault(key, []).append((int(qty), path))
    for key, places in per_place.items():
        out[key].locations = [p for _, p in sorted(places, key=lambda t: (-t[0], t[1]))]
    return out


def ledger(session: Session, designation: str | None = None, location: str | None = None,
           job: str | None = None, since: datetime | None = None, until: datetime | None = None,
           limit: int | None = None) -> list[LedgerEntry]:
    """Ledger entries, newest first, filtered by device, place (and below), job and time."""
    query = (select(MovementRow, LotRow, DeviceRow, LocationRow)
             .join(LotRow, MovementRow.lot_id == LotRow.id)
             .join(DeviceRow, LotRow.device_id == DeviceRow.id)
             .join(LocationRow, LotRow.location_id == LocationRow.id))
    if designation:
        query = query.where(DeviceRow.id == require_row(session, designation).id)
    if location:
        require_location(session, location)  # an unknown place is not an empty ledger
        query = query.where(_at_place(location))
    if job:
        # Case-insensitive prefix: "j-26" finds J-2611 and J-2612 (LIKE's wildcards escaped).
        pattern = job.strip().lower().replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
        query = query.where(func.lower(MovementRow.job).like(pattern + "%", escape="\\"))
    if since:
        query = query.where(MovementRow.at >= since)
    if until:
        query = query.where(MovementRow.at <= until)
    query = query.order_by(MovementRow.at.desc(), MovementRow.id.desc())
    if limit:
        query = query.limit(limit)
    return [_entry(m, lot, d, loc) for m, lot, d, loc in session.execute(query).all()]


def _entry(m: MovementRow, lot: LotRow, d: DeviceRow, loc: LocationRow) -> LedgerEntry:
    return LedgerEntry(m.id, m.at, d.designation, loc.path, lot.condition, m.change, m.reason,
                       m.job, m.note, m.undoes)


def ledger_mismatches(session: Session) -> list[tuple[int, int, int]]:
    """Lots whose ledger does not sum to their quantity: (lot id, quantity, ledger sum)."""
    sums = dict(session.execute(  # type: ignore[arg-type]
        select(MovementRow.lot_id, func.sum(MovementRow.change))
        .group_by(MovementRow.lot_id)).all())
    return [(lot_id, qty, int(sums.get(lot_id, 0) or 0))
            for lot_id, qty in session.execute(select(LotRow.id, LotRow.quantity)).all()
            if int(sums.get(lot_id, 0) or 0) != qty]


def plan_lots(session: Session, rows: Iterable[tuple[str, str, int, str, str | None]]
              ) -> list[int | None]:
    """The quantity each (designation, location, quantity, condition, note) row's lot holds now,
    None for a lot that does not exist yet; reads only."""
    out: list[int | None] = []
    for designation, path, _qty, condition, _note in rows:
        device = _row_or_none(session, designation)
        location = find_location(session, path)
        lot = (_lot(session, device, location, _check_condition(condition))
               if device is not None and location is not None else None)
        out.append(None if lot is None else lot.quantity)
    return out


def _row_or_none(session: Session, designation: str) -> DeviceRow | None:
    from partsdb.designations import normalize

    return session.scalars(select(DeviceRow).where(DeviceRow.key == normalize(designation))).first()


def import_lots(session: Session, rows: Iterable[tuple[str, str, int, str, str | None]],
                new_reason: str = "import") -> tuple[int, int]:
    """Set lots from (designation, location, quantity, condition, note) rows, via the ledger.

    Each row sets the lot to the given quantity (a count), so re-importing the same file
    changes nothing. Stock arriving in a lot that did not exist is written to the ledger as its
    own movement kind, ``new_reason`` (``import``), a changed lot as a count with the note
    "import". Returns (lots added,
    lots whose quantity changed).
    """
    added = changed = 0
    for designation, path, qty, condition, note in rows:
        device = require_row(session, designation)
        location = ensure_location(session, path)
        cond = _check_condition(condition)
        lot = _lot(session, device, location, cond)
        new = lot is None
        if lot is None:
            lot = _get_or_create_lot(session, device, location, cond, note)
        if note is not None and lot.note != note:
            lot.note = note
        if new:
            added += 1
            if qty:
                _apply(session, lot, qty, new_reason, None, "import", "cannot import")
        elif lot.quantity != qty:
            _apply(session, lot, qty - lot.quantity, "count", None, "import", "cannot import")
            changed += 1
    return added, changed
