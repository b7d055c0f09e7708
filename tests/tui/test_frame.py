"""The app's frame: the named tab strip (number keys, clicks, function keys), the command list
in partsdb's words, Tab inside a scanner's burst, and the small workflow steps between views
(b from Substitute into Stage, the supply rule, the job a take must name). Checked through the
widgets' state and the services, pictures in test_snapshots."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from textual.widgets import ContentSwitcher, Input, Static

from partsdb.services import stock
from tests.tui.test_views import _burst, static_text
from tui.app import VIEWS, ViewTab, build_app
from tui.stock_forms import StockForm

SIZE = (80, 24)


def shown(app: Any) -> str:
    return str(app.query_one("#views", ContentSwitcher).current)


async def test_number_keys_switch_views_outside_a_text_field(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("4")  # the lots table has the focus: a number is a view key
        await pilot.pause()
        assert shown(app) == "stage"
        await pilot.press("escape", "6")  # Esc leaves the designation field, then 6
        await pilot.pause()
        assert shown(app) == "swaps"
        await pilot.press("2")
        await pilot.pause()
        assert shown(app) == "devices"
        await pilot.press("3", "3")  # in the search field a digit is typed, not a view key
        await pilot.pause()
        assert shown(app) == "devices" and app.query_one("#dev-search", Input).value == "33"
        await pilot.press("escape", "1")
        await pilot.pause()
        assert shown(app) == "drawers"
        current = [tab.ident for tab in app.query(ViewTab) if tab.has_class("-current")]
        assert current == ["drawers"]


async def test_a_click_on_a_tab_shows_its_view(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        for spec in (VIEWS[3], VIEWS[1], VIEWS[-1], VIEWS[0]):
            assert await pilot.click(f"#tab-{spec.ident}")
            await pilot.pause()
            assert shown(app) == spec.ident
            assert app.query_one(f"#tab-{spec.ident}").has_class("-current")


async def test_the_strip_names_every_view_in_order_on_one_line(shop_db: Any) -> None:
    """At 80 columns every tab is on the top line, numbered 1.. in the table's order."""
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        tabs = list(app.query(ViewTab))
        assert [str(t.content) for t in tabs] == [f"{i} {s.title}"
                                                  for i, s in enumerate(VIEWS, start=1)]
        assert all(t.region.y == 0 and t.region.width > 0 for t in tabs)
        assert tabs[-1].region.right <= SIZE[0]
        assert "Bench" not in [s.title for s in VIEWS]


async def test_command_list_holds_partsdb_commands_only(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE):
        commands = list(app.get_system_commands(app.screen))
    titles = {c.title for c in commands}
    helps = " ".join(c.help for c in commands)
    # Textual's own entries and wording are gone.
    assert not titles & {"Theme", "Quit", "Keys", "Screenshot", "Maximize", "Minimize"}
    assert "Quit the application" not in helps and "theme" not in helps.lower()
    assert {f"Show {s.title}" for s in VIEWS} | {"Close partsdb", "Refresh"} <= titles


async def test_tab_inside_a_scanner_burst_moves_to_the_next_field(shop_db: Any) -> None:
    """A scanner sends the quantity, Tab, the place, Tab, the condition in one read: each part
    lands in its own field (before, the Tab moved the focus only after the rest of the burst
    had been queued to the first field)."""
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("r")
        await pilot.pause()
        form = app.screen
        assert isinstance(form, StockForm)
        await _burst(app, pilot, ["7", "tab", "C", "9", "tab", "n", "e", "w", "tab", "J"])
        values = {i: form.query_one(f"#sf-{i}", Input).value
                  for i in ("quantity", "place", "condition", "job")}
        assert values == {"quantity": "7", "place": "C9", "condition": "new", "job": "J"}


