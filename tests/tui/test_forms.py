"""Forms: Escape asks before discarding, every problem listed at once, the refused field's text
selected; the Drawers title counts low devices as the CLI does. Checked through the services."""

from __future__ import annotations

from typing import Any

from textual.widgets import Input, Static

from partsdb.services import stock
from tui.app import build_app
from tui.device_form import DeviceForm
from tui.form_guard import ConfirmDiscard
from tui.stock_forms import StockForm

SIZE = (80, 24)


def _shown_errors(form: Any) -> dict[str, str]:
    return {str(box.id)[4:]: str(box.content) for box in form.query(".form-error")
            if box.has_class("shown") and box.id != "form-message"}


async def _open_take(app: Any, pilot: Any) -> StockForm:
    await pilot.pause()
    view = app.view("drawers")
    view.query_one("#lots-table").focus()
    await pilot.press("t")
    await pilot.pause()
    assert isinstance(app.screen, StockForm)
    return app.screen


async def test_escape_on_a_changed_form_asks_first(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        form = await _open_take(app, pilot)
        await pilot.press("escape")  # nothing typed: closes at once
        await pilot.pause()
        assert not isinstance(app.screen, StockForm)
        form = await _open_take(app, pilot)
        await pilot.press("2")
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmDiscard)
        await pilot.press("n")  # keep editing: the typed text is still there
        await pilot.pause()
        assert app.screen is form and form.query_one("#sf-quantity", Input).value == "2"
        await pilot.press("escape")
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert not isinstance(app.screen, (StockForm, ConfirmDiscard))


async def test_device_form_escape_asks_when_changed(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="devices")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.view("devices").action_add()
        await pilot.pause()
        assert isinstance(app.screen, DeviceForm)
        await pilot.press(*"QZ77")
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmDiscard)
        await pilot.press("y")
        await pilot.pause()
        assert not isinstance(app.screen, DeviceForm)


async def test_stock_form_lists_every_problem_and_selects_the_first(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    before = _ledger_size(shop_db)
    async with app.run_test(size=SIZE) as pilot:
        form = await _open_take(app, pilot)
        for ident, value in (("designation", ""), ("quantity", "two"), ("place", "C1//D*"),
                             ("condition", "mint")):
            form.query_one(f"#sf-{ident}", Input).value = value
        await pilot.press("enter")
        await pilot.pause()
        errors = _shown_errors(form)
        assert set(errors) == {"designation", "quantity", "place", "condition"}
        assert "expected a whole number" in errors["quantity"]
        assert "'mint' is not valid" in errors["condition"]
        assert "4 problems" in str(form.query_one("#form-message", Static).content)
        assert app.focused is form.query_one("#sf-designation", Input)
    assert _ledger_size(shop_db) == before


async def test_refused_save_selects_the_field_it_is_about(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        form = await _open_take(app, pilot)  # the first lot: QX3301, 12 at C1/D1
        quantity = form.query_one("#sf-quantity", Input)
        quantity.value = "500"
        form.query_one("#sf-note", Input).focus()
        await pilot.press("enter")
        await pilot.pause()
        assert "REFUSED" in str(form.query_one("#form-message", Static).content)
        assert app.focused is quantity
        assert quantity.selected_text == "500"
        await pilot.press(*"3", "enter")  # typing replaces the selected text
        await pilot.pause()
        assert not isinstance(app.screen, StockForm)
    with shop_db.session() as session:
        assert [v.quantity for v in stock.where(session, "QX3301")] == [9]


async def test_low_count_in_the_title_is_the_cli_count_of_devices(shop_db: Any) -> None:
    with shop_db.session() as session:  # a second lot of the low device QX3302 (3 + 1 < 5)
        stock.receive(session, "QX3302", 1, "C2/D9")
        low = stock.low_stock(session)
    assert [i.designation for i in low] == ["QX3302"]  # one device, two lots
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        view = app.view("drawers")
        assert view.low_devices == len(low) == 1
        assert "1 device LOW" in str(view.query_one("#lots-title", Static).content)
        assert sum(1 for lot in view.lots if lot.low) == 2  # what the old title counted


def _ledger_size(db: Any) -> int:
    with db.session() as session:
        return len(stock.ledger(session))


async def test_duplicate_designation_selects_the_designation(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="devices")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.view("devices").action_add()
        await pilot.pause()
        form = app.screen
        assert isinstance(form, DeviceForm)
        form.query_one("#fd-designation", Input).value = "QX3301"  # already stored
        form.query_one("#fd-notes", Input).focus()
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen is form
        field = form.query_one("#fd-designation", Input)
        assert app.focused is field and field.selected_text == "QX3301"
