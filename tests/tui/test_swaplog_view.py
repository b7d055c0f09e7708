"""The Swap log view (F7): list, filter, set an outcome through the form, audit findings marked.

Checked against what the swaplog service reports afterwards; the data is invented (conftest).
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path
from typing import Any

from partsdb.services import swaplog
from partsdb.storage.database import Database
from partsdb.storage.models import SwapRow
from tests.tui.conftest import build_small_shop
from tui.app import build_app


def _shop_with_swaps(path: Path) -> Database:
    """Three swaps on fixed days; the last one's recorded stress (200 V on a 45 V part) is what
    the audit must mark (Vce peak over the workshop policy's 80 % of Vceo, common practice)."""
    db = build_small_shop(path)
    with db.session() as session:
        ids = [swaplog.add(session, "QX3310", "QX3301", "J-100", outcome="worked").id,
               swaplog.add(session, "QX3310", "QX3302", "J-101").id,
               swaplog.add(session, "OLD9", "QX3301", "J-102", vce_peak=200.0).id]
        for swap_id, day in zip(ids, (3, 10, 17), strict=True):
            session.get(SwapRow, swap_id).at = datetime(2026, 3, day, 12, 0)
    return db


def _app(tmp_path: Path) -> Any:
    return build_app(_shop_with_swaps(tmp_path / "shop.sqlite"), start="drawers",
                     cursor_blink=False, poll_seconds=0)


async def test_list_filter_and_audit_mark(tmp_path: Path) -> None:
    app = _app(tmp_path)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.press("f7")
        await pilot.pause()
        view = app.view("swaps")
        assert [s.job for s in view.swaps] == ["J-102", "J-101", "J-100"]
        assert set(view.findings) == {view.swaps[0].id}
        await pilot.click("#sw-job")
        await pilot.press(*"J-101")
        await pilot.pause()
        assert [s.job for s in view.swaps] == ["J-101"]
        await pilot.press(*["backspace"] * 5)
        await pilot.click("#sw-since")
        await pilot.press(*"2026-03-10")
        await pilot.pause()
        assert [s.job for s in view.swaps] == ["J-102", "J-101"]
        await pilot.press("x")  # "2026-03-10x": refused beside the filters, list kept
        await pilot.pause()
        assert "from: '2026-03-10x' is not valid" in str(app.query_one("#swaps-status").render())
        assert [s.job for s in view.swaps] == ["J-102", "J-101"]


async def test_set_outcome_through_the_form(tmp_path: Path) -> None:
    app = _app(tmp_path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f7")
        await pilot.pause()
        await pilot.press("down")  # J-101, no outcome yet
        await pilot.press("o")
        await pilot.pause()
        await pilot.press(*"failed", "tab", *"ran hot", "enter")
        await pilot.pause()
        with app.db.session() as session:
            (swap,) = swaplog.list_swaps(session, job="J-101")
        assert (swap.outcome, swap.note) == ("failed", "ran hot")
        assert app.view("swaps").swaps[1].outcome == "failed"
        # A word that is not an outcome stays in the form with the field's problem beside it.
        await pilot.press("o")
        await pilot.pause()
        await pilot.press(*["backspace"] * 6, *"maybe", "enter")
        await pilot.pause()
        assert "outcome: 'maybe'" in str(app.screen.query_one("#ofe-outcome").render())
        await pilot.press("escape")
        with app.db.session() as session:
            assert swaplog.list_swaps(session, job="J-101")[0].outcome == "failed"


def test_swaps_80x24(snap_compare: Any, tmp_path: Path) -> None:
    """Swap log at 80 columns: the filters, three swaps, J-102 marked ! with its audit line."""
    assert snap_compare(_app(tmp_path), terminal_size=(80, 24), press=["f7"])


def test_swaps_120x40(snap_compare: Any, tmp_path: Path) -> None:
    """Swap log at 120x40: every column, the ! mark on J-102 and the audit's reason below."""
    assert snap_compare(_app(tmp_path), terminal_size=(120, 40), press=["f7"])
