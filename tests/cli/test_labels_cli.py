"""``partsdb labels``: the PDF read back by pypdf, rendered by poppler's pdftoppm, the QR code
decoded by zbar's zbarimg, and the decoded text accepted by the stock commands."""

from __future__ import annotations

import os
import shutil
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main

ADD = ["device", "add", "BC547B", "--kind", "bjt", "--polarity", "npn", "--material", "si",
       "--vceo", "45V", "--ic-max", "100mA", "--package", "TO-92", "--pinout", "CBE"]


@pytest.fixture
def run(tmp_path: Path):  # type: ignore[no-untyped-def]
    url = f"sqlite:///{tmp_path / 'shop.sqlite'}"
    runner = CliRunner()

    def invoke(*args: str):  # type: ignore[no-untyped-def]
        return runner.invoke(main, ["--quiet", "--db", url, *args])

    assert invoke(*ADD).exit_code == 0
    assert invoke("device", "add", "AC128", "--kind", "bjt", "--polarity", "pnp", "--material",
                  "ge", "--vceo", "16V", "--ic-max", "1A", "--package", "TO-1",
                  "--pinout", "EBC").exit_code == 0
    assert invoke("stock", "receive", "BC547B", "20", "--to", "C2/D14", "--create").exit_code == 0
    assert invoke("stock", "receive", "AC128", "4", "--to", "C2/D14", "--create").exit_code == 0
    assert invoke("stock", "receive", "AC128", "2", "--to", "C3/D01", "--create").exit_code == 0
    return invoke


def _pdf_text(path: Path) -> str:
    from pypdf import PdfReader

    return "\n".join(page.extract_text() for page in PdfReader(path).pages)


