"""Pilot tests of the five views: what the user does, checked afterwards through the services.

Each test drives the app built by the same factory as ``partsdb tui`` at 80x24, then reads the
database through :mod:`partsdb.services` (never through the widgets) to check that a change was
made, or, for refused and invalid input, that nothing changed.
"""

from __future__ import annotations

from typing import Any

import pytest
from textual.widgets import ContentSwitcher, Select, Static

from partsdb.services import catalog, stock
from tui.app import build_app
from tui.device_form import DeviceForm
from tui.help import HelpScreen
from tui.stock_forms import StockForm

SIZE = (80, 24)


def quantity_at(db: Any, designation: str, place: str) -> int:
    with db.session() as session:
        return sum(v.quantity for v in stock.where(session, designation) if v.location == place)


def ledger_size(db: Any) -> int:
    with db.session() as session:
        return len(stock.ledger(session))


def static_text(widget: Static) -> str:
    """The plain text a Static shows (Rich renderables rendered without colour)."""
    from rich.console import Console

    console = Console(width=200, record=True, color_system=None)
    console.print(widget.content if hasattr(widget, "content") else widget.renderable)
    return console.export_text()


async def type_text(pilot: Any, text: str) -> None:
    await pilot.press(*[{" ": "space"}.get(ch, ch) for ch in text])


async def test_every_view_has_its_key(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        for key, view in (("f3", "devices"), ("f4", "substitute"), ("f5", "stage"),
                          ("f6", "ledger"), ("f2", "drawers")):
            await pilot.press(key)
            await pilot.pause()
            assert app.query_one("#views", ContentSwitcher).current == view
        await pilot.press("f1")
        await pilot.pause()
        assert isinstance(app.screen, HelpScreen)
        text = static_text(app.screen.query_one("#help-text", Static))
        assert "CAUTION" in text and "can kill" in text
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, HelpScreen)


async def test_palette_lists_main_actions(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE):
        titles = {c.title for c in app.get_system_commands(app.screen)}
    assert {"Show Drawers", "Show Stage", "Stock: take", "Device: add"} <= titles


async def test_devices_search_as_you_type_and_select(shop_db: Any) -> None:
    from tui.devices import SEARCH_DEBOUNCE

    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f3")
        await app.workers.wait_for_complete()
        await pilot.pause()
        view = app.view("devices")
        assert view.table.row_count == 5  # the whole catalog, paged from the database
        index = view.index
        await type_text(pilot, "qx3302")
        await pilot.pause(SEARCH_DEBOUNCE * 3)  # fast typing: let the trailing search run
        assert view.index is index  # typing never rebuilds the index
        assert view.selected_device().designation == "QX3302"
        detail = static_text(view.query_one("#dev-detail", Static))
        assert "QX3302" in detail and "60 V" in detail and "LOW" not in detail
        await pilot.press("down")  # to the list
        await pilot.pause()
        assert app.focused is view.table


