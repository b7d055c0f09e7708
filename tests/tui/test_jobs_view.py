"""The Jobs view (F8): open a kit file, switch a line, take the kit, write its sheet.

Pilot tests pressing keys; checked afterwards through the services (stock, swaplog) and by
reading the written sheet back. The shop and the five-line kit are tests/kit_shop.py; every
count below is worked out by hand from its lots (QK23: 3 in C2/D05; QK24: 2 in C2/D07).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from partsdb.services import swaplog
from partsdb.storage.database import open_database
from tests.kit_shop import fill_kit_shop, held, write_kit
from tests.tui.test_views import static_text, type_text
from tui.app import build_app
from tui.jobs import LinePicker
from tui.substitute import PromptForm


def _app(tmp_path: Path) -> Any:
    db = open_database(tmp_path / "shop.sqlite", notify=None)
    fill_kit_shop(db)
    return build_app(db, start="drawers", cursor_blink=False, poll_seconds=0)


async def _open(pilot: Any, path: Path) -> Any:
    await pilot.press("f8")
    await pilot.pause()
    await type_text(pilot, str(path))
    await pilot.press("enter")
    await pilot.pause()
    return pilot.app.view("jobs")


async def test_switch_take_and_write_the_sheet(tmp_path: Path,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    from pypdf import PdfReader

    monkeypatch.chdir(tmp_path)
    kit_file = write_kit(tmp_path)
    app = _app(tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        view = await _open(pilot, kit_file)
        assert [p.part for p in view.plan.lines] == ["QK10", "QK23", "QK10", "QK23", "QK30"]
        status = static_text(view.query_one("#jb-status"))
        # 2 + 1 + 1 + 2 + 1 = 7 parts.
        assert "unit.csv: 5 lines, 7 parts to pick" in status
        # Q4 (row 4) to QK24: the picker lists QK20 (the original), QK23, QK10, QK24.
        await pilot.press("down", "down", "down", "c")
        await pilot.pause()
        assert isinstance(app.screen, LinePicker)
        names = [o.designation for o in app.screen.options]
        await pilot.press(*["down"] * (names.index("QK24") - names.index("QK23")), "enter")
        await pilot.pause()
        assert not isinstance(app.screen, LinePicker)
        assert view.plan.lines[3].part == "QK24" and view.plan.lines[3].verdict == "marginal"
        # Q2 to QK24 too: its 2 all go to Q4 now (2 - 2 = 0 left): refused in the picker.
        await pilot.press("up", "up", "c")
        await pilot.pause()
        names = [o.designation for o in app.screen.options]
        await pilot.press(*["down"] * (names.index("QK24") - names.index("QK23")), "enter")
        await pilot.pause()
        assert isinstance(app.screen, LinePicker)
        message = static_text(app.screen.query_one("#form-message"))
        assert "NOT SWITCHED" in message and "hold 0 QK24" in message
        await pilot.press("escape")
        await pilot.pause()
        assert view.plan.lines[1].part == "QK23"
        # Take: job reference asked; one transaction.
        await pilot.press("t")
        await pilot.pause()
        assert isinstance(app.screen, PromptForm)
        await type_text(pilot, "J-90")
        await pilot.press("enter")
        await pilot.pause()
        assert view.taken == "J-90"
        # A second take of the same plan is refused (no form opens).
        await pilot.press("t")
        await pilot.pause()
        assert not isinstance(app.screen, PromptForm)
        # The sheet: the job is filled in, the file name offered; Enter writes it.
        await pilot.press("s")
        await pilot.pause()
        await pilot.press("enter")
        await pilot.pause()
        written = tmp_path / "kit-J-90.pdf"
        assert f"Kit sheet written to {written}" in static_text(view.query_one("#jb-status"))
    now = held(app.db)
    assert now[("QK23", "C2/D05")] == 3 - 1 and now[("QK24", "C2/D07")] == 2 - 2
    assert now[("QK10", "C1/D01")] == 0 and now[("QK30", "C3/D01")] == 4 - 1
    with app.db.session() as session:
        swaps = swaplog.list_swaps(session, job="J-90")
    assert sorted((s.original, s.substitute) for s in swaps) == [("QK20", "QK23"),
                                                                 ("QK20", "QK24")]
    text = PdfReader(written).pages[0].extract_text()
    assert "Repair kit, job J-90" in text and "QK24" in text and "can kill" in text


async def test_a_take_the_drawers_cannot_meet_changes_nothing(tmp_path: Path) -> None:
    # Q4 needs 4 of QK20 (none held): of its fits QK23 holds 3 - 1 (Q2) = 2, QK10 holds 3,
    # QK24 holds 2; none holds 4, so Q4 is to buy.
    kit_file = write_kit(tmp_path, "Ref,Designation,Qty,Vce peak\nQ2,QK20,1,25V\nQ4,QK20,4,25V\n")
    app = _app(tmp_path)
    before = held(app.db)
    async with app.run_test(size=(80, 24)) as pilot:
        view = await _open(pilot, kit_file)
        assert [p.action for p in view.plan.lines] == ["substitute", "buy"]
        assert "1 to buy" in static_text(view.query_one("#jb-status"))
        await pilot.press("t")
        await pilot.pause()
        await type_text(pilot, "J-91")
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.screen, PromptForm)  # the refusal is shown in the form
        message = static_text(app.screen.query_one("#form-message"))
        assert "REFUSED" in message and "Q4 (QK20)" in message
        await pilot.press("escape")
        await pilot.pause()
        assert view.taken is None
    assert held(app.db) == before
    with app.db.session() as session:
        assert swaplog.list_swaps(session) == []


@pytest.mark.parametrize(("text", "words"), [
    ("Ref,Designation,Colour\nQ1,QK10,red\n", "NOT OPENED: kit file: column 'colour'"),
    ("Ref,Designation,Qty\nQ1,QK10,-2\n", "NOT OPENED: kit line 2: quantity"),
    (None, "NOT OPENED: kit file: cannot read"),
])
async def test_a_bad_kit_file_is_one_line_and_the_view_stays(tmp_path: Path, text: str | None,
                                                             words: str) -> None:
    path = write_kit(tmp_path, text) if text is not None else tmp_path / "missing.csv"
    app = _app(tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        view = await _open(pilot, path)
        status = static_text(view.query_one("#jb-status"))
        assert words in status and len(status.strip().splitlines()) <= 2
        assert view.plan is None


def test_jobs_80x24(snap_compare: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Jobs at 80x24: the five kit lines (Q2 and Q4 on QK23), the pick list by drawer, the
    caution, and the view bar with F8 Jobs."""
    monkeypatch.chdir(tmp_path)  # the file typed by its name alone: the same picture each run
    write_kit(tmp_path)

    async def open_kit(pilot: Any) -> None:
        await _open(pilot, Path("unit.csv"))

    assert snap_compare(_app(tmp_path), terminal_size=(80, 24), run_before=open_kit)
