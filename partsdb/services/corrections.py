"""Corrections that keep history: undoing a movement and editing a lot, each written as a new
ledger entry (a correction is an opposite posting, never an erasure: bookkeeping practice)."""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from partsdb.services.catalog import NotFound, require_row
from partsdb.services.stock import (
    LedgerEntry,
    LotView,
    StockError,
    _apply,
    _check_condition,
    _check_texts,
    _entry,
    _lot,
    _pick_lot,
    _view,
    require_location,
)
from partsdb.storage.models import DeviceRow, LocationRow, LotRow, MovementRow, utcnow

UNDOABLE = ("receive", "take", "return", "move", "count")
"""Reasons an undo compensates. An 'undo' is not undone again (receive or take instead), an
'edit' is changed back by another edit, a 'merge' moved no parts."""


@dataclass(frozen=True)
class UndoReport:
    undone: list[LedgerEntry]
    """The entries reversed (two for a move)."""
    written: list[LedgerEntry]
    """The compensating 'undo' entries, in the same order."""

    def to_json(self) -> dict[str, object]:
        return {"undone": [e.to_json() for e in self.undone],
                "written": [e.to_json() for e in self.written]}


def _entry_of(session: Session, movement_id: int) -> LedgerEntry:
    row = session.execute(
        select(MovementRow, LotRow, DeviceRow, LocationRow)
        .join(LotRow, MovementRow.lot_id == LotRow.id)
        .join(DeviceRow, LotRow.device_id == DeviceRow.id)
        .join(LocationRow, LotRow.location_id == LocationRow.id)
        .where(MovementRow.id == movement_id)).first()
    if row is None:
        raise NotFound(f"movement #{movement_id} not found in the ledger")
    return _entry(*row)


def last_undoable(session: Session) -> LedgerEntry | None:
    """The newest movement an undo with no id reverses: the last receive, take, return, move
    or count (that changed a quantity) not yet undone, whoever made it."""
    undone = select(MovementRow.undoes).where(MovementRow.undoes.is_not(None))
    movement_id = session.scalar(
        select(MovementRow.id).where(MovementRow.reason.in_(UNDOABLE), MovementRow.change != 0,
                                     MovementRow.id.not_in(undone))
        .order_by(MovementRow.id.desc()).limit(1))
    return None if movement_id is None else _entry_of(session, movement_id)


def _move_partner(session: Session, m: MovementRow) -> MovementRow | None:
    """The other half of a move: the entry written with it (same time stamp, same device,
    opposite change); for moves written before the stamps were shared, the adjacent id."""
    device_id = m.lot.device_id
    same = (select(MovementRow).join(LotRow, MovementRow.lot_id == LotRow.id)
            .where(MovementRow.reason == "move", MovementRow.change == -m.change,
                   MovementRow.id != m.id, LotRow.device_id == device_id,
                   MovementRow.lot_id != m.lot_id))
    found = session.scalars(same.where(MovementRow.at == m.at)).first()
    if found is None:
        found = session.scalars(same.where(MovementRow.id.in_((m.id - 1, m.id + 1)))).first()
    return found