async def test_b_carries_the_pair_into_stage_and_clears_the_old_result(shop_db: Any) -> None:
    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        stage = app.view("stage")
        await pilot.press("4")
        await pilot.pause()
        stage.fill("QX3301", "QX3302")
        stage.action_solve()
        await pilot.pause()
        assert stage.report is not None and "QX3302" in static_text(
            stage.query_one("#stage-result", Static))
        await pilot.press("escape", "3")
        await pilot.pause()
        await pilot.press(*"QX3310", "enter")
        await pilot.pause()
        sub = app.view("substitute")
        row = [c.designation for c in sub.result.candidates].index("QX3301")
        sub.query_one("#sub-table").move_cursor(row=row)
        await pilot.pause()
        await pilot.press("b")
        await pilot.pause()
        assert shown(app) == "stage"
        assert stage.query_one("#sg-original", Input).value == "QX3310"
        assert stage.query_one("#sg-substitute", Input).value == "QX3301"
        # the QX3301/QX3302 result is gone: nothing on screen belongs to another pair
        assert stage.report is None
        result = static_text(stage.query_one("#stage-result", Static))
        assert "QX3302" not in result and "Enter to solve" in result


@pytest.mark.parametrize(("vcc", "device", "solved"), [
    ("-9V", "QX5500", True),    # a PNP stage given its negative supply, as `partsdb bias` takes it
    ("9V", "QX5500", True),     # or its magnitude
    ("-9V", "QX3301", False),   # an NPN stage with a negative supply: refused, naming Vcc
    ("0V", "QX3301", False),    # no supply at all
])
async def test_stage_takes_the_supply_as_the_cli_does(shop_db: Any, vcc: str, device: str,
                                                      solved: bool) -> None:
    app = build_app(shop_db, start="stage", cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        stage = app.view("stage")
        assert "negative supply" in static_text(stage.query_one("#stage-hint", Static))
        stage.query_one("#sg-vcc", Input).value = vcc
        stage.fill(device)
        stage.action_solve()
        await pilot.pause()
        error = static_text(stage.query_one("#stage-error", Static))
        if solved:
            assert error.strip() == "" and stage.report is not None
            # the magnitude is solved: 9 V across the stage whichever sign was typed
            assert stage.report.stage.vcc == 9.0
        else:
            assert error.startswith("NOT SOLVED: Vcc:") and stage.report is None


async def test_take_one_asks_for_the_job_when_the_config_requires_it(
        shop_db: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    config = tmp_path / "config.toml"
    config.write_text("[stock]\nrequire_job = true\n", encoding="utf-8")
    monkeypatch.setenv("PARTSDB_CONFIG", str(config))
    app = build_app(shop_db, start="substitute", cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press(*"QX3301", "enter")
        await pilot.pause()
        sub = app.view("substitute")
        row = [c.designation for c in sub.result.candidates].index("QX3302")
        sub.query_one("#sub-table").move_cursor(row=row)
        await pilot.press("t")
        await pilot.pause()
        form = app.screen
        assert isinstance(form, StockForm) and form.job_required
        assert form.focused is form.query_one("#sf-job")  # the cursor waits in the job field
        await pilot.press("enter")  # no job: refused beside the field, nothing taken
        await pilot.pause()
        assert app.screen is form
        assert "require_job" in str(form.query_one("#sfe-job", Static).content)
        await pilot.press(*"J-31", "enter")
        await pilot.pause()
        assert not isinstance(app.screen, StockForm)
    with shop_db.session() as session:
        taken = [(e.reason, e.change, e.job) for e in stock.ledger(session, "QX3302")]
    assert taken[0] == ("take", -1, "J-31")


async def test_ctrl_c_and_the_command_prompt_speak_partsdb(shop_db: Any) -> None:
    """ctrl+c names the key that closes partsdb in the app's words; ctrl+p opens the command
    list with the app's own prompt."""
    from textual.command import CommandPalette

    app = build_app(shop_db, cursor_blink=False, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("ctrl+c")
        await pilot.pause()
        messages = [str(n.message) for n in app._notifications]
        assert messages == ["ctrl+q closes partsdb."]
        await pilot.press("ctrl+p")
        await pilot.pause()
        assert isinstance(app.screen, CommandPalette)
        assert app.screen.query_one(Input).placeholder.startswith("Command:")