def test_pdf_holds_one_label_per_place_with_what_it_keeps(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "labels.pdf"
    result = run("labels", "--output", str(out), "--format", "json")
    assert result.exit_code == 0, result.output
    from pypdf import PdfReader

    page = PdfReader(out).pages[0]
    # ISO 216 A4 = 210 x 297 mm = 595.28 x 841.89 PostScript points (1 pt = 1/72 in).
    assert float(page.mediabox.width) == pytest.approx(595.28, abs=0.1)
    assert float(page.mediabox.height) == pytest.approx(841.89, abs=0.1)
    text = _pdf_text(out)
    for expected in ("C2/D14", "C3/D01", "BC547B", "NPN Si", "45 V", "100 mA", "TO-92",
                     "AC128", "PNP Ge", "16 V", "1 A", "TO-1"):
        assert expected in text
    assert '"labels": 2' in result.output


def test_letter_sheet_and_layout_options(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "letter.pdf"
    result = run("labels", "C2", "--paper", "letter", "--rows", "2", "--columns", "1",
                 "--margin", "25.4", "--output", str(out))
    assert result.exit_code == 0, result.output
    from pypdf import PdfReader

    page = PdfReader(out).pages[0]
    # ANSI/ASME Y14.1 US Letter = 8.5 x 11 in = 612 x 792 points.
    assert (float(page.mediabox.width), float(page.mediabox.height)) == pytest.approx((612, 792))
    text = _pdf_text(out)
    assert "C2/D14" in text and "C3/D01" not in text


def _tool(name: str, package: str) -> None:
    """Skip with the reason when a checking tool is absent; in CI (.ci/run installs it) fail."""
    if shutil.which(name) is None:
        reason = f"{name} not installed (Debian package {package})"
        if os.environ.get("CI"):
            pytest.fail(f"CI must run the label checks: {reason}")
        pytest.skip(reason)


def test_page_renders_and_its_code_scans_to_text_the_cli_takes(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    _tool("pdftoppm", "poppler-utils")
    out = tmp_path / "one.pdf"
    assert run("labels", "C2/D14", "--output", str(out)).exit_code == 0
    subprocess.run(["pdftoppm", "-r", "200", "-png", "-f", "1", "-l", "1", str(out),
                    str(tmp_path / "page")], check=True, timeout=60)
    png = tmp_path / "page-1.png"
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    # PNG IHDR: width and height (big-endian) of A4 at 200 dpi: 210/25.4*200 = 1654 px wide,
    # 297/25.4*200 = 2339 px high (pdftoppm rounds up).
    width, height = int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")
    assert abs(width - 1654) <= 1 and abs(height - 2339) <= 1
    _tool("zbarimg", "zbar-tools")
    scanned = subprocess.run(["zbarimg", "--quiet", "--raw", str(png)], capture_output=True,
                             text=True, timeout=60, check=True).stdout.strip()
    assert scanned == "C2/D14"
    # The scanned text goes into --from unchanged.
    result = run("stock", "take", "BC547B", "1", "--from", scanned)
    assert result.exit_code == 0, result.output
    assert "now 19" in result.output


def test_svg_is_one_sheet_of_well_formed_xml(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "labels.svg"
    assert run("labels", "--output", str(out)).exit_code == 0
    root = ET.parse(out).getroot()
    assert root.get("width") == "210mm" and root.get("height") == "297mm"
    texts = [t.text for t in root.iter("{http://www.w3.org/2000/svg}text")]
    assert "C2/D14" in texts and "BC547B" in texts
    titles = [t.text for t in root.iter("{http://www.w3.org/2000/svg}title")]
    assert sorted(titles) == ["C2/D14", "C3/D01"]


def test_existing_file_is_refused_unless_forced_and_left_as_it_was(run, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    out = tmp_path / "labels.pdf"
    out.write_bytes(b"keep me")
    result = run("labels", "--output", str(out))
    assert result.exit_code == 2
    assert "exists" in result.stderr and "--force" in result.stderr
    assert out.read_bytes() == b"keep me"
    assert run("labels", "--output", str(out), "--force").exit_code == 0
    assert out.read_bytes()[:5] == b"%PDF-"
    assert [p.name for p in tmp_path.iterdir() if p.name.endswith(".tmp")] == []


@pytest.mark.parametrize(("args", "code", "message"), [
    (["--output", "labels.png"], 2, "--output: 'labels.png' does not end in .pdf or .svg"),
    (["C9", "--output", "x.pdf"], 1, "location 'C9' not found"),
    (["--columns", "8", "--output", "x.pdf"], 2, "rows/columns: 8 x 8 on a4"),
])
def test_bad_requests_are_one_line_and_write_nothing(run, tmp_path: Path, monkeypatch,  # type: ignore[no-untyped-def]
                                                    args: list[str], code: int, message: str) -> None:
    monkeypatch.chdir(tmp_path)
    before = sorted(p.name for p in tmp_path.iterdir())
    result = run("labels", *args)
    assert result.exit_code == code, result.output
    assert result.stderr.count("\n") == 1 and message in result.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == before


def test_config_labels_table_sets_the_defaults(run, tmp_path: Path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    config = tmp_path / "config.toml"
    config.write_text('[labels]\npaper = "letter"\nrows = 4\ncolumns = 2\ncode = false\n')
    monkeypatch.setenv("PARTSDB_CONFIG", str(config))
    result = run("labels", "--output", str(tmp_path / "c.pdf"), "--format", "json")
    assert result.exit_code == 0, result.output
    assert '"paper": "letter"' in result.output and '"rows": 4' in result.output
    assert '"code": false' in result.output
    config.write_text("[labels]\nrows = \"many\"\n")
    result = run("labels", "--output", str(tmp_path / "d.pdf"))
    assert result.exit_code == 2 and "labels.rows = 'many'; expected a number" in result.stderr


def test_missing_print_extra_is_one_line_and_exit_3(run, tmp_path: Path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    import importlib.util

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name in ("fpdf", "segno") else real(name, *a))
    out = tmp_path / "labels.pdf"
    result = run("labels", "--output", str(out))
    assert result.exit_code == 3
    assert result.stderr.strip().splitlines() == [
        "error: labels: PDF output needs the optional packages fpdf2 and segno; install them "
        "with pip install 'partsdb-drawers[print]'"]
    assert not out.exists()
    # An SVG without codes needs neither package.
    assert run("labels", "--no-code", "--output", str(tmp_path / "plain.svg")).exit_code == 0
