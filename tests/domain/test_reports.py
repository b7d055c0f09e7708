"""Job-sheet rendering: every part of the record is present and HTML is escaped (html.escape)."""

from __future__ import annotations

import html
from html.parser import HTMLParser

from partsdb.cautions import SAFETY_CAUTIONS
from partsdb.derating import BUILTIN_POLICIES
from partsdb.device import Device
from partsdb.ranking import CatalogColumns, RankResult, Requirement, Stress, rank
from partsdb.reports import render_html, render_markdown


def _result() -> RankResult:
    def part(name: str, **kw: object) -> Device:
        base: dict[str, object] = dict(kind="bjt", polarity="npn", material="si", vceo=40.0,
                                       vcbo=60.0, ic_max=0.2, ptot=0.5, ptot_ref="ambient",
                                       tj_max=150.0, hfe_min=100.0, hfe_max=300.0, ft=1e8,
                                       package="TO-92", pinout="EBC")
        base.update(kw)
        return Device(designation=name, **base)  # type: ignore[arg-type]

    devices = [part("QR1"), part("QR<2>&|x", pinout="ECB"), part("QR3", vceo=20.0)]
    cat = CatalogColumns.from_devices(devices)
    req = Requirement.from_device(part("QR0", notes=None))
    return rank(cat, req, Stress(vce_peak=25.0), BUILTIN_POLICIES["mil-std-975m"])


def test_markdown_job_sheet_holds_the_record() -> None:
    text = render_markdown(_result(), job="J-77")
    assert "# Substitution ranking report: QR0" in text
    assert "stored record" in text
    assert "mil-std-975m: voltage 75%" in text and "MIL-STD-975M" in text
    assert "| Vce peak | 25 V |" in text
    assert "QR1" in text and "QR3" in text
    assert "under-rated" in text  # QR3: 25 V peak on a 20 V part
    for caution in SAFETY_CAUTIONS:
        assert caution.split(":")[0] in text
    assert "Job reference: J-77" in text
    assert "Signature: ____" in text and "Technician: ____" in text
    # A pipe in a designation must not break the table row.
    row = next(line for line in text.splitlines() if "QR\\<2\\>&\\|x" in line)
    assert row.count(" | ") == 7


class _Collector(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag: str, attrs: object) -> None:
        self.tags.append(tag)

    def handle_data(self, data: str) -> None:
        self.text.append(data)


def test_html_job_sheet_is_escaped_and_complete() -> None:
    page = render_html(_result(), job="<J-78>", technician="A & B")
    assert "QR<2>" not in page and html.escape("QR<2>&|x") in page
    assert "&lt;J-78&gt;" in page and "A &amp; B" in page
    parser = _Collector()
    parser.feed(page)
    # No tag came from the data: only the page's own structure.
    assert set(parser.tags) <= {"html", "head", "meta", "title", "style", "body", "h1", "h2",
                                "h3", "p", "table", "tr", "th", "td", "ul", "li"}
    text = "".join(parser.text)
    assert "QR<2>&|x" in text  # the escaped designation reads back as written
    assert "Signature" in text and "Job reference" in text
    assert SAFETY_CAUTIONS[0] in text
    assert "mil-std-975m" in text


def test_key_flags_and_details_come_from_the_problems() -> None:
    # QR3: 25 V peak on a 20 V part is above the rating (MIL-STD-975M App. A: the rating is the
    # absolute limit) and below the original's 40 V; QR<2>: the lead order differs.
    from partsdb.reports import key_flags, problem_lines

    result = _result()
    by = {c.designation: c for c in result.candidates}
    qr3, qr2 = by["QR3"], by["QR<2>&|x"]
    assert key_flags(qr3).startswith("UNDER vceo")
    assert "below-original" in key_flags(qr3)
    assert key_flags(qr2) == "re-form-leads"
    text = render_markdown(result)
    assert problem_lines(qr3.problems())[0].startswith("vceo under-rated: Vce peak 25 V is 125 %")
    pinout = next(p for p in qr2.problems() if p.parameter == "pinout")
    assert (pinout.status, pinout.need, pinout.offered, pinout.code) == \
        ("marginal", "EBC", "ECB", "re-form-leads")
    assert text.count("re-form leads: original E B C") == 1
