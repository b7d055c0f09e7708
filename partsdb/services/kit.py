"""A repair kit for a unit's parts list: what to take from which drawer, what to substitute,
what to buy; and taking the whole kit in one transaction.

A kit file is CSV with a header: ``reference`` (Q1), ``designation``, ``quantity`` (default 1),
and optional circuit stress (``vce_peak``, ``ic_peak``, ``power``, ``heatsink``, ``ambient``,
``freq``: the rows of :data:`partsdb.spec_fields.STRESS_FIELDS`) and ``policy`` per line.
Headers are matched ignoring case, spaces and dashes (``Vce peak`` is ``vce_peak``).

:func:`plan_kit` walks the lines in file order with one running reservation per lot, so lines
that need the same part (the original, or the same substitute) are counted together and the
drawers really hold what the pick list says. Per line: the original from the drawers when they
hold enough, else the best suitable or marginal substitute the drawers still hold enough of,
else ``buy`` with the best suitable or marginal part of the catalog.
"""

from __future__ import annotations

import csv
from collections import defaultdict
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from partsdb.designations import normalize
from partsdb.errors import InvalidInput
from partsdb.ranking import SpecError, Stress
from partsdb.spec_fields import STRESS_FIELDS
from partsdb.storage.database import Database

COLUMNS = ("reference", "designation", "quantity", *(r.name for r in STRESS_FIELDS), "policy")
_ALIASES = {"ref": "reference", "qty": "quantity", "part": "designation", "type": "designation"}
FIT = ("suitable", "marginal")
"""The verdicts a kit takes a substitute with."""


class KitError(InvalidInput):
    """A kit file or a kit take refused; the message names the line and field."""



PICK_ORDER: dict[str, int] = {"new": 0, "nos": 1, "tested": 2, "used": 3, "pulled": 4}
"""Lot conditions in the order a kit takes them (best first): measured-good pulls before
unmeasured ones (common practice; the conditions are :data:`partsdb.lots.CONDITIONS`)."""

@dataclass(frozen=True)
class KitLine:
    reference: str
    designation: str
    quantity: int
    stress: Stress
    policy: str | None
    row: int
    """The line number in the file (the header is line 1)."""


@dataclass
class PlannedLine:
    line: KitLine
    action: str
    """stock, substitute or buy."""
    part: str
    """The designation fitted (the original for ``stock``)."""
    verdict: str | None = None
    picks: list[tuple[str, str, int]] = field(default_factory=list)
    """(location, condition, quantity) taken from the drawers."""

    def to_json(self) -> dict[str, Any]:
        merged: dict[str, int] = defaultdict(int)
        for location, _condition, qty in self.picks:
            merged[location] += qty
        return {"reference": self.line.reference, "designation": self.line.designation,
                "quantity": self.line.quantity, "action": self.action, "part": self.part,
                "verdict": self.verdict,
                "picks": [{"location": loc, "quantity": q} for loc, q in merged.items()]}


@dataclass
class KitPlan:
    lines: list[PlannedLine]

    def pick_list(self) -> list[tuple[str, str, int]]:
        """(location, part, quantity) summed over lines, sorted by drawer then part."""
        total: dict[tuple[str, str], int] = defaultdict(int)
        for planned in self.lines:
            for location, _condition, qty in planned.picks:
                total[(location, planned.part)] += qty
        return sorted(((loc, part, q) for (loc, part), q in total.items()),
                      key=lambda t: (t[0], normalize(t[1])))

    @property
    def short(self) -> list[PlannedLine]:
        """Lines the drawers cannot meet (to buy)."""
        return [p for p in self.lines if p.action == "buy"]

    def to_json(self) -> dict[str, Any]:
        return {"lines": [p.to_json() for p in self.lines],
                "pick_list": [{"location": loc, "part": part, "quantity": q}
                              for loc, part, q in self.pick_list()]}


def _header(name: str) -> str:
    key = "_".join(name.strip().lower().replace("-", " ").split())
    return _ALIASES.get(key, key)


