"""The live view: changes made by another process show in an open view, in place.

The outside change is made through the services on a second, separately opened Database (its
own engine and connections, as another bench or the CLI would have).
"""

from __future__ import annotations

import time
from typing import Any

from partsdb.services import catalog, stock
from partsdb.storage.database import open_database
from tui.app import build_app

SIZE = (80, 24)


async def _wait_for(pilot: Any, condition: Any, seconds: float = 3.0) -> float:
    """Let the app run until ``condition()`` holds; the time it took (fails after ``seconds``)."""
    start = time.monotonic()
    while not condition():
        assert time.monotonic() - start < seconds, "the change did not show in time"
        await pilot.pause(0.05)
    return time.monotonic() - start


async def test_outside_change_shows_on_the_selected_place_and_lot(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0.2)
    other = open_database(shop_db.url.render_as_string(hide_password=False), notify=None)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause()
            view = app.view("drawers")
            view.show_lots("C1/D1")
            await pilot.pause()
            before = app.refreshes
            with other.session() as session:
                stock.receive(session, "QX3301", 5, "C1/D1")  # 12 -> 17
            await _wait_for(pilot, lambda: app.refreshes > before)
            await pilot.pause()
            assert view.place == "C1/D1"
            assert [(lot.designation, lot.quantity) for lot in view.lots] == [("QX3301", 17)]
            # A new place from outside rebuilds the tree; the view stays where it was.
            with other.session() as session:
                stock.receive(session, "QX3302", 1, "C4/D7")
            before = app.refreshes
            await _wait_for(pilot, lambda: app.refreshes > before)
            await pilot.pause()
            await pilot.pause()
            assert view.place == "C1/D1"
            tree = view.query_one("#drawer-tree")
            assert tree.cursor_node is not None and tree.cursor_node.data == "C1/D1"
    finally:
        other.dispose()


async def test_stock_change_in_the_form_keeps_the_place(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        view = app.view("drawers")
        tree = view.query_one("#drawer-tree")
        node = next(n for n in _walk(tree.root) if n.data == "C1/D2")
        node.parent.expand()
        await pilot.pause()
        tree.move_cursor(node)
        await pilot.pause()
        assert view.place == "C1/D2"
        view.query_one("#lots-table").focus()
        await pilot.press("m")  # move QX3302 to a new place: the tree gains a node
        await pilot.pause()
        app.screen.query_one("#sf-quantity").value = "1"
        app.screen.query_one("#sf-to").value = "C5/D1"
        await pilot.press("enter")
        await pilot.pause()
        await pilot.press("y")  # C5/D1 is new: the form asks before creating it
        await pilot.pause()
        await pilot.pause()
        assert view.place == "C1/D2"
        assert tree.cursor_node is not None and tree.cursor_node.data == "C1/D2"
        assert [(lot.designation, lot.quantity) for lot in view.lots] == [("QX3302", 2)]


async def test_ctrl_l_refreshes_by_hand(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="ledger")
    other = open_database(shop_db.url.render_as_string(hide_password=False), notify=None)
    try:
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause()
            view = app.view("ledger")
            count = len(view._entries)
            with other.session() as session:
                stock.take(session, "QX5500", 2, "C2/D1", job="J-9")
                catalog.edit_device(session, "QX5500", {"low_stock": "9"})
            await pilot.pause(0.3)
            assert len(view._entries) == count  # no polling in this test
            await pilot.press("ctrl+l")
            await pilot.pause()
            assert len(view._entries) == count + 1
            assert view._entries[0].job == "J-9"
    finally:
        other.dispose()


def _walk(node: Any) -> Any:
    yield node
    for child in node.children:
        yield from _walk(child)


async def test_own_change_is_not_reported_as_made_elsewhere(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=60)  # the timer never fires here
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        view = app.view("drawers")
        view.query_one("#lots-table").focus()
        await pilot.press("t")
        await pilot.pause()
        app.screen.query_one("#sf-quantity").value = "1"
        await pilot.press("enter")
        await pilot.pause()
        assert app._watch.changed() is False  # the form's own save was absorbed
        other = open_database(shop_db.url.render_as_string(hide_password=False), notify=None)
        try:
            with other.session() as session:
                stock.take(session, "QX3301", 1, "C1/D1")
        finally:
            other.dispose()
        assert app._watch.changed() is True  # while a real outside change is not
