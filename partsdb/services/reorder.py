"""The reorder list: devices at or below their low-stock count, what to buy, and for obsolete
ones the best suitable substitute from the catalog and whether the drawers hold it.

A device is listed when it has a low-stock count, its stock (summed over every place and
condition, as :func:`partsdb.services.stock.low_stock` sums it) is at or below that count, and
buying up to its target (``reorder_to``, or twice the low-stock count when blank) needs at
least one part.
"""

from __future__ import annotations

from dataclasses import dataclass

from sqlalchemy import select
from sqlalchemy.orm import Session

from partsdb.device import FET_KINDS
from partsdb.services.stock import _device_totals
from partsdb.storage.models import DeviceRow


@dataclass(frozen=True)
class Substitute:
    designation: str
    score: float
    in_stock: int
    locations: list[str]


@dataclass(frozen=True)
class ReorderLine:
    designation: str
    quantity: int
    """In stock now, every place and condition."""
    low_stock: int
    target: int
    """reorder_to, or twice low_stock when that is blank."""
    to_buy: int
    obsolete: bool
    substitute: Substitute | None
    """For an obsolete device: the best-scoring candidate the ranking calls suitable."""

    def to_json(self) -> dict[str, object]:
        sub = self.substitute
        return {"designation": self.designation, "quantity": self.quantity,
                "low_stock": self.low_stock, "target": self.target, "to_buy": self.to_buy,
                "obsolete": self.obsolete,
                "substitute": None if sub is None else sub.designation,
                "substitute_score": None if sub is None else round(sub.score, 1),
                "substitute_in_stock": None if sub is None else sub.in_stock,
                "substitute_locations": [] if sub is None else sub.locations}

    def row(self) -> list[object]:
        """The cells of a table, CSV or Markdown row (COLUMNS)."""
        sub = self.substitute
        return [self.designation, self.quantity, self.low_stock, self.target, self.to_buy,
                "yes" if self.obsolete else "no",
                None if sub is None else sub.designation,
                None if sub is None else sub.in_stock,
                None if sub is None else ", ".join(sub.locations) or None]


COLUMNS = ("designation", "quantity", "low_stock", "target", "to_buy", "obsolete",
           "substitute", "substitute_in_stock", "substitute_locations")


def target_of(low_stock: int, reorder_to: int | None) -> int:
    """What to buy up to: the device's own target, or twice its low-stock count (the issue's
    default: a common shop rule of thumb, "common practice")."""
    return reorder_to if reorder_to is not None else 2 * low_stock


def best_substitute(session: Session, designation: str) -> Substitute | None:
    """The top suitable substitute for a stored device, by the one public entry of the
    substitution service (the call ``partsdb substitute`` makes); None when none is suitable."""
    from partsdb.services.substitution import rank_substitutes

    result = rank_substitutes(session, designation, limit=15)
    for c in result.candidates:
        if c.verdict == "suitable":
            return Substitute(c.designation, float(c.score), int(c.in_stock), list(c.locations))
    return None


def reorder_list(session: Session) -> list[ReorderLine]:
    """Every device at or below its low-stock count with something to buy, by designation."""
    totals = _device_totals(session)
    rows = session.scalars(select(DeviceRow).where(DeviceRow.low_stock.is_not(None))
                           .order_by(DeviceRow.key)).all()
    lines: list[ReorderLine] = []
    for r in rows:
        have = int(totals.get(r.id, 0) or 0)
        low = int(r.low_stock or 0)
        if have > low:
            continue
        target = target_of(low, r.reorder_to)
        if target - have <= 0:
            continue
        # The substitute finder ranks bipolar parts only: an obsolete FET gets no suggestion.
        sub = best_substitute(session, r.designation) \
            if r.obsolete and r.kind not in FET_KINDS else None
        lines.append(ReorderLine(r.designation, have, low, target, target - have,
                                 bool(r.obsolete), sub))
    return lines
