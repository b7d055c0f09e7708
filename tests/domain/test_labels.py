"""Label sheet layout: sheet sizes from the paper standards, the grid, the lead figure."""

from __future__ import annotations

import pytest

from partsdb.labels import (
    PAPERS,
    Box,
    Code,
    LabelContent,
    LabelDevice,
    LabelError,
    SheetLayout,
    Text,
    layout_label,
    layout_sheets,
    lead_figure,
)

BC547B = LabelDevice("BC547B", "npn", "si", 45.0, 0.1, "TO-92", "CBE")


def test_paper_sizes_are_the_standard_ones() -> None:
    # ISO 216: A4 is 210 x 297 mm. ANSI/ASME Y14.1: US Letter is 8.5 x 11 in (25.4 mm/in).
    assert PAPERS["a4"] == (210.0, 297.0)
    assert PAPERS["letter"] == pytest.approx((8.5 * 25.4, 11 * 25.4))


@pytest.mark.parametrize(("paper", "rows", "cols", "margin", "gap", "size"), [
    # (210 - 2*10 - 2*2) / 3 = 62 mm; (297 - 2*10 - 7*2) / 8 = 32.875 mm (worked by hand)
    ("a4", 8, 3, 10.0, 2.0, (62.0, 32.875)),
    # (215.9 - 2*12.7 - 0) / 2 = 95.25 mm; (279.4 - 2*12.7 - 0) / 5 = 50.8 mm (worked by hand)
    ("letter", 5, 2, 12.7, 0.0, (95.25, 50.8)),
])
def test_label_size_follows_the_grid(paper: str, rows: int, cols: int, margin: float, gap: float,
                                     size: tuple[float, float]) -> None:
    layout = SheetLayout(paper, rows, cols, margin, gap).validate()
    assert layout.label_size == pytest.approx(size)


def test_labels_fill_rows_then_sheets_and_stay_inside_the_margins() -> None:
    layout = SheetLayout("a4", 2, 2, 15.0, 3.0, code=False)
    labels = [LabelContent(f"C1/D{i:02d}", (BC547B,)) for i in range(1, 6)]
    sheets = layout_sheets(labels, layout)
    assert len(sheets) == 2  # 5 labels, 4 per sheet
    guides = [m for m in sheets[0].marks if isinstance(m, Box) and m.dashed]
    # w = (210 - 30 - 3) / 2 = 88.5, h = (297 - 30 - 3) / 2 = 132 (worked by hand);
    # the second column starts at 15 + 88.5 + 3, the second row at 15 + 132 + 3.
    assert [(round(b.x, 2), round(b.y, 2)) for b in guides] == [
        (15.0, 15.0), (106.5, 15.0), (15.0, 150.0), (106.5, 150.0)]
    for sheet in sheets:
        for mark in sheet.marks:
            if isinstance(mark, Text):
                assert 15.0 <= mark.x <= 210 - 15.0
                assert 15.0 <= mark.y <= 297 - 15.0
    assert next(m.text for m in sheets[1].marks if isinstance(m, Text) and m.bold) == "C1/D05"


@pytest.mark.parametrize(("layout", "field"), [
    (SheetLayout("a5"), "paper"),
    (SheetLayout(rows=0), "rows"),
    (SheetLayout(columns=6), "rows/columns"),  # 6 across A4 is under 40 mm a label
    (SheetLayout(rows=20), "rows/columns"),
    (SheetLayout(margin=60), "margin"),
])
def test_layouts_that_cannot_print_are_refused_naming_the_option(layout: SheetLayout,
                                                                field: str) -> None:
    with pytest.raises(LabelError, match=f"^{field}: "):
        layout.validate()


def test_lead_figure_draws_the_stored_order_left_to_right() -> None:
    # BC547B: C, B, E facing the flat side, leads down (Philips BC546/547/548 data sheet, TO-92
    # outline drawing, from memory). The figure must keep that order, not re-sort it.
    letters = [m for m in lead_figure(0, 0, BC547B.pinout or "") if isinstance(m, Text)]
    assert [t.text for t in sorted(letters, key=lambda t: t.x)] == ["C", "B", "E"]


def test_a_label_shows_path_label_text_devices_and_the_code_of_the_path() -> None:
    content = LabelContent("C2/D14", (BC547B,), label_text="Si NPN audio, TO-92")
    marks = layout_label(content, 0, 0, 62, 33, code=True)
    texts = [m.text for m in marks if isinstance(m, Text)]
    assert texts[:2] == ["C2/D14", "Si NPN audio, TO-92"]
    assert "BC547B" in texts and any("NPN Si" in t and "45 V" in t and "100 mA" in t
                                      and "TO-92" in t for t in texts)
    codes = [m for m in marks if isinstance(m, Code)]
    assert len(codes) == 1 and codes[0].text == "C2/D14"  # the path exactly, no prefix


def test_more_devices_than_fit_say_how_many_are_left_out() -> None:
    many = tuple(LabelDevice(f"AC{n}", "pnp", "ge", 20.0, 0.1, "TO-1", "EBC") for n in range(20))
    marks = layout_label(LabelContent("C1/D01", many), 0, 0, 62, 33, code=True)
    texts = [m.text for m in marks if isinstance(m, Text)]
    shown = [t for t in texts if t.startswith("AC")]
    assert 0 < len(shown) < 20
    assert f"+ {20 - len(shown)} more (see partsdb stock)" in texts


def test_a_fet_label_names_the_channel_and_its_ratings_and_draws_four_leads() -> None:
    """A FET's row says NMOS / NJFET with its Vds and Id max (the invented demo parts), and a
    dual-gate FET's four leads are all drawn, in stored order (gate 1 first)."""
    from partsdb.labels import device_facts

    mos = LabelDevice("2SK8624", "n", "si", 200.0, 17.0, "TO-220", "GDS", "mosfet")
    assert device_facts(mos) == "NMOS Si  200 V  17 A  TO-220"
    jfet = LabelDevice("2SJ8106", "p", "si", 40.0, None, "TO-92", "SGD", "jfet")
    assert device_facts(jfet) == "PJFET Si  40 V  Id -  TO-92"
    letters = [m for m in lead_figure(0, 0, "SDGG") if isinstance(m, Text)]
    assert [t.text for t in sorted(letters, key=lambda t: t.x)] == ["S", "D", "G", "G"]
    assert device_facts(BC547B).startswith("NPN Si  45 V")  # bipolar rows unchanged