def undo(session: Session, movement_id: int | None = None) -> UndoReport:
    """Reverse a movement by writing its compensating entry (reason 'undo', ``undoes`` naming
    it); history is never rewritten. A move is reversed as a whole (both entries).

    Refused, changing nothing, when the movement was undone already, is not of a kind an undo
    reverses, or when the reversal would take a lot below zero."""
    if movement_id is None:
        last = last_undoable(session)
        if last is None:
            raise StockError("undo: nothing to undo (no receive, take, return, move or count "
                             "that is not undone already)")
        movement_id = last.id
    first = session.get(MovementRow, movement_id)
    if first is None:
        raise NotFound(f"movement #{movement_id} not found in the ledger")
    if first.reason not in UNDOABLE:
        what = {"undo": f"itself an undo (of #{first.undoes}); receive or take the parts instead",
                "edit": "a lot edit; change it back with stock set-condition or stock note",
                "merge": "a place merge, which moved no parts by itself"}[first.reason]
        raise StockError(f"undo: movement #{movement_id} is {what}")
    rows = [first]
    if first.reason == "move":
        partner = _move_partner(session, first)
        if partner is not None:
            rows.append(partner)
    for row in rows:
        done = session.scalar(select(MovementRow.id).where(MovementRow.undoes == row.id))
        if done is not None:
            raise StockError(f"undo: movement #{row.id} was already undone by #{done}; "
                             "nothing was changed")
    originals = [_entry_of(session, r.id) for r in rows]
    at = utcnow()
    written: list[int] = []
    lots = {row.id: row.lot for row in rows}  # read before the savepoint (see below)
    try:
        # A savepoint: when another bench undid the same movement meanwhile, the unique
        # ``undoes`` index refuses the second entry and this undo is rolled back whole. On
        # SQLite the savepoint opens the transaction, so nothing is read inside it before the
        # first write (a read would pin a snapshot that a concurrent commit makes stale).
        with session.begin_nested():
            # Lots in id order, as in move(), so two undos cannot deadlock.
            for row, entry in sorted(zip(rows, originals, strict=True),
                                     key=lambda p: p[0].lot_id):
                _apply(session, lots[row.id], -row.change, "undo", row.job, f"undoes #{row.id}",
                       f"cannot undo #{row.id} ({entry.reason} {entry.change:+d} "
                       f"{entry.designation} at {entry.location}): only {{have}} there now; "
                       "nothing was changed", at=at, undoes=row.id)
                written.append(session.scalar(select(MovementRow.id)
                                              .where(MovementRow.undoes == row.id)) or 0)
    except IntegrityError:
        raise StockError(f"undo: movement #{movement_id} was undone by another bench "
                         "meanwhile; nothing was changed") from None
    by_original = dict(zip(sorted(rows, key=lambda r: r.lot_id), written, strict=True))
    return UndoReport(originals, [_entry_of(session, by_original[r]) for r in rows])


# ---------------------------------------------------------------- lot edits

def _edit_entry(session: Session, lot: LotRow, job: str | None, text: str) -> None:
    session.add(MovementRow(lot_id=lot.id, change=0, reason="edit", job=job, note=text))
    session.flush()


def set_condition(session: Session, designation: str, at: str, new_condition: str,
                  condition: str | None = None, job: str | None = None) -> LotView:
    """Change a lot's condition ("received as new, is new old stock"), in the ledger.

    The lot keeps its history and simply changes condition when the place holds no lot of the
    new condition; otherwise its parts join that lot (two 'edit' entries: out and in) and it
    stays, empty, with its history."""
    _check_texts(job, None)
    device = require_row(session, designation)
    lot = _pick_lot(session, device, require_location(session, at), condition, "edit")
    new = _check_condition(new_condition)
    if new == lot.condition:
        raise StockError(f"condition: the lot of {device.designation} at {lot.location.path} "
                         f"is {new} already")
    text = f"condition {lot.condition} -> {new}"
    target = _lot(session, device, lot.location, new)
    if target is None:
        lot.condition = new
        session.flush()
        _edit_entry(session, lot, job, text)
        return _view(lot)
    qty = lot.quantity
    if qty:
        at_ = utcnow()
        for step, delta in sorted(((lot, -qty), (target, qty)), key=lambda s: s[0].id):
            _apply(session, step, delta, "edit", job, text,
                   f"cannot change the condition of {device.designation} at "
                   f"{lot.location.path}: only {{have}} there; nothing was changed", at=at_)
    else:
        _edit_entry(session, target, job, text)
    return _view(target)


def set_note(session: Session, designation: str, at: str, note: str | None,
             condition: str | None = None, job: str | None = None) -> LotView:
    """Change (or, with an empty text, clear) a lot's note, in the ledger."""
    text = (note or "").strip() or None
    _check_texts(job, text)
    device = require_row(session, designation)
    lot = _pick_lot(session, device, require_location(session, at), condition, "edit")
    old = lot.note
    lot.note = text
    session.flush()

    def short(t: str | None) -> str:
        return "(none)" if t is None else repr(t if len(t) <= 200 else t[:199] + "…")

    _edit_entry(session, lot, job, f"note {short(old)} -> {short(text)}")
    return _view(lot)
