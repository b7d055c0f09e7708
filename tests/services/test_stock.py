"""Stock moves: the ledger always sums to the quantities and nothing goes below zero."""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partsdb.limits import MAX_MOVEMENT
from partsdb.services import catalog, corrections, stock
from partsdb.services.stock import StockError
from partsdb.storage.database import open_database

PARTS = ["QA1", "QB2"]
PLACES = ["C1/D01", "C1/D02", "C2/D01/B1"]


def _catalog(session) -> None:  # type: ignore[no-untyped-def]
    for name in PARTS:
        catalog.add_device(session, {"designation": name, "kind": "bjt", "polarity": "npn",
                                     "material": "si", "vceo": "40V"})


# Quantities: small ones that exercise the ledger, and ones outside the limit (negative, zero,
# above MAX_MOVEMENT, beyond 64 bits) that the service itself must refuse, changing nothing.
quantity = st.one_of(st.integers(min_value=0, max_value=12),
                     st.integers(min_value=-(10**20), max_value=-1),
                     st.integers(min_value=MAX_MOVEMENT - 1, max_value=MAX_MOVEMENT + 1),
                     st.integers(min_value=MAX_MOVEMENT + 1, max_value=10**20))

operation = st.tuples(
    st.sampled_from(["receive", "take", "return", "move", "count"]),
    st.sampled_from(PARTS), quantity,
    st.sampled_from(PLACES), st.sampled_from(PLACES))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(operation, min_size=1, max_size=25))
def test_random_operations_keep_the_ledger_exact(tmp_path_factory, ops) -> None:  # type: ignore[no-untyped-def]
    db = open_database(tmp_path_factory.mktemp("l") / "l.sqlite", notify=None)
    with db.session() as session:
        _catalog(session)
    expected: dict[tuple[str, str], int] = {}
    for op, part, qty, a, b in ops:
        before = dict(expected)
        within = (0 if op == "count" else 1) <= qty <= MAX_MOVEMENT
        refused = False
        try:
            with db.session() as session:
                if op == "receive":
                    stock.receive(session, part, qty, a, "new")
                    expected[(part, a)] = expected.get((part, a), 0) + qty
                elif op == "take":
                    stock.take(session, part, qty, a, "new")
                    expected[(part, a)] = expected.get((part, a), 0) - qty
                elif op == "return":
                    stock.return_parts(session, part, qty, a, "new")
                    expected[(part, a)] = expected.get((part, a), 0) + qty
                elif op == "move":
                    stock.move(session, part, qty, a, b, "new")
                    expected[(part, a)] = expected.get((part, a), 0) - qty
                    expected[(part, b)] = expected.get((part, b), 0) + qty
                else:
                    stock.count(session, part, qty, a, "new")
                    expected[(part, a)] = qty
        except (StockError, catalog.NotFound):
            expected = before  # a refused operation changes nothing
            refused = True
        assert refused or within, f"{op} {qty} was accepted outside the limit"
        assert all(v >= 0 for v in expected.values())
    with db.session() as session:
        assert stock.ledger_mismatches(session) == []
        for (part, place), qty in expected.items():
            held = {v.location: v.quantity for v in stock.where(session, part)}
            assert held.get(place, 0) == qty
    db.dispose()


def test_take_more_than_stocked_changes_nothing(empty_db) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        _catalog(session)
        stock.receive(session, "QA1", 5, "C1/D01")
    with pytest.raises(StockError, match="only 5 there"), empty_db.session() as session:
        stock.take(session, "QA1", 6, "C1/D01", job="J-1")
    with empty_db.session() as session:
        assert [v.quantity for v in stock.where(session, "QA1")] == [5]
        assert len(stock.ledger(session, "QA1")) == 1
        assert stock.ledger_mismatches(session) == []


def test_quantity_cannot_go_negative_at_the_database(empty_db) -> None:  # type: ignore[no-untyped-def]
    # The CHECK constraint holds even against code that bypasses the service.
    from sqlalchemy import update
    from sqlalchemy.exc import IntegrityError

    from partsdb.storage.database import DatabaseError
    from partsdb.storage.models import LotRow

    with empty_db.session() as session:
        _catalog(session)
        stock.receive(session, "QA1", 1, "C1/D01")
    # SQLite: "CHECK constraint failed"; PostgreSQL: "violates check constraint"
    with pytest.raises(DatabaseError, match=r"(?i)check constraint") as caught, \
            empty_db.session() as session:
        session.execute(update(LotRow).values(quantity=-1))
    assert isinstance(caught.value.__cause__, IntegrityError)
    # One line of the driver's words: no SQL statement, no parameters, no link.
    assert "\n" not in str(caught.value) and "UPDATE" not in str(caught.value)
    assert "sqlalche.me" not in str(caught.value)