async def test_devices_filters_suspect_and_polarity(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f3")
        await pilot.pause()
        view = app.view("devices")
        view.query_one("#f-polarity", Select).value = "pnp"
        await pilot.pause()
        shown = {view.table.source.device(i).designation for i in range(view.table.row_count)}
        assert shown == {"QX5500", "AC987"}
        view.query_one("#f-suspect", Select).value = True
        await pilot.pause()
        shown = {view.table.source.device(i).designation for i in range(view.table.row_count)}
        # AC987 is a Pro Electron "A" (germanium) name stored as silicon: the consistency
        # check marks it (Pro Electron first letter A = germanium; see partsdb/consistency.py).
        assert shown == {"AC987"}


async def test_add_device_with_bad_unit_then_good(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f3")
        await pilot.pause()
        app.view("devices").table.focus()
        await pilot.press("a")
        await pilot.pause()
        form = app.screen
        assert isinstance(form, DeviceForm)
        await type_text(pilot, "QX7777")
        form.query_one("#fd-vceo").value = "40Q"  # not a voltage
        form.query_one("#fd-ic_max").value = "200mA"
        await pilot.pause()
        assert "Vceo: " in static_text(form.query_one("#err-vceo", Static))  # label, not key
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen is form  # still open, nothing saved
        assert "Not saved" in static_text(form.query_one("#form-message", Static))
        with shop_db.session() as session:
            assert catalog.get_device(session, "QX7777") is None
        form.query_one("#fd-vceo").value = "40V"
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen is not form
        with shop_db.session() as session:
            saved = catalog.get_device(session, "QX7777")
        assert saved is not None and saved.vceo == 40.0 and saved.ic_max == 0.2


async def test_edit_device_bad_unit_changes_nothing(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f3")
        await pilot.pause()
        view = app.view("devices")
        view.table.focus()
        view.table.move_to(1)  # QX3301 (key order: AC987, QX3301, ...)
        await pilot.pause()
        assert view.selected_device().designation == "QX3301"
        await pilot.press("e")
        await pilot.pause()
        form = app.screen
        form.query_one("#fd-ic_max").value = "lots"
        form.query_one("#fd-vceo").value = "50V"
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen is form
        assert "Ic max: " in static_text(form.query_one("#err-ic_max", Static))
        await pilot.press("escape")
        await pilot.pause()
    with shop_db.session() as session:
        device = catalog.get_device(session, "QX3301")
    assert device.vceo == 45.0 and device.ic_max == 0.1  # as stored by the fixture


async def _open_lot(app: Any, pilot: Any, designation: str) -> Any:
    await pilot.pause()
    view = app.view("drawers")
    row = next(i for i, lot in enumerate(view.lots) if lot.designation == designation)
    view.query_one("#lots-table").move_cursor(row=row)
    view.query_one("#lots-table").focus()
    await pilot.pause()
    return view


async def _submit(app: Any, pilot: Any, key: str, values: dict[str, str]) -> StockForm:
    await pilot.press(key)
    await pilot.pause()
    form = app.screen
    assert isinstance(form, StockForm)
    for ident, value in values.items():
        form.query_one(f"#sf-{ident}").value = value
    await pilot.press("enter")
    await pilot.pause()
    return form


async def test_stock_actions_receive_take_return_move_count(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3301")
        await _submit(app, pilot, "r", {"quantity": "8"})
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 20
        await _submit(app, pilot, "t", {"quantity": "5", "job": "J-100"})
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 15
        await _submit(app, pilot, "u", {"quantity": "2"})
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 17
        await _submit(app, pilot, "m", {"quantity": "7", "to": "C3/D9"})
        await pilot.press("y")  # C3/D9 is new: the form asks before creating it
        await pilot.pause()
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 10
        assert quantity_at(shop_db, "QX3301", "C3/D9") == 7
        await _open_lot(app, pilot, "QX3301")
        view = await _open_lot(app, pilot, "QX3301")
        await _submit(app, pilot, "c", {"quantity": "9", "place": "C1/D1"})
        assert quantity_at(shop_db, "QX3301", "C1/D1") == 9
        # The list shows the result at once.
        shown = {(lot.location, lot.quantity) for lot in view.lots if lot.designation == "QX3301"}
        assert ("C1/D1", 9) in shown and ("C3/D9", 7) in shown
        with shop_db.session() as session:
            jobs = [e.job for e in stock.ledger(session, "QX3301") if e.reason == "take"]
        assert jobs == ["J-100"]


async def test_refused_take_shows_message_and_changes_nothing(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3302")
        before, entries = quantity_at(shop_db, "QX3302", "C1/D2"), ledger_size(shop_db)
        form = await _submit(app, pilot, "t", {"quantity": "4", "job": "J-7"})
        assert app.screen is form
        message = static_text(form.query_one("#form-message", Static))
        assert "REFUSED" in message and "only 3" in message
        # Bad quantities never reach the service.
        for bad in ("-2", "0", "two", "1.5"):
            form.query_one("#sf-quantity").value = bad
            await pilot.press("enter")
            await pilot.pause()
            assert "quantity" in static_text(form.query_one("#form-message", Static))
    assert quantity_at(shop_db, "QX3302", "C1/D2") == before == 3
    assert ledger_size(shop_db) == entries


async def test_low_stock_mark_is_a_word(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = await _open_lot(app, pilot, "QX3302")
        table = view.query_one("#lots-table")
        row = next(i for i, lot in enumerate(view.lots) if lot.designation == "QX3302")
        assert str(table.get_row_at(row)[4]) == "LOW"  # 3 in stock, low-stock mark 5


async def test_substitute_search_then_take_one(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f4")
        await pilot.pause()
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        view = app.view("substitute")
        names = [c.designation for c in view.result.candidates]
        assert "QX3301" not in names and "QX5500" not in names  # itself; wrong polarity
        assert "QX3302" in names
        caution = static_text(view.query_one("#sub-caution", Static))
        assert "can kill" in caution
        row = names.index("QX3302")
        view.query_one("#sub-table").move_cursor(row=row)
        await pilot.pause()
        detail = static_text(view.query_one("#sub-detail", Static))
        # EBC vs CBE: the pinout check is marginal and says which lead goes where.
        # Engineering labels, never code keys (Vceo, Ic max).
        assert "Vceo" in detail and "Ic max" in detail and "ic_max" not in detail
        assert "MARGINAL Pinout: re-form leads" in detail
        assert "lead" in detail
        await pilot.press("t")
        await pilot.pause()
        assert isinstance(app.screen, StockForm)
        assert app.screen.query_one("#sf-quantity").value == "1"
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, StockForm)
    assert quantity_at(shop_db, "QX3302", "C1/D2") == 2


async def test_substitute_bad_stress_is_reported(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f4")
        await pilot.pause()
        view = app.view("substitute")
        view.query_one("#ss-vce_peak").value = "12 A"
        await type_text(pilot, "QX3301")
        await pilot.press("enter")
        await pilot.pause()
        assert "NOT RANKED" in static_text(view.query_one("#sub-status", Static))


async def test_stage_swap_matches_the_bias_library(shop_db: Any) -> None:
    from partsdb.bias import Stage, params_from_device, predict_swap

    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("f5")
        await pilot.pause()
        await type_text(pilot, "QX3301")
        await pilot.press("tab")
        await type_text(pilot, "QX3302")
        await pilot.press("enter")
        await pilot.pause()
        view = app.view("stage")
        report = view.report
        text = static_text(view.query_one("#stage-result", Static))
        caution = static_text(view.query_one("#stage-caution", Static))
    assert report is not None and report.substitute is not None
    # The view shows what the library computes for the same stage typed as 47k, 10k, 2k2, 470.
    with shop_db.session() as session:
        a, b = catalog.get_device(session, "QX3301"), catalog.get_device(session, "QX3302")
    expected = predict_swap(Stage("divider", 12.0, 2200.0, 470.0, r1=47e3, r2=10e3),
                            params_from_device(a), params_from_device(b))
    assert report.original.point.ic == expected.original.point.ic
    assert report.substitute.point.ic == expected.substitute.point.ic
    assert "Swap shifts Ic" in text and "can kill" in caution  # the caution stays in sight


async def test_stage_bad_resistor_is_inline(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f5")
        await pilot.pause()
        view = app.view("stage")
        view.query_one("#sg-r2").value = "10x"
        await type_text(pilot, "QX3301")
        await pilot.press("enter")
        await pilot.pause()
        assert "NOT SOLVED" in static_text(view.query_one("#stage-error", Static))
        assert view.report is None


async def test_stage_takes_kelvin_and_refuses_ambient_above_tj_max(shop_db: Any) -> None:
    # 318 K = 44.85 °C (SI Brochure, 9th ed., 2.3.1); at or above Tj max nothing is solved.
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("f5")
        await pilot.pause()
        view = app.view("stage")
        view.query_one("#sg-ambient").value = "318K"
        await type_text(pilot, "QX3301")
        await pilot.press("tab")
        await type_text(pilot, "QX3302")
        await pilot.press("enter")
        await pilot.pause()
        assert view.report is not None
        assert "44.85 °C" in static_text(view.query_one("#stage-result", Static))
        assert view.report.fix is not None
        assert "hFE min" in static_text(view.query_one("#stage-result", Static))
        view.report = None
        view.query_one("#sg-ambient").value = "400"
        await pilot.press("enter")
        await pilot.pause()
        assert "NOT SOLVED" in static_text(view.query_one("#stage-error", Static))
        assert "ambient" in static_text(view.query_one("#stage-error", Static))
        assert view.report is None


async def test_ledger_filters(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f6")
        await pilot.pause()
        view = app.view("ledger")
        table = view.query_one("#ledger-table")
        assert table.row_count == ledger_size(shop_db)
        await type_text(pilot, "QX5500")
        await pilot.pause()
        assert table.row_count == 1
        # The highlighted movement is spelled out in full under the table (a narrow terminal
        # cuts the table's note column).
        with shop_db.session() as session:
            (entry,) = stock.ledger(session, "QX5500")
        detail = static_text(view.query_one("#ledger-detail", Static))
        assert "QX5500" in detail and entry.reason in detail and entry.location in detail
        assert entry.note and entry.note in " ".join(detail.split())
        view.query_one("#lg-since").value = "31/12/2024"
        await pilot.pause()
        assert "FILTER" in static_text(view.query_one("#ledger-status", Static))
        view.query_one("#lg-since").value = "2000-01-01"
        view.query_one("#lg-device").value = "NOPE123"
        await pilot.pause()
        assert "not found" in static_text(view.query_one("#ledger-status", Static))


async def _burst(app: Any, pilot: Any, keys: list[str]) -> None:
    """Queue every key before the app handles the first: what tmux does when a person types
    right after a view key (both arrive in one read)."""
    from textual import events

    for key in keys:
        event = events.Key(key, key if len(key) == 1 else None)
        event.set_sender(app)
        app._driver.send_message(event)
    await pilot.pause()


async def test_typing_right_after_a_view_key_keeps_the_first_character(shop_db: Any) -> None:
    """F3 or F4 followed at once by text: every character lands in the new view's field."""
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        for _ in range(2):  # the first time each view is shown, and again
            await _burst(app, pilot, ["f3", "q", "x"])
            assert app.query_one("#dev-search").value == "qx"
            await _burst(app, pilot, ["f4", "q", "x"])
            assert app.query_one("#sub-query").value == "qx"
            await _burst(app, pilot, ["f2"])
            # nothing typed went into the Devices field while Substitute was shown
            assert app.query_one("#dev-search").value == "qx"


async def test_view_keys_wait_while_a_form_is_open(shop_db: Any) -> None:
    """F4 over the add-device form does not switch views under it (the input would be lost)."""
    app = build_app(shop_db, start="devices", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.view("devices").table.focus()
        await pilot.press("a")
        await pilot.pause()
        assert isinstance(app.screen, DeviceForm)
        await pilot.press("f4")
        await pilot.pause()
        assert isinstance(app.screen, DeviceForm)
        assert app.query_one("#views", ContentSwitcher).current == "devices"


async def test_fast_typing_runs_few_searches_and_ends_on_the_last_text(shop_db: Any) -> None:
    """Keys faster than the debounce: at most two searches (first key, end of the burst), and
    the list shows the hit for the whole text."""
    from tui.devices import SEARCH_DEBOUNCE

    app = build_app(shop_db, start="devices", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("devices")
        await app.workers.wait_for_complete()  # the shared index is built after the first paint
        await pilot.pause()
        assert view.index is not None
        before = view.searches_run
        await _burst(app, pilot, [*"qx3310"])
        await pilot.pause(SEARCH_DEBOUNCE * 3)  # let the burst's trailing search run
        await pilot.pause()
        assert view.searches_run - before <= 2
        assert view.table.source.device(0).designation == "QX3310"
        assert "QX3310" in static_text(view.query_one("#dev-detail", Static))


async def test_search_typed_before_the_index_is_ready_runs_when_it_is(shop_db: Any) -> None:
    """While the index is building the count says so; the search then runs on what was typed."""
    app = build_app(shop_db, start="devices", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await app.workers.wait_for_complete()
        view = app.view("devices")
        app.catalog_index.invalidate()  # as after an edit,
        app.catalog_index.building = True  # with the rebuild still running
        await type_text(pilot, "qx5500")
        await pilot.pause()
        assert "indexing" in static_text(view.query_one("#dev-count", Static))
        app.catalog_index.building = False
        app.build_index()
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert view.table.source.device(0).designation == "QX5500"
        assert "match" in static_text(view.query_one("#dev-count", Static))


async def test_paging_keeps_cursor_and_detail_in_step(shop_db: Any) -> None:
    """End, Page Up and Home move the cursor over the paged list; the detail follows the
    cursor once it rests."""
    from tui.devices import DETAIL_DEBOUNCE

    app = build_app(shop_db, start="devices", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        view = app.view("devices")
        view.table.focus()
        await pilot.press("end", "pageup", "end")
        await pilot.pause(DETAIL_DEBOUNCE * 3)
        await pilot.pause()
        last = view.table.row_count - 1
        assert view.table.cursor == last
        shown = view.table.source.device(last).designation
        assert view.selected_device().designation == shown
        assert static_text(view.query_one("#dev-detail", Static)).startswith(shown)
        await pilot.press("home")
        await pilot.pause(DETAIL_DEBOUNCE * 3)
        assert view.table.cursor == 0


async def test_substitute_detail_shows_each_problem_once(shop_db: Any) -> None:
    """Every problem of the selected candidate is in the detail once; no flag copies a note."""
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f4")
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        view = app.view("substitute")
        for c in view.result.candidates:
            notes = {k.note for k in c.checks}
            assert not any(f.message in notes for f in c.flags)
        row = [c.designation for c in view.result.candidates].index("QX3302")
        view.query_one("#sub-table").move_cursor(row=row)
        await pilot.pause()
        detail = static_text(view.query_one("#sub-detail", Static)).replace("\n", " ")
        problems = view.result.candidates[row].problems()
        assert problems
        for problem in problems:
            assert detail.count(problem.note[:40]) == 1


async def test_spec_field_starts_empty_with_an_example_hint(shop_db: Any) -> None:
    """The spec field holds no value until typed; its placeholder reads as an example."""
    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE):
        spec = app.query_one("#sub-spec")
        assert spec.value == ""
        assert spec.placeholder.startswith("optional") and "e.g." in spec.placeholder


async def test_substitute_offers_every_stress_the_cli_offers(shop_db: Any) -> None:
    """One input per bipolar stress row (frequency and heat sink included), read into the
    ranking; the field-effect rows are hidden for a bipolar original."""
    from partsdb.ranking import Stress
    from partsdb.spec_fields import STRESS_FIELDS, stresses_for

    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("substitute")
        typed = {"vce_peak": "18V", "veb_peak": "6V", "ic_peak": "50mA", "power": "100mW", "ambient": "40",
                 "freq": "20kHz", "heatsink": "5"}
        assert set(typed) == {row.name for row in stresses_for("bjt")}
        hidden = {row.name for row in STRESS_FIELDS} - set(typed)
        assert hidden == {"vds_peak", "id_peak", "drive", "fsw", "gate_current"}
        assert not any(app.query_one(f"#ss-{name}").display for name in hidden)
        for name, text in typed.items():
            app.query_one(f"#ss-{name}").focus()
            await type_text(pilot, text)
        app.query_one("#sub-query").focus()
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        assert view.result.stress == Stress(vce_peak=18.0, veb_peak=6.0, ic_peak=0.05, power=0.1,
                                            ambient=40.0, freq=2e4, heatsink=5.0)
        # The frequency sets the fT need by gain-bandwidth (hFE min x f).
        ft = view.result.candidates[0].check("ft")
        assert ft.need == pytest.approx(view.result.requirement.hfe_min * 2e4)


async def test_a_fet_original_shows_the_fet_stress_inputs(shop_db: Any) -> None:
    """Ranking a MOSFET original shows the FET stress inputs and hides the bipolar ones; the
    drive typed there reaches the ranking (the overdrive rule: 5 V against a part specified at
    10 V with Vgs(th) max 4 V is under-rated)."""
    from partsdb.spec_fields import stresses_for

    with shop_db.session() as session:
        for name in ("HX-A1", "HX-A2"):
            catalog.add_device(session, {
                "designation": name, "kind": "mosfet", "polarity": "n", "material": "si",
                "vds": "100V", "id_max": "20A", "rds_on": "0.1", "rds_on_vgs": "10V",
                "vgs_th_max": "4V", "package": "TO-220", "pinout": "GDS"})
    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("substitute")
        app.query_one("#sub-query").focus()
        await type_text(pilot, "HX-A1")
        await pilot.press("enter")
        await pilot.pause()
        assert view.result.requirement.kind == "mosfet"
        fet_rows = {row.name for row in stresses_for("mosfet")}
        assert app.query_one("#ss-drive").display and app.query_one("#ss-id_peak").display
        assert not app.query_one("#ss-vce_peak").display
        assert not app.query_one("#ss-freq").display
        assert {"drive", "vds_peak", "id_peak", "fsw", "gate_current"} <= fet_rows
        app.query_one("#ss-drive").focus()
        await type_text(pilot, "5V")
        await pilot.press("enter")
        await pilot.pause()
        assert view.result.stress.drive == 5.0
        assert view.result.candidates[0].check("drive").status == "under-rated"
        # back to a bipolar original: the drive is cleared and hidden, the ranking runs
        app.query_one("#sub-query").focus()
        await pilot.press("ctrl+a", "ctrl+k")
        app.query_one("#sub-query").value = ""
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        assert view.result.requirement.kind != "mosfet" and view.result.stress.drive is None
        assert not app.query_one("#ss-drive").display and app.query_one("#ss-vce_peak").display


async def test_log_swap_under_read_only_is_a_message_not_a_crash(shop_db: Any,
                                                                 tmp_path: Any) -> None:
    """Issue 14 item 12: `w` (log swap) on a read-only database says so and the app runs on;
    the swap log stays empty (checked through the service afterwards)."""
    from partsdb.services import swaplog
    from partsdb.storage.database import open_database

    path = shop_db.url.database
    shop_db.dispose()
    ro = open_database(path, read_only=True, notify=None)
    app = build_app(ro, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f4")
        await pilot.pause()
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        await pilot.press("w")
        await pilot.pause()
        assert app.is_running
        notes = [n.message for n in app._notifications]
        assert any("read-only" in m for m in notes), notes
    with ro.session() as session:
        assert swaplog.list_swaps(session) == []
    ro.dispose()


async def test_hostile_quantities_in_the_stock_form_are_refused_and_the_app_keeps_running(
        shop_db: Any) -> None:
    """issue 14 item 4: "inf", "1e309" and 20 digits once ended the TUI with a traceback."""
    app = build_app(shop_db, cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await _open_lot(app, pilot, "QX3302")
        before, entries = quantity_at(shop_db, "QX3302", "C1/D2"), ledger_size(shop_db)
        form = await _submit(app, pilot, "r", {"quantity": "inf"})
        for bad in ("inf", "1e309", "99999999999999999999", "9223372036854775808", "1000001"):
            form.query_one("#sf-quantity").value = bad
            await pilot.press("enter")
            await pilot.pause()
            assert app.screen is form and app.is_running
            # Refused before the service is called: the form's problem list (issue 16 item 7)
            # says so, and the quantity's own line names the limit.
            message = static_text(form.query_one("#form-message", Static))
            assert "Not done" in message and "quantity" in message
            assert "1,000,000" in static_text(form.query_one("#sfe-quantity", Static))
    assert quantity_at(shop_db, "QX3302", "C1/D2") == before
    assert ledger_size(shop_db) == entries


async def test_substitute_list_shows_confidence_and_the_order(shop_db: Any) -> None:
    """Issue 13: the list shows each candidate's confidence; the detail names the order and the
    score's largest gains and losses; `--heatsink free-air` is accepted as typed."""
    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("substitute")
        app.query_one("#ss-heatsink").focus()
        await type_text(pilot, "free-air")
        app.query_one("#sub-query").focus()
        await type_text(pilot, "qx3301")
        await pilot.press("enter")
        await pilot.pause()
        assert view.result.stress.free_air
        table = view.query_one("#sub-table")
        labels = [str(col.label) for col in table.columns.values()]
        assert "Known" in labels
        known = labels.index("Known")
        for row, c in enumerate(view.result.candidates):
            assert str(table.get_row_at(row)[known]) == f"{c.confidence:.0%}"
        status = static_text(view.query_one("#sub-status", Static))
        assert "verdict first, then score" in status
        detail = static_text(view.query_one("#sub-detail", Static))
        gains, _ = view.result.candidates[0].gains_and_losses()
        assert f"+{gains[0][1]:.0f}" in detail


async def test_spec_ptot_without_its_reference_is_refused(shop_db: Any) -> None:
    """Issue 13: a spec giving Ptot must say whether it is a free-air or a case rating."""
    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        view = app.view("substitute")
        app.query_one("#sub-spec").focus()
        await type_text(pilot, "polarity=npn ptot=40W")
        await pilot.press("enter")
        await pilot.pause()
        status = static_text(view.query_one("#sub-status", Static))
        assert "Ptot ref" in status and "ptot_ref" not in status and view.result is None


async def test_a_view_built_on_its_first_show_keeps_what_is_typed_meanwhile(
        shop_db: Any, monkeypatch: pytest.MonkeyPatch) -> None:
    """Only the start view is built at start; with the others not built in the background
    (as on a slow machine), F3 builds Devices on the spot and the keys typed at once land in
    its field, none in the view left."""
    from tui.app import PartsdbApp

    monkeypatch.setattr(PartsdbApp, "_build_next_view", lambda self: None)
    app = build_app(shop_db, start="substitute", cursor_blink=False)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert app.built == {"substitute"} and not app.query("#devices")
        await _burst(app, pilot, ["f3", "q", "x"])
        await pilot.pause()
        assert app.query_one("#dev-search").value == "qx"
        assert app.query_one("#sub-query").value == ""
        assert "devices" in app.built
