"""The Devices view's import action (key i): path, preview as it will be stored, then import,
through the same service as `partsdb import FILE`; pressed with Textual's pilot at 80x24. The
sheet and its parts are invented; the test checks what the UI did against the services."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from textual.widgets import Button, Static

from partsdb.services import catalog, stock
from tui.app import build_app
from tui.import_form import ImportForm

SIZE = (80, 24)
SHEET = ("Type;Polarity;Vce (V);Ic (mA);hFE;Case;Drawer;Qty\n"
         "QZ 701;NPN;45;100;110;TO92;C3/D1;7\n"
         "QZ 702;PNP;60;150;40;TO-92;C3/D2;2\n")


async def _open(app: Any, pilot: Any) -> ImportForm:
    await pilot.pause()
    app.view("devices").query_one("#dev-table").focus()
    await pilot.press("i")
    await pilot.pause()
    assert isinstance(app.screen, ImportForm)
    return app.screen


async def test_preview_then_import(shop_db: Any, tmp_path: Path) -> None:
    path = tmp_path / "sheet.csv"
    path.write_text(SHEET, encoding="utf-8")
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="devices")
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("devices")
        form = await _open(app, pilot)
        before = str(view.query_one("#dev-count", Static).content)
        await pilot.press(*str(path))
        await pilot.press("enter")
        await pilot.pause()
        preview = str(form.query_one("#imp-preview", Static).content)
        assert "Ic (mA) -> Ic max [mA]" in preview  # the label, not the key
        assert "QZ 701" in preview and "100 mA" in preview  # as it will be stored
        assert "assumed: line 2: QZ 701: Ptot ref ambient" in preview
        with shop_db.session() as session:  # the preview wrote nothing
            assert catalog.get_device(session, "QZ 701") is None
        assert not form.query_one("#ok", Button).disabled
        await pilot.press("enter")  # the Import button has the focus
        await pilot.pause()
        assert not isinstance(app.screen, ImportForm)
        await pilot.pause(0.5)
        after = str(view.query_one("#dev-count", Static).content)
        assert after != before  # the list re-read the catalog
    with shop_db.session() as session:
        device = catalog.get_device(session, "QZ 701")
        assert device is not None and device.ic_max == pytest.approx(0.1)
        assert {(v.designation, v.quantity) for v in stock.where(session, "QZ 702")} == \
            {("QZ 702", 2)}


async def test_a_refused_sheet_is_shown_and_nothing_written(shop_db: Any, tmp_path: Path) -> None:
    path = tmp_path / "bad.csv"
    path.write_text("Type,Polarity,Colour\nQZ 801,npn,red\n", encoding="utf-8")
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0, start="devices")
    async with app.run_test(size=SIZE) as pilot:
        form = await _open(app, pilot)
        await pilot.press(*str(path))
        await pilot.press("enter")
        await pilot.pause()
        message = str(form.query_one("#form-message", Static).content)
        assert "column 'Colour' matches no field" in message
        assert form.query_one("#ok", Button).disabled
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, ImportForm)
    with shop_db.session() as session:
        assert catalog.get_device(session, "QZ 801") is None