def test_move_and_count_and_low_stock(empty_db) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        _catalog(session)
        catalog.edit_device(session, "QA1", {"low_stock": "10"})
        stock.receive(session, "QA1", 8, "C1/D01")
        stock.move(session, "QA1", 3, "C1/D01", "C2/D01/B1")
        _, diff = stock.count(session, "QA1", 4, "C1/D01")
        assert diff == -1
        low = stock.low_stock(session)
        assert [(i.designation, i.quantity, i.threshold) for i in low] == [("QA1", 7, 10)]
        assert stock.stock_summary(session)["QA1"].locations == ["C1/D01", "C2/D01/B1"]
        assert {e.reason for e in stock.ledger(session, location="C2")} == {"move"}
        assert stock.ledger_mismatches(session) == []


def test_bad_location_and_condition(empty_db) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        _catalog(session)
    for call, message in (
            (lambda s: stock.receive(s, "QA1", 1, "C1//*"), r"location: segment '\*' of 'C1//\*'"),
            (lambda s: stock.receive(s, "QA1", 1, "C1/D1", "broken"), r"condition: 'broken'"),
            (lambda s: stock.receive(s, "QA1", 0, "C1/D1"), r"quantity: 0 .*from 1 to 1,000,000")):
        with pytest.raises(StockError, match=message), empty_db.session() as session:
            call(session)


@pytest.mark.parametrize(("held", "low"), [(9, True), (10, False), (11, False)])
def test_low_stock_mark_is_strictly_below_the_threshold(empty_db, held: int, low: bool) -> None:  # type: ignore[no-untyped-def]
    # "below their low-stock mark" (README): a drawer holding exactly the mark is not low.
    with empty_db.session() as session:
        _catalog(session)
        catalog.edit_device(session, "QA1", {"low_stock": "10"})
        stock.receive(session, "QA1", held, "C1/D01")
        found = [(i.designation, i.quantity, i.threshold) for i in stock.low_stock(session)]
        assert found == ([("QA1", held, 10)] if low else [])
        assert [v.low for v in stock.where(session, "QA1")] == [low]
        assert [v.low for v in stock.lots_at(session, "C1")] == [low]


def test_ledger_time_filters_keep_the_movements_inside_the_window(empty_db) -> None:  # type: ignore[no-untyped-def]
    from datetime import datetime

    from sqlalchemy import update

    from partsdb.storage.models import MovementRow

    with empty_db.session() as session:
        _catalog(session)
        stock.receive(session, "QA1", 5, "C1/D01", job="early")
        stock.take(session, "QA1", 2, "C1/D01", job="late")
        # place the two movements a day apart (the service stamps them with the clock)
        for job, at in (("early", datetime(2026, 3, 1, 12)), ("late", datetime(2026, 3, 2, 12))):
            session.execute(update(MovementRow).where(MovementRow.job == job).values(at=at))
    with empty_db.session() as session:
        def jobs(**window: datetime) -> list[str | None]:
            return [e.job for e in stock.ledger(session, "QA1", **window)]

        assert jobs() == ["late", "early"]
        assert jobs(since=datetime(2026, 3, 2)) == ["late"]
        assert jobs(until=datetime(2026, 3, 2)) == ["early"]
        assert jobs(since=datetime(2026, 3, 1, 12), until=datetime(2026, 3, 2, 12)) == [
            "late", "early"]  # both ends inclusive
        assert jobs(since=datetime(2026, 3, 3)) == []


def test_low_stock_counts_a_device_with_no_lots_as_empty(empty_db) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        _catalog(session)
        catalog.edit_device(session, "QA1", {"low_stock": "1"})  # marked, never stocked: low
        catalog.edit_device(session, "QB2", {"low_stock": "0"})  # a mark of 0 is never reached
        assert [(i.designation, i.quantity, i.threshold) for i in stock.low_stock(session)] == [
            ("QA1", 0, 1)]


def test_ledger_entries_in_full_newest_first_by_place(empty_db) -> None:  # type: ignore[no-untyped-def]
    from datetime import datetime

    from sqlalchemy import update

    from partsdb.storage.models import MovementRow

    with empty_db.session() as session:
        _catalog(session)
        stock.receive(session, "QA1", 5, "C1/D01", "used", job="first", note="from a tuner")
        stock.receive(session, "QA1", 2, "C1/D02", "used", job="second")
        stock.take(session, "QA1", 1, "C1/D01", job="third")
        same = datetime(2026, 3, 1, 12)
        session.execute(update(MovementRow).values(at=same))
    with empty_db.session() as session:
        # the same time stamp: the later movement (higher id) first
        assert [e.job for e in stock.ledger(session)] == ["third", "second", "first"]
        assert [e.job for e in stock.ledger(session, limit=1)] == ["third"]
        # a place is matched whatever its case, exactly or as a parent
        assert [e.job for e in stock.ledger(session, location="c1/d01")] == ["third", "first"]
        assert [e.job for e in stock.ledger(session, location="c1")] == ["third", "second", "first"]
        entry = stock.ledger(session, job="first")[0]
        assert (entry.designation, entry.location, entry.condition, entry.change, entry.reason,
                entry.note) == ("QA1", "C1/D01", "used", 5, "receive", "from a tuner")
        assert entry.id == min(e.id for e in stock.ledger(session))
        # time decides before the id: move the first movement to the latest time
        session.execute(update(MovementRow).where(MovementRow.job == "first")
                        .values(at=datetime(2026, 3, 2)))
        assert [e.job for e in stock.ledger(session)] == ["first", "third", "second"]