def read_kit(path: str | Path) -> list[KitLine]:
    """The lines of a kit file; every problem names the line and the field."""
    from partsdb.limits import check_quantity
    from partsdb.services.substitution import parse_stress

    try:
        with open(path, newline="", encoding="utf-8-sig") as handle:
            rows = list(csv.reader(handle))
    except OSError as err:
        raise KitError(f"kit file: cannot read {str(path)!r} ({err.strerror}); expected a CSV "
                       "file") from err
    except UnicodeDecodeError as err:
        raise KitError(f"kit file: {str(path)!r} is not UTF-8 text; expected a CSV file") \
            from err
    if not rows:
        raise KitError(f"kit file: {str(path)!r} is empty; expected a header line with "
                       "reference, designation, quantity")
    header = [_header(h) for h in rows[0]]
    unknown = [h for h in header if h not in COLUMNS]
    if unknown:
        raise KitError(f"kit file: column {unknown[0]!r} is not known; expected columns from "
                       + ", ".join(COLUMNS))
    if "designation" not in header:
        raise KitError("kit file: no designation column; expected reference, designation, "
                       "quantity")
    lines: list[KitLine] = []
    for number, row in enumerate(rows[1:], start=2):
        if not any(cell.strip() for cell in row):
            continue
        values = {h: (row[i].strip() if i < len(row) else "") for i, h in enumerate(header)}
        designation = values.get("designation", "")
        if not designation:
            raise KitError(f"kit line {number}: designation is empty; expected a part such "
                           "as OC375")
        try:
            qty = check_quantity(values.get("quantity") or "1", "quantity")
            stress = parse_stress({r.name: values.get(r.name, "") for r in STRESS_FIELDS})
        except (ValueError, SpecError) as err:
            raise KitError(f"kit line {number}: {err}") from err
        lines.append(KitLine(values.get("reference") or f"line {number}", designation, qty,
                             stress, values.get("policy") or None, number))
    if not lines:
        raise KitError(f"kit file: {str(path)!r} has no part lines; expected one per transistor")
    return lines


class _Drawers:
    """What the drawers hold, less what lines already planned take: one running reservation
    per lot, keyed by (part key, location, condition)."""

    def __init__(self, session: Any) -> None:
        self.session = session
        self.reserved: dict[tuple[str, str, str], int] = defaultdict(int)

    def hold(self, part: str, picks: list[tuple[str, str, int]]) -> None:
        """Count ``picks`` of ``part`` as taken (a line planned already)."""
        for location, condition, qty in picks:
            self.reserved[(normalize(part), location, condition)] += qty

    def available(self, designation: str) -> list[tuple[str, str, int]]:
        """(location, condition, parts left) of every lot of ``designation``."""
        from partsdb.services import stock

        key = normalize(designation)
        return [(lot.location, lot.condition,
                 lot.quantity - self.reserved[(key, lot.location, lot.condition)])
                for lot in stock.where(self.session, designation)]

    def left(self, designation: str) -> int:
        return sum(max(0, n) for _loc, _cond, n in self.available(designation))

    def reserve(self, designation: str, qty: int) -> list[tuple[str, str, int]] | None:
        """Picks for ``qty`` parts, or None when the drawers no longer hold enough.

        The rule (common practice of a parts counter): the best condition first (new, new old
        stock, tested, used, pulled: :data:`PICK_ORDER`), and one lot when one lot holds
        enough, so the fewest drawers are opened; otherwise lots in that order, larger first.
        """
        lots = [lot for lot in self.available(designation) if lot[2] > 0]
        if sum(lot[2] for lot in lots) < qty:
            return None

        def rank(lot: tuple[str, str, int]) -> tuple[int, int, str]:
            return (PICK_ORDER.get(lot[1], len(PICK_ORDER)), -lot[2], lot[0])

        whole = sorted((lot for lot in lots if lot[2] >= qty), key=rank)
        if whole:
            picks = [(whole[0][0], whole[0][1], qty)]
        else:
            picks, left = [], qty
            for location, condition, have in sorted(lots, key=rank):
                n = min(have, left)
                picks.append((location, condition, n))
                left -= n
                if left == 0:
                    break
        self.hold(designation, picks)
        return picks


def _device(session: Any, line: KitLine) -> Any:
    from partsdb.services import catalog

    device = catalog.get_device(session, line.designation)
    if device is None:
        hint = catalog.did_you_mean(session, line.designation)
        raise catalog.NotFound(f"kit line {line.row}: designation {line.designation!r} is not "
                               f"a stored device{hint}")
    return device


def _fits(session: Any, line: KitLine, designation: str, limit: int = 100_000) -> list[Any]:
    """The line's ranked candidates that a kit takes (:data:`FIT`), best first."""
    from partsdb.services.substitution import rank_substitutes

    try:
        result = rank_substitutes(session, designation, {}, line.stress, line.policy,
                                  limit=limit)
    except SpecError as err:
        raise KitError(f"kit line {line.row}: {err}") from err
    return [c for c in result.candidates if c.verdict in FIT]


def plan_kit(db: Database, lines: list[KitLine]) -> KitPlan:
    """What to take for each line (see the module notes); reads only."""
    planned: list[PlannedLine] = []
    with db.session() as session:
        drawers = _Drawers(session)
        for line in lines:
            device = _device(session, line)
            picks = drawers.reserve(device.designation, line.quantity)
            if picks is not None:
                planned.append(PlannedLine(line, "stock", device.designation, None, picks))
                continue
            fits = _fits(session, line, device.designation)
            chosen = None
            for cand in fits:
                picks = drawers.reserve(cand.designation, line.quantity)
                if picks is not None:
                    chosen = PlannedLine(line, "substitute", cand.designation, cand.verdict,
                                         picks)
                    break
            if chosen is None:
                best = fits[0] if fits else None
                chosen = PlannedLine(line, "buy", best.designation if best else
                                     device.designation, best.verdict if best else None)
            planned.append(chosen)
    return KitPlan(planned)


