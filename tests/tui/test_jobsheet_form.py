"""From the stage calculator to a written job sheet (ctrl+s), checked by reading the PDF back."""

from __future__ import annotations

from pathlib import Path

from tests.tui.conftest import build_small_shop
from tui.app import build_app


async def test_stage_calculator_writes_the_job_sheet(tmp_path: Path) -> None:
    from pypdf import PdfReader

    app = build_app(build_small_shop(tmp_path / "shop.sqlite"), start="stage",
                    cursor_blink=False, poll_seconds=0)
    out = tmp_path / "job-5.pdf"
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        app.view("stage").fill("QX3310", "QX3301")
        await pilot.click("#sg-solve")
        await pilot.pause()
        assert app.view("stage").report.substitute is not None
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press(*"J-5", "tab", *str(out), "enter")
        await pilot.pause()
        assert out.exists()
        # The same file again is refused (the one file writer), shown in the form.
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press(*"J-5", "tab", *str(out), "enter")
        await pilot.pause()
        assert "exists" in str(app.screen.query_one("#form-message").render())
    text = PdfReader(out).pages[0].extract_text()
    assert "Job J-5" in text and "QX3310" in text and "QX3301" in text
    # The calculator's stage (its initial divider: Vcc 12 V, R1 47k, R2 10k) is on the sheet.
    assert "Stage: divider, Vcc 12 V, R1 47 k" in text
