"""The repair of the demo's failed OC375 in the terminal UI alone, pressing keys: rank in the
Substitute view, write the job sheet of the pick (j), take one (t), record the swap (w), then
set its outcome in the Swaps view (F7, o).

Checked afterwards through the services and by reading the PDF back; the stock count is the
demo's lot worked out by hand (2N9031: 5 used in C1/D02/B4, seed_data/stock.csv).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from partsdb.services import stock, swaplog
from tests.tui.test_views import static_text, type_text
from tui.app import build_app
from tui.jobsheet_form import JobSheetForm
from tui.stock_forms import StockForm
from tui.substitute import PromptForm
from tui.swaplog import OutcomeForm


async def test_failed_oc375_sheet_take_log_and_outcome(demo_db: Any, tmp_path: Path) -> None:
    from pypdf import PdfReader

    app = build_app(demo_db, start="substitute", cursor_blink=False, poll_seconds=0)
    sheet = tmp_path / "job-J-2611.pdf"
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        await type_text(pilot, "OC375")
        await pilot.press("enter")
        await pilot.pause()
        view = app.view("substitute")
        chosen = view.selected()
        assert chosen.designation == "2N9031" and chosen.verdict == "marginal"
        # The job sheet of OC375 -> 2N9031, judged under the same stress and policy.
        await pilot.press("j")
        await pilot.pause()
        assert isinstance(app.screen, JobSheetForm)
        await type_text(pilot, "J-2611")
        await pilot.press("tab")
        await type_text(pilot, str(sheet))
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, JobSheetForm)
        assert f"Job sheet written to {sheet.resolve()}" in static_text(
            view.query_one("#sub-status"))
        # Take one from its drawer (the form is filled in: 1 from C1/D02/B4).
        await pilot.press("t")
        await pilot.pause()
        assert isinstance(app.screen, StockForm)
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, StockForm)
        # Record the swap for the job.
        await pilot.press("w")
        await pilot.pause()
        assert isinstance(app.screen, PromptForm)
        await type_text(pilot, "J-2611")
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, PromptForm)
        # The Swaps view lists it first (newest first); o sets the outcome.
        await pilot.press("f7")
        await pilot.pause()
        swaps = app.view("swaps").swaps
        assert (swaps[0].original, swaps[0].substitute, swaps[0].job) == ("OC375", "2N9031",
                                                                          "J-2611")
        await pilot.press("o")
        await pilot.pause()
        assert isinstance(app.screen, OutcomeForm)
        await type_text(pilot, "worked")
        await pilot.press("enter")
        await pilot.pause()
        assert not isinstance(app.screen, OutcomeForm)
    text = PdfReader(sheet).pages[0].extract_text()
    assert "Job J-2611" in text and "OC375" in text and "2N9031" in text and "C1/D02/B4" in text
    with demo_db.session() as session:
        lots = {lot.location: lot.quantity for lot in stock.where(session, "2N9031")}
        worked = swaplog.list_swaps(session, outcome="worked", job="J-2611")
    assert lots["C1/D02/B4"] == 5 - 1 and lots["C3/D04"] == 4
    assert [(s.original, s.substitute) for s in worked] == [("OC375", "2N9031")]