# ---------------------------------------------------------------- switching a line

@dataclass(frozen=True)
class LineOption:
    """A part one kit line may be switched to: the original, or a ranked candidate."""

    designation: str
    verdict: str | None
    """None for the original itself; else the candidate's verdict (suitable or marginal)."""
    score: float | None
    left: int
    """Parts of it the drawers hold once every OTHER line of the plan has taken its picks."""
    needed: int
    """The line's quantity."""
    current: bool
    """The part the line uses now."""

    @property
    def enough(self) -> bool:
        return self.left >= self.needed


def _others_held(session: Any, plan: KitPlan, index: int) -> _Drawers:
    drawers = _Drawers(session)
    for i, other in enumerate(plan.lines):
        if i != index:
            drawers.hold(other.part, other.picks)
    return drawers


def _line_at(plan: KitPlan, index: int) -> PlannedLine:
    if not 0 <= index < len(plan.lines):
        raise KitError(f"kit line: number {index + 1} is not valid; expected 1 to "
                       f"{len(plan.lines)}")
    return plan.lines[index]


def line_options(db: Database, plan: KitPlan, index: int, limit: int = 30) -> list[LineOption]:
    """The parts line ``index`` (0-based) may use: its original first, then its ranked
    ``suitable`` and ``marginal`` substitutes (at most ``limit``), each with what the drawers
    still hold of it after the plan's other lines (lines sharing a part are counted together).
    Reads only."""
    planned = _line_at(plan, index)
    line = planned.line
    with db.session() as session:
        device = _device(session, line)
        drawers = _others_held(session, plan, index)
        current = normalize(planned.part)
        out = [LineOption(device.designation, None, None, drawers.left(device.designation),
                          line.quantity, current == normalize(device.designation))]
        for cand in _fits(session, line, device.designation, limit):
            out.append(LineOption(cand.designation, cand.verdict, float(cand.score),
                                  drawers.left(cand.designation), line.quantity,
                                  current == cand.key))
    return out


def switch_line(db: Database, plan: KitPlan, index: int, part: str) -> KitPlan:
    """The plan with line ``index`` (0-based) switched to ``part``: the original itself, or
    one of its :func:`line_options`. The drawers are counted again across every line, so a
    substitute two lines share is never promised twice; when they no longer hold enough the
    switch is refused (KitError naming the part, what the line needs and what is left).
    The other lines keep their picks. Reads only; returns a new plan."""
    planned = _line_at(plan, index)
    line = planned.line
    key = normalize(part)
    with db.session() as session:
        device = _device(session, line)
        if key == normalize(device.designation):
            name, action, verdict = device.designation, "stock", None
        else:
            options = {c.key: c for c in _fits(session, line, device.designation)}
            cand = options.get(key)
            if cand is None:
                raise KitError(f"kit line {line.row} ({line.reference}): part {part!r} is not "
                               f"a suitable or marginal substitute for {device.designation}; "
                               "expected the original or one of the line's candidates")
            name, action, verdict = cand.designation, "substitute", cand.verdict
        drawers = _others_held(session, plan, index)
        left = drawers.left(name)
        picks = drawers.reserve(name, line.quantity)
    if picks is None:
        raise KitError(f"kit line {line.row} ({line.reference}): the drawers hold {left} "
                       f"{name} once the other lines have theirs; the line needs "
                       f"{line.quantity} (nothing was changed)")
    lines = list(plan.lines)
    lines[index] = PlannedLine(line, action, name, verdict, picks)
    return KitPlan(lines)


def take_kit(db: Database, plan: KitPlan, job: str) -> int:
    """Take every picked part and record each substitution in the swap log, in ONE
    transaction: a line to buy, or a lot that no longer holds enough, refuses the whole kit
    and changes nothing. Returns the number of parts taken."""
    from partsdb.services import stock, swaplog

    if not job or not job.strip():
        raise KitError("--job: empty; expected the job reference (such as J-2611)")
    if plan.short:
        refs = ", ".join(f"{p.line.reference} ({p.line.designation})" for p in plan.short)
        raise KitError(f"kit: the drawers cannot meet {refs}; nothing was taken (buy them "
                       "first, or edit the kit file)")

    def work(session: Any) -> int:
        taken = 0
        for p in plan.lines:
            for location, condition, qty in p.picks:
                stock.take(session, p.part, qty, location, condition, job=job.strip(),
                           note=f"kit {p.line.reference}")
                taken += qty
            if p.action == "substitute":
                swaplog.add(session, p.line.designation, p.part, job.strip(), p.line.stress,
                            policy=p.line.policy, note=f"kit {p.line.reference}")
        return taken

    # One transaction (re-run from the start on a server's serialization failure): a refused
    # take on any line rolls back every earlier line.
    return db.transact(work)
