"""Stock moves: the ledger always sums to the quantities and nothing goes below zero."""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partsdb.limits import MAX_MOVEMENT
from partsdb.services import catalog, stock
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
    with pytest.raises(DatabaseError) as caught, empty_db.session() as session:
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
    for call in (lambda s: stock.receive(s, "QA1", 1, "C1//*"),
                 lambda s: stock.receive(s, "QA1", 1, "C1/D1", "broken"),
                 lambda s: stock.receive(s, "QA1", 0, "C1/D1")):
        with pytest.raises(StockError), empty_db.session() as session:
            call(session)


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
                    report = stock.undo(session)
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
