"""``partsdb kit FILE``: a five-line kit on each backend, the pick list, taking it whole, and
the kit sheet (Markdown, and PDF read back with pypdf and rendered with poppler's pdftoppm).

Checked through the library (stock.where, swaplog.list_swaps). The shop and the kit file are
in tests/kit_shop.py (verdicts by the workshop policy's 80 %, common practice).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
from datetime import date
from pathlib import Path
from typing import Any

import pytest

from partsdb.services import kit, stock, swaplog
from partsdb.storage.database import open_database
from tests.kit_shop import KIT, fill_kit_shop, held, write_kit


@pytest.fixture
def shop(db_url: str) -> Any:
    db = open_database(db_url, notify=None)
    fill_kit_shop(db)
    yield db
    db.dispose()


def _kit_file(tmp_path: Path, text: str = KIT) -> str:
    return str(write_kit(tmp_path, text))


def _held(db: Any) -> dict[tuple[str, str], int]:
    return held(db)


def test_five_lines_give_a_pick_list_sorted_by_drawer(run, shop: Any, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path), "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert set(data) == {"lines", "pick_list"}
    lines = {ln["reference"]: ln for ln in data["lines"]}
    assert all(set(ln) == {"reference", "designation", "quantity", "action", "part", "verdict",
                           "picks"} for ln in data["lines"])
    assert [lines[r]["action"] for r in ("Q1", "Q2", "Q3", "Q4", "Q5")] == [
        "stock", "substitute", "stock", "substitute", "stock"]
    # Q2 and Q4 share the substitute: QK23 holds exactly 3; QK22 is under-rated at 25 V.
    assert lines["Q2"]["part"] == lines["Q4"]["part"] == "QK23"
    assert lines["Q2"]["verdict"] == "suitable"  # 25 V is 42 % of 60 V (under 80 %)
    assert data["pick_list"] == [
        {"location": "C1/D01", "part": "QK10", "quantity": 1},
        {"location": "C1/D02", "part": "QK10", "quantity": 2},
        {"location": "C2/D05", "part": "QK23", "quantity": 3},
        {"location": "C3/D01", "part": "QK30", "quantity": 1},
    ]
    assert run("kit", _kit_file(tmp_path), "--format", "csv").output.splitlines()[0] == \
        "location,part,quantity"


def test_take_takes_every_part_in_one_go_and_logs_the_swaps(run, shop: Any, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path), "--take", "--job", "J-77")
    assert result.exit_code == 0, result.output
    held = _held(shop)
    assert held[("QK10", "C1/D01")] == 0 and held[("QK10", "C1/D02")] == 0
    assert held[("QK23", "C2/D05")] == 0 and held[("QK30", "C3/D01")] == 3
    assert held[("QK22", "C2/D01")] == 9
    with shop.session() as session:
        swaps = swaplog.list_swaps(session, job="J-77")
    assert sorted((s.original, s.substitute, s.stress.vce_peak) for s in swaps) == [
        ("QK20", "QK23", 25.0), ("QK20", "QK23", 25.0)]


def test_take_refuses_as_a_whole_when_one_line_cannot_be_met(run, shop: Any,
                                                              tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    from tests.storage.workers import dump

    before, everything = _held(shop), dump(shop)
    # Q4 needs 3: QK23 holds 3 - 1 (Q2) = 2, QK10 3 - 2 (Q1) - 1 (Q3) = 0, QK24 2: to buy.
    short = KIT.replace("Q4,QK20,2,25V,workshop", "Q4,QK20,3,25V,workshop")
    result = run("kit", _kit_file(tmp_path, short), "--take", "--job", "J-78")
    assert result.exit_code == 2
    assert "Q4 (QK20)" in result.output and "nothing was taken" in result.output
    assert _held(shop) == before
    assert dump(shop) == everything  # every row of every table (ledger, swaps) as it was
    with shop.session() as session:
        assert swaplog.list_swaps(session) == []


def test_a_lot_emptied_after_planning_rolls_back_every_line(shop: Any, tmp_path: Path) -> None:
    plan = kit.plan_kit(shop, kit.read_kit(_kit_file(tmp_path)))
    with shop.session() as session:
        stock.take(session, "QK30", 4, "C3/D01")  # someone else took them meanwhile
    before = _held(shop)
    with pytest.raises(stock.StockError, match="QK30"):
        kit.take_kit(shop, plan, "J-79")
    assert _held(shop) == before
    with shop.session() as session:
        assert swaplog.list_swaps(session) == []


@pytest.mark.parametrize(("text", "words"), [
    ("Ref,Designation,Colour\nQ1,QK10,red\n", "column 'colour'"),
    ("Ref,Designation,Qty\nQ1,QK10,two\n", "kit line 2: quantity"),
    ("Ref,Designation,Qty,Vce peak\nQ1,QK10,1,9A\n", "kit line 2"),
    ("Ref,Designation\nQ1,NOPE1\n", "NOPE1"),
])
def test_bad_kit_file_is_one_line(run, shop: Any, tmp_path: Path, text: str, words: str) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path, text))
    assert result.exit_code in (1, 2)
    assert words in result.output and "Traceback" not in result.output


# ---------------------------------------------------------------- the kit sheet

def _pdftoppm(pdf: Path, prefix: Path) -> list[Path]:
    """Render every page at 100 dpi with poppler's pdftoppm (skip locally without it)."""
    if shutil.which("pdftoppm") is None:
        reason = "pdftoppm not installed (Debian package poppler-utils)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must render the kit sheet: {reason}")
        pytest.skip(reason)
    subprocess.run(["pdftoppm", "-r", "100", "-png", str(pdf), str(prefix)], check=True,
                   timeout=60)
    return sorted(prefix.parent.glob(prefix.name + "*.png"))


