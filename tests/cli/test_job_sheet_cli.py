"""``partsdb substitute ORIGINAL --pick CANDIDATE --job REF``: the one-page job sheet.

Checked through the library (the stock service's drawers, the ranking's checks) and, for the
PDF, by reading its text back with pypdf and rendering it with poppler's pdftoppm.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import stock
from partsdb.services.jobsheet import parse_stage

STAGE = "divider --vcc 9V --r1 47k --r2 10k --rc 2k2 --re 470"


@pytest.fixture
def run(demo_db: Any):  # type: ignore[no-untyped-def]
    runner = CliRunner()
    url = str(demo_db.url)

    def invoke(*args: str):  # type: ignore[no-untyped-def]
        return runner.invoke(main, ["--quiet", "--db", url, *args], catch_exceptions=False)

    invoke.db = demo_db  # type: ignore[attr-defined]
    return invoke


def _drawers(db: Any, designation: str) -> list[tuple[str, int]]:
    with db.session() as session:
        return [(lot.location, lot.quantity) for lot in stock.where(session, designation)
                if lot.quantity > 0]


def test_markdown_sheet_is_one_pick_with_its_drawers_leads_and_stage(run) -> None:  # type: ignore[no-untyped-def]
    result = run("substitute", "OC375", "--pick", "2SB8117", "--job", "J-2611",
                 "--stage", STAGE)
    assert result.exit_code == 0, result.output
    text = result.stdout  # the sheet; the under-rated warning goes to stderr
    assert text.startswith("# Job sheet J-2611: OC375 -> 2SB8117")
    assert result.stderr.startswith("warning: 2SB8117 is under-rated for OC375")
    # One candidate only: no other designation of the ranking appears in a row.
    assert "AC951" not in text and "Ranked substitutes" not in text
    for location, qty in _drawers(run.db, "2SB8117"):
        assert f"- {location}: {qty} in the drawer" in text
    # No Markdown escapes leak into the printed sheet.
    assert "\\" not in text
    # No line is printed twice (flags are not repeated beside the checks they come from).
    lines = [ln for ln in text.splitlines() if ln.strip() and ln != "```" and not ln.startswith("|---")
             and not ln.endswith("______________________")]
    assert len(lines) == len(set(lines))
    # Lead order EBC on the board, ECB on the part (common practice: the letters name the leads
    # 1 2 3 seen from below): pad 2 (base) is fed by lead 3, pad 3 (collector) by lead 2.
    assert "2 (B)  <-------  3 (B)   (re-form)" in text
    assert "3 (C)  <-------  2 (C)   (re-form)" in text
    assert "1 (E)  <-------  1 (E)\n" in text
    assert re.search(r"Change R2 from 10 kΩ to \S+ kΩ \(E12", text)
    for field in ("Outcome (worked / failed):", "Technician:", "Notes:"):
        assert field in text
    assert "Mains-powered and high-voltage equipment can kill" in text


def test_pdf_sheet_is_one_a4_page_reading_back_its_content(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    from pypdf import PdfReader

    out = tmp_path / "sheets" / "job.pdf"
    out.parent.mkdir()
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        result = run("substitute", "OC375", "--pick", "2SB8117", "--job", "J-2611",
                     "--format", "pdf", "--stage", STAGE, "--output", "sheets/job.pdf")
    finally:
        os.chdir(cwd)
    assert result.exit_code == 0, result.output
    # The absolute path is printed, once.
    assert result.stdout.strip() == f"job sheet written to {out.resolve()}"
    reader = PdfReader(out)
    assert len(reader.pages) == 1
    page = reader.pages[0]
    # ISO 216 A4 = 210 x 297 mm = 595.28 x 841.89 points.
    assert (float(page.mediabox.width), float(page.mediabox.height)) == pytest.approx(
        (595.28, 841.89), abs=0.1)
    text = page.extract_text()
    for needed in ("Job J-2611", "OC375", "2SB8117", "Take from", "Leads", "Stage",
                   "Cautions", "Outcome", "Technician"):
        assert needed in text
    for location, _ in _drawers(run.db, "2SB8117"):
        assert location in text
    # The lead drawing is vector lines: at least the three leads as line operators.
    content = page.get_contents().get_data().decode("latin-1")
    assert len(re.findall(r" l S", content)) >= 3
    if shutil.which("pdftoppm") is None:
        reason = "pdftoppm not installed (Debian package poppler-utils)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must render the job sheet: {reason}")
        pytest.skip(reason)
    subprocess.run(["pdftoppm", "-r", "100", "-png", str(out), str(tmp_path / "page")],
                   check=True, timeout=60)
    pngs = sorted(tmp_path.glob("page*.png"))
    assert len(pngs) == 1
    data = pngs[0].read_bytes()
    # A4 at 100 dpi: 210/25.4*100 = 827 px by 297/25.4*100 = 1170 px (pdftoppm rounds up).
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert abs(width - 827) <= 1 and abs(height - 1170) <= 1


def test_html_sheet_draws_the_leads_and_escapes(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "job.html"
    result = run("substitute", "OC375", "--pick", "2SB8117", "--job", "<J&1>",
                 "--format", "html", "--output", str(out))
    assert result.exit_code == 0, result.output
    text = out.read_text()
    assert "&lt;J&amp;1&gt;" in text and "<J&1>" not in text
    assert text.count("<line ") == 3 and "<svg" in text


def test_existing_file_refused_without_force_and_left_unchanged(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "job.md"
    out.write_text("old")
    result = run("substitute", "OC375", "--pick", "AC951", "--job", "J-1", "--output", str(out))
    assert result.exit_code == 2 and out.read_text() == "old"
    assert run("substitute", "OC375", "--pick", "AC951", "--job", "J-1", "--output", str(out),
               "--force").exit_code == 0
    assert out.read_text().startswith("# Job sheet J-1: OC375 -> AC951")


@pytest.mark.parametrize(("args", "code", "words"), [
    (["--pick", "AC951"], 2, "--job"),
    (["--pick", "NOPE99", "--job", "J-1"], 1, "--pick"),
    (["--pick", "AC951", "--job", "J-1", "--stage", "ladder --vcc 9V"], 2, "--stage"),
    (["--pick", "AC951", "--job", "J-1", "--stage", "divider --vcc 9V --rc 2k2 --r1 x"], 2,
     "r1"),
    (["--pick", "AC951", "--job", "J-1", "--format", "pdf"], 2, "--output"),
    (["--format", "pdf"], 2, "--pick"),
])
def test_bad_input_is_one_line_with_its_exit_code(run, args: list[str], code: int,
                                                   words: str) -> None:  # type: ignore[no-untyped-def]
    result = run("substitute", "OC375", *args)
    assert result.exit_code == code, result.output
    assert words in result.output and "Traceback" not in result.output


def test_ranking_report_without_pick_keeps_its_name(run) -> None:  # type: ignore[no-untyped-def]
    result = run("substitute", "OC375", "--format", "md", "--limit", "3")
    assert result.exit_code == 0
    assert result.output.startswith("# Substitution ranking report: OC375")
    assert "Job sheet" not in result.output


def test_stage_line_reads_the_bias_options() -> None:
    spec = parse_stage(STAGE + " --ambient 40")
    # RKM notation (IEC 60062): 2k2 = 2200 ohm.
    assert spec.stage.rc == pytest.approx(2200) and spec.stage.r1 == pytest.approx(47e3)
    assert spec.ambient == 40