def test_quantities_places_and_conditions_are_read_strictly(empty_db) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        _catalog(session)
        for bad in (1.5, True):  # a part count is a whole number, and a bool is not one
            with pytest.raises(StockError, match=r"quantity: .* is not valid; expected a whole"):
                stock.receive(session, "QA1", bad, "C1/D01")  # type: ignore[arg-type]
        stock.receive(session, "QA1", 4, "C1\\D01", "new")  # a backslash reads as a slash
        stock.receive(session, "QA1", 3, "C1/D01", "used")
        # counting a lot down to 0 is allowed (0 or more), receiving 0 is not
        assert stock.count(session, "QA1", 0, "C1/D01", "new")[1] == -4
        with pytest.raises(StockError, match=r"quantity: -1 .*expected .*from 0 to 1,000,000"):
            stock.count(session, "QA1", -1, "C1/D01", "new")
        stock.take(session, "QA1", 2, "C1/D01", "used", job="J-2", note="for the tuner")
        assert {(v.location, v.condition, v.quantity) for v in stock.where(session, "QA1")} == {
            ("C1/D01", "new", 0), ("C1/D01", "used", 1)}
        assert stock.ledger(session, job="J-2")[0].note == "for the tuner"


small = st.integers(min_value=0, max_value=9)
step = st.one_of(
    st.tuples(st.sampled_from(["receive", "take", "move", "count"]), st.sampled_from(PARTS),
              small, st.sampled_from(PLACES), st.sampled_from(PLACES)),
    st.just(("undo", "", 0, "", "")))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(step, min_size=1, max_size=25))
def test_undo_reverses_the_last_movement_like_a_reversing_entry(tmp_path_factory, ops) -> None:  # type: ignore[no-untyped-def]
    """A model of reversing entries (bookkeeping practice, "common practice": a posting is
    corrected by an opposite posting, never erased): `undo` with no number reverses the newest
    operation not yet reversed whose change was not zero, or is refused, changing nothing, when
    that would take a lot below zero. The ledger only ever grows and always sums to the lots."""
    db = open_database(tmp_path_factory.mktemp("u") / "u.sqlite", notify=None)
    with db.session() as session:
        _catalog(session)
    held: dict[tuple[str, str], int] = {}
    done: list[dict[tuple[str, str], int]] = []  # effects of operations not yet undone
    entries = 0
    for op, part, qty, a, b in ops:
        effect: dict[tuple[str, str], int] = {}
        try:
            with db.session() as session:
                if op == "receive":
                    stock.receive(session, part, qty, a, "new")
                    effect = {(part, a): qty}
                elif op == "take":
                    stock.take(session, part, qty, a, "new")
                    effect = {(part, a): -qty}
                elif op == "move":
                    stock.move(session, part, qty, a, b, "new")
                    effect = {(part, a): -qty, (part, b): qty}
                elif op == "count":
                    _view, change = stock.count(session, part, qty, a, "new")
                    effect = {(part, a): change}
                else:
                    report = corrections.undo(session)
                    last = done[-1]
                    assert sorted(e.change for e in report.written) == \
                        sorted(-d for d in last.values())
                    effect = {k: -d for k, d in last.items()}
        except (StockError, catalog.NotFound) as err:
            # Refusals the model predicts: nothing to undo, or a lot would go below zero.
            if op == "undo":
                assert not done or any(held.get(k, 0) - d < 0 for k, d in done[-1].items()), err
            continue
        for key, d in effect.items():
            held[key] = held.get(key, 0) + d
        if op == "undo":
            done.pop()
            entries += len(effect)
        elif any(effect.values()):
            done.append(effect)
            entries += len(effect)
        elif op == "count":
            entries += 1  # a count that found no difference is written, with change 0
    with db.session() as session:
        assert stock.ledger_mismatches(session) == []
        assert len(stock.ledger(session)) == entries
        for (part, place), qty in held.items():
            now = {v.location: v.quantity for v in stock.where(session, part)}
            assert now.get(place, 0) == qty
    db.dispose()