def _png_size(path: Path) -> tuple[int, int]:
    data = path.read_bytes()  # the IHDR chunk: width and height, big-endian (PNG spec 11.2.2)
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def test_markdown_sheet_has_job_lines_picks_cautions_and_fields(run, shop: Any,  # type: ignore[no-untyped-def]
                                                                tmp_path: Path) -> None:
    result = run("kit", _kit_file(tmp_path), "--format", "md", "--job", "J-2700")
    assert result.exit_code == 0, result.output
    text = result.output
    assert text.startswith("# Repair kit J-2700\n")
    assert f"Job: **J-2700** · Date: {date.today().isoformat()}" in text
    # Parts to pick, by hand: Q1 2 + Q2 1 + Q3 1 + Q4 2 + Q5 1 = 7.
    assert "5 lines, 7 parts to pick" in text
    assert "| Q4 | QK20 | 2 | substitute | QK23 | suitable |" in text
    assert "| Q1 | QK10 | 2 | stock | QK10 | — |" in text
    # Q2 needs 1 and Q4 needs 2 of the shared substitute QK23: 1 + 2 = 3, one stop at C2/D05.
    assert "| C2/D05 | QK23 | 3 | Q2, Q4 | [ ] |" in text
    # QK10 for Q1 (2) and Q3 (1): the largest lot first, so Q1 empties C1/D02 (2) and Q3
    # takes C1/D01's one.
    assert "| C1/D01 | QK10 | 1 | Q3 | [ ] |" in text
    assert "| C1/D02 | QK10 | 2 | Q1 | [ ] |" in text
    picks = [ln.split(" | ")[0].lstrip("| ") for ln in text.split("## Pick list")[1]
             .split("## Cautions")[0].splitlines() if ln.startswith("| C")]
    assert picks == sorted(picks) == ["C1/D01", "C1/D02", "C2/D05", "C3/D01"]
    assert "Mains-powered and high-voltage equipment can kill" in text
    for field in ("Picked by:", "Technician:", "Date:", "Notes:"):
        assert f"- {field} ____" in text
    # Without --job the job is a blank to fill in.
    blank = run("kit", _kit_file(tmp_path), "--format", "md").output
    assert blank.startswith("# Repair kit\n") and "Job: **____" in blank


