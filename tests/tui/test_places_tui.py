"""Pilot tests of issue 16 in the TUI: a stock form asks before creating an unknown place,
"undo last movement" asks with what it reverses, place labels show in the Drawers tree, and
the reorder list opens as a panel. Results are read back through the services."""

from __future__ import annotations

from typing import Any

from textual.widgets import Static, Tree

from partsdb.services import places, stock
from tests.tui.test_views import SIZE, _open_lot, _submit, ledger_size, quantity_at, static_text
from tui.app import build_app
from tui.form_guard import Confirm
from tui.reorder import ReorderScreen
from tui.stock_forms import StockForm


async def test_receive_into_unknown_place_asks_and_back_changes_nothing(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3301")
        entries = ledger_size(shop_db)
        form = await _submit(app, pilot, "r", {"quantity": "2", "place": "C1/D7"})
        assert isinstance(app.screen, Confirm)
        question = static_text(app.screen.query_one("#confirm-question", Static))
        assert "C1/D7 does not exist" in question and "Closest: C1/D1" in question
        await pilot.press("n")
        await pilot.pause()
        assert app.screen is form
        assert "REFUSED: unknown place C1/D7" in static_text(form.query_one("#form-message",
                                                                           Static))
        assert ledger_size(shop_db) == entries
        with shop_db.session() as session:
            assert stock.find_location(session, "C1/D7") is None
        # Same place typed as c1/d01: it is C1/D1, no question asked.
        form.query_one("#sf-place").value = "c1/d01"
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, StockForm | Confirm)
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 14


async def test_receive_into_unknown_place_created_on_yes(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3301")
        await _submit(app, pilot, "r", {"quantity": "2", "place": "C1/D7"})
        assert isinstance(app.screen, Confirm)
        await pilot.press("y")
        await pilot.pause()
        assert quantity_at(shop_db, "QX3301", "C1/D7") == 2


async def test_undo_last_movement_confirms_what_it_reverses(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3301")
        await _submit(app, pilot, "t", {"quantity": "5", "job": "J-7"})
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 7
        entries = ledger_size(shop_db)
        await pilot.press("z")
        await pilot.pause()
        assert isinstance(app.screen, Confirm)
        question = static_text(app.screen.query_one("#confirm-question", Static))
        assert "take -5 QX3301 at C1/D1" in question
        await pilot.press("n")  # declined: nothing written
        await pilot.pause()
        assert ledger_size(shop_db) == entries
        await pilot.press("z")
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 12
        with shop_db.session() as session:
            newest = stock.ledger(session, limit=1)[0]
        assert (newest.reason, newest.change, newest.job) == ("undo", 5, "J-7")


async def test_labels_in_tree_and_reorder_panel(shop_db: Any) -> None:
    with shop_db.session() as session:
        places.set_label(session, "C1/D2", "Ge PNP")
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = await _open_lot(app, pilot, "QX3302")
        tree = view.query_one("#drawer-tree", Tree)
        shown = [str(node.label) for node in tree.root.children[0].children]
        assert "D2 Ge PNP" in shown
        await pilot.press("o")
        await pilot.pause()
        assert isinstance(app.screen, ReorderScreen)
        # QX3302: 3 held, low-stock count 5, target 2 x 5 -> buy 7 (issue 16 item 4).
        assert [(x.designation, x.to_buy) for x in app.screen.lines] == [("QX3302", 7)]
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, ReorderScreen)


async def test_lot_edit_changes_condition_and_note_in_the_ledger(shop_db: Any) -> None:
    from tui.lot_edit import LotEditForm

    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3301")
        await pilot.press("e")
        await pilot.pause()
        form = app.screen
        assert isinstance(form, LotEditForm)
        form.query_one("#le-condition").value = "mint"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen is form  # refused: not a condition
        assert "condition" in static_text(form.query_one("#form-message", Static))
        form.query_one("#le-condition").value = "nos"
        form.query_one("#le-note").value = "1971 date code"
        await pilot.press("enter")
        await pilot.pause()
        assert app.screen is not form
    with shop_db.session() as session:
        [lot] = stock.where(session, "QX3301")
        assert (lot.condition, lot.note, lot.quantity) == ("nos", "1971 date code", 12)
        edits = [e for e in stock.ledger(session, "QX3301") if e.reason == "edit"]
        assert len(edits) == 2 and all(e.change == 0 for e in edits)
        assert stock.ledger_mismatches(session) == []