def test_pdf_sheet_renders_and_reads_back(run, shop: Any, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    from pypdf import PdfReader

    out = tmp_path / "kit-J-2700.pdf"
    result = run("kit", _kit_file(tmp_path), "--format", "pdf", "--job", "J-2700",
                 "--output", str(out))
    assert result.exit_code == 0, result.output
    assert result.output.strip() == f"kit sheet written to {out.resolve()}"
    reader = PdfReader(out)
    assert len(reader.pages) == 1
    # ISO 216 A4 = 210 x 297 mm = 595.28 x 841.89 points.
    box = reader.pages[0].mediabox
    assert (float(box.width), float(box.height)) == pytest.approx((595.28, 841.89), abs=0.1)
    pngs = _pdftoppm(out, tmp_path / "page")
    assert len(pngs) == 1
    # A4 at 100 dpi: 210/25.4*100 = 827 px by 297/25.4*100 = 1170 px (pdftoppm rounds up).
    width, height = _png_size(pngs[0])
    assert abs(width - 827) <= 1 and abs(height - 1170) <= 1
    # The text as poppler reads it, row by row (-layout keeps a table row on one line).
    text = subprocess.run(["pdftotext", "-layout", str(out), "-"], check=True,
                          capture_output=True, text=True, timeout=60).stdout
    rows = [" ".join(line.split()) for line in text.splitlines()]
    assert "Repair kit, job J-2700" in rows
    assert "Ref. Designation Qty Action Part fitted Verdict" in rows
    assert "Q4 QK20 2 substitute QK23 suitable" in rows
    assert "Q5 QK30 1 stock QK30 -" in rows
    # The shared substitute summed by hand: Q2's 1 + Q4's 2 = 3 from C2/D05.
    assert "C2/D05 QK23 3 Q2, Q4 []" in rows
    assert any(r.startswith("- Mains-powered and high-voltage equipment can kill") for r in rows)
    assert {"Picked by:", "Technician:", "Date:", "Notes:"} <= set(rows)
    assert any(r.endswith("page 1 of 1") for r in rows)


def test_a_long_kit_runs_onto_numbered_pages_with_the_headings_again(run, shop: Any,  # type: ignore[no-untyped-def]
                                                                       tmp_path: Path) -> None:
    from pypdf import PdfReader

    # 120 lines of QK30 x1 (4 held): lines 1-4 from stock, the rest to buy.
    body = "".join(f"Q{i},QK30,1,,\n" for i in range(1, 121))
    out = tmp_path / "long.pdf"
    result = run("kit", _kit_file(tmp_path, "Ref,Designation,Qty,Vce peak,Policy\n" + body),
                 "--format", "pdf", "--output", str(out))
    assert result.exit_code == 0, result.output
    pages = PdfReader(out).pages
    assert len(pages) >= 2
    for number, page in enumerate(pages, start=1):
        text = page.extract_text()
        assert f"page {number} of {len(pages)}" in text
    # The lines table goes on over the page break with its heading row repeated.
    assert "Part fitted" in pages[1].extract_text()
    everything = "".join(p.extract_text() for p in pages)
    assert "Q120" in everything and "Sign-off" in everything
    assert len(_pdftoppm(out, tmp_path / "long")) == len(pages)


def test_take_with_a_sheet_writes_it_only_when_the_take_goes_through(run, shop: Any,  # type: ignore[no-untyped-def]
                                                                     tmp_path: Path) -> None:
    before = _held(shop)
    short = KIT.replace("Q4,QK20,2,25V,workshop", "Q4,QK20,3,25V,workshop")
    out = tmp_path / "kit.pdf"
    refused = run("kit", _kit_file(tmp_path, short), "--take", "--job", "J-81",
                  "--format", "pdf", "--output", str(out))
    assert refused.exit_code == 2 and "nothing was taken" in refused.output
    assert not out.exists() and not list(tmp_path.glob(".kit.pdf.*"))
    assert _held(shop) == before
    result = run("kit", _kit_file(tmp_path), "--take", "--job", "J-81", "--output", str(out))
    assert result.exit_code == 0, result.output
    assert out.read_bytes().startswith(b"%PDF-")
    assert _held(shop)[("QK23", "C2/D05")] == 0  # 3 - (1 + 2)


@pytest.mark.parametrize(("args", "code", "words"), [
    (["--format", "pdf"], 2, "--output: a pdf kit sheet needs a file name"),
    (["--output", "kit.txt"], 2, "expected a name ending in .md or .pdf"),
    (["--format", "json", "--output", "kit.md"], 2, "--output: writes the md or pdf kit sheet"),
    (["--job", "J-1"], 2, "--job: only with --take or a kit sheet"),
    (["--format", "md", "--output", "exists.md"], 2, "exists"),
])
def test_bad_sheet_options_are_one_line(run, shop: Any, tmp_path: Path,  # type: ignore[no-untyped-def]
                                        monkeypatch: pytest.MonkeyPatch, args: list[str],
                                        code: int, words: str) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / "exists.md").write_text("old")
    result = run("kit", _kit_file(tmp_path), *args)
    assert result.exit_code == code, result.output
    assert words in result.output and "Traceback" not in result.output
    assert (tmp_path / "exists.md").read_text() == "old"
    assert not (tmp_path / "kit.txt").exists() and not (tmp_path / "kit.md").exists()
