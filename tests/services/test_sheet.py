"""`import_sheet`: someone's own parts sheet, devices and lots in one transaction (both backends
through the ``empty_db`` fixture). Part names are invented; expected values are written out by
hand from the SI prefixes (BIPM SI Brochure, 9th ed., table 7: m = 1e-3, M = 1e6), never taken
from the code under test."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from partsdb.services import catalog, stock
from partsdb.services.exchange import ImportRejected
from partsdb.services.sheet import SheetOptions, decode_bytes, import_sheet, sniff_delimiter

# The sheet of the issue: Type, Polarity, Vce (V), Ic (mA), hFE, Case, Drawer, Qty (and a
# "Bemerkung" column of German notes, mapped with --map, to carry a non-ASCII letter).
SHEET = ("Type;Polarity;Vce (V);Ic (mA);hFE;Case;Drawer;Qty;Bemerkung\r\n"
         "QX 1001;NPN;45;100;110;to92;K1/D01;25;für Endstufe\r\n"
         "QX 1001;NPN;45;100;110;TO92;K1/D02;5;für Endstufe\r\n"
         "QX 2002;p;60;1500;40;to-126;B2/D03;4;\r\n")
MAP = SheetOptions(map={"Bemerkung": "notes"})


def cp1252_sheet(tmp_path: Path) -> Path:
    path = tmp_path / "sheet.csv"
    # Windows-1252 writes "ü" as the one byte 0xFC (the code page's published table), which is
    # not valid UTF-8: the reader must fall back and say so.
    data = SHEET.encode("cp1252")
    assert b"\xfc" in data
    path.write_bytes(data)
    return path


def devices(db) -> dict[str, object]:  # type: ignore[no-untyped-def]
    with db.session() as session:
        return {d.designation: d for d in catalog.list_devices(session)}


def lots(db) -> set[tuple[str, str, int]]:  # type: ignore[no-untyped-def]
    with db.session() as session:
        return {(v.designation, v.location, v.quantity) for v in stock.lots_at(session, None)}


def test_the_issue_sheet_imports_devices_and_lots_with_ic_in_ma(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = cp1252_sheet(tmp_path)
    with empty_db.session() as session:
        report = import_sheet(session, path, MAP)
    assert any("cp1252" in n for n in report.notices)
    held = devices(empty_db)
    assert set(held) == {"QX 1001", "QX 2002"}  # one device for the two drawers of QX 1001
    one, two = held["QX 1001"], held["QX 2002"]
    assert one.ic_max == pytest.approx(0.100)  # 100 mA (header unit) = 0.1 A
    assert two.ic_max == pytest.approx(1.5)  # 1500 mA
    assert (one.polarity, two.polarity) == ("npn", "pnp")  # "p" read as PNP
    assert one.notes == "für Endstufe"
    assert (one.package, two.package) == ("TO-92", "TO-126")
    assert (one.kind, one.material) == ("bjt", "si")  # stated defaults
    # ptot_ref inferred from the outline and listed as assumed (common practice: TO-92 parts
    # are rated in free air, TO-126 parts at the case)
    assert (one.ptot_ref, two.ptot_ref) == ("ambient", "case")
    assumed = {(r["line"], tuple(r["assumed"])) for r in report.assumed}
    assert (4, ("ptot_ref case (TO-126, common practice)",)) in assumed
    assert any("no material column" in n for n in report.notices)
    assert lots(empty_db) == {("QX 1001", "K1/D01", 25), ("QX 1001", "K1/D02", 5),
                              ("QX 2002", "B2/D03", 4)}
    assert report.counts("device") == (2, 0, 0) and report.counts("lot") == (3, 0, 0)
    with empty_db.session() as session:
        reasons = {(e.change, e.reason, e.note) for e in stock.ledger(session)}
    assert reasons == {(25, "import", "import"), (5, "import", "import"), (4, "import", "import")}


def test_minimal_file_imports_with_stated_defaults(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "min.csv"
    path.write_text("designation,polarity,material,vceo,ic_max,ptot,hfe_min,hfe_max,ft,package\n"
                    "QM 10,PNP,germanium,32V,10mA,50mW,30,90,400kHz,TO1\n"
                    "QM 11,npn,Si,40,0.2,0.625,100,300,250MHz,TO-92\n")
    with empty_db.session() as session:
        report = import_sheet(session, path)
    held = devices(empty_db)
    assert (held["QM 10"].material, held["QM 10"].polarity) == ("ge", "pnp")
    assert held["QM 10"].kind == "bjt"
    assert held["QM 10"].package == "TO-1"
    assert held["QM 11"].ft == pytest.approx(250e6)
    assert any("no kind column" in n for n in report.notices)
    assert [r["line"] for r in report.assumed] == [2, 3]


def test_units_per_column_and_a_cells_own_unit_wins(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "u.csv"
    path.write_text("Part,Pol,Ic,fT/MHz,Ptot [W],Pkg\nQU1,npn,150,300,0.5,TO-92\n"
                    "QU2,npn,2A,1.5GHz,625mW,SOT23\n")
    with empty_db.session() as session:
        import_sheet(session, path, SheetOptions(units={"ic_max": "mA"}))
    held = devices(empty_db)
    assert held["QU1"].ic_max == pytest.approx(0.150)  # --unit ic_max=mA
    assert held["QU1"].ft == pytest.approx(300e6)  # header "fT/MHz"
    assert held["QU2"].ic_max == pytest.approx(2.0)  # the cell's own unit wins
    assert held["QU2"].ft == pytest.approx(1.5e9)
    assert held["QU2"].ptot == pytest.approx(0.625)


def test_bare_150_in_an_ic_column_warns_and_is_listed_as_suspect(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "p.csv"
    path.write_text("Type,Polarity,Ic,Ptot,Case\nQP1,npn,150,0.5,TO-92\nQP2,npn,0.1,5,TO-92\n"
                    "QP3,npn,15,115,TO-3\n")
    with empty_db.session() as session:
        report = import_sheet(session, path)
    messages = {(r["line"], r["message"]) for r in report.warnings}
    assert (2, "ic_max: 150 A? if the column is in mA, use --unit ic_max=mA") in messages
    # over 2 W in free air in a TO-92 (common practice)
    assert any(line == 3 and "ptot 5 W in free air is implausible" in m for line, m in messages)
    assert not any(line == 4 for line, _ in messages)  # 15 A, 115 W at the case of a TO-3
    with empty_db.session() as session:
        suspect = catalog.list_devices(session, catalog.DeviceFilter(suspect=True))
    assert {d.designation for d in suspect} == {"QP1", "QP2"}


def test_strict_turns_warnings_into_bad_rows_and_writes_nothing(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "p.csv"
    path.write_text("Type,Polarity,Ic,Case\nQP1,npn,150,TO-92\nQP2,npn,0.1,TO-92\n")
    with pytest.raises(ImportRejected) as err, empty_db.session() as session:
        import_sheet(session, path, SheetOptions(strict=True))
    # both warnings of line 2 (150 A in a TO-92; a bare 150 without a unit) are reasons
    assert [line for line, _ in err.value.problems] == [2, 2]
    assert all("--strict" in msg for _, msg in err.value.problems)
    assert devices(empty_db) == {}


def test_conflicting_rows_of_one_designation_are_bad_rows(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "c.csv"
    path.write_text("Type,Polarity,Vce,Drawer,Qty\nQC1,npn,45,A/1,3\nQC1,npn,60,A/2,4\n"
                    "QC2,npn,30,A/3,x\n")
    with pytest.raises(ImportRejected) as err, empty_db.session() as session:
        import_sheet(session, path)
    found = dict(err.value.problems)
    assert set(found) == {3, 4}  # every bad row, by line
    assert "vceo: 60.0 contradicts line 2 (45.0)" in found[3]
    assert found[4].startswith("quantity:")
    assert devices(empty_db) == {} and lots(empty_db) == set()


def test_dry_run_writes_nothing_and_names_the_changes(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = cp1252_sheet(tmp_path)
    with empty_db.session() as session:
        import_sheet(session, path, MAP)
    path.write_bytes(SHEET.replace("45;100;110;to92;K1/D01;25", "45;200;110;to92;K1/D01;20")
                     .replace("45;100;110;TO92", "45;200;110;TO92").encode("cp1252"))
    with empty_db.session() as session:
        report = import_sheet(session, path, MAP, dry_run=True)
        session.rollback()
    updated = {(r["what"], r["line"]): r["changes"] for r in report.updated}
    assert updated[("device", 2)]["ic_max"] == [pytest.approx(0.1), pytest.approx(0.2)]
    assert updated[("lot", 2)] == {"quantity": [25, 20]}
    assert {(r["what"], r["line"]) for r in report.unchanged} == {("device", 4), ("lot", 3),
                                                                   ("lot", 4)}
    json.dumps(report.to_json())
    assert devices(empty_db)["QX 1001"].ic_max == pytest.approx(0.1)  # nothing written
    assert ("QX 1001", "K1/D01", 25) in lots(empty_db)


def test_workbook_xlsx_reads_the_same_sheet(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    openpyxl = pytest.importorskip("openpyxl")
    book = openpyxl.Workbook()
    book.active.title = "Notes"
    book.active.append(["not the parts"])
    parts = book.create_sheet("Parts")
    for line in SHEET.strip().split("\r\n"):
        cells: list[object] = line.split(";")
        parts.append([int(c) if c.isdigit() else c for c in cells])
    path = tmp_path / "sheet.xlsx"
    book.save(path)
    with empty_db.session() as session:
        import_sheet(session, path, SheetOptions(sheet="Parts", map=MAP.map))
    assert devices(empty_db)["QX 2002"].ic_max == pytest.approx(1.5)
    assert ("QX 1001", "K1/D02", 5) in lots(empty_db)


def test_reading_bytes_and_delimiters() -> None:
    # Byte-order marks (The Unicode Standard, ch. 23.8): EF BB BF for UTF-8, FF FE for UTF-16 LE.
    assert decode_bytes(b"\xef\xbb\xbfa,b\n") == ("a,b\n", None)
    assert decode_bytes("a;ä\n".encode("utf-16")) == ("a;ä\n", None)
    assert decode_bytes("a,ä\n".encode()) == ("a,ä\n", None)
    text, notice = decode_bytes(b"a,\xe4\n")  # 0xE4 is "ä" in Windows-1252
    assert text == "a,ä\n" and notice is not None and "cp1252" in notice
    for sep in (",", ";", "\t", "|"):
        assert sniff_delimiter(f"a{sep}b{sep}c\n1{sep}2{sep}3\n") == sep
    # RFC 4180: a quoted field may hold the delimiter and a line break
    assert sniff_delimiter('a;b\n"x;\ny";2\n') == ";"


def test_formats_utf16_tab_quoted_newline_crlf_and_ods(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    # UTF-16 with a BOM, tab-separated, CRLF line ends, a quoted cell holding a line break
    # (RFC 4180, 2.6)
    text = ("Type\tPolarity\tNotes\r\nQF1\tnpn\t\"two\nlines\"\r\n"
            "QF2\tPNP\tplain\r\n")
    path = tmp_path / "u16.txt"
    path.write_bytes(text.encode("utf-16"))
    with empty_db.session() as session:
        report = import_sheet(session, path)
    assert "cells separated by tab" in report.notices
    assert devices(empty_db)["QF1"].notes == "two\nlines"
    pytest.importorskip("odf")
    import pandas as pd

    ods = tmp_path / "sheet.ods"
    pd.DataFrame({"Part": ["QF3"], "Pol": ["p"], "Ic (mA)": [20]}).to_excel(
        ods, index=False, engine="odf")
    with empty_db.session() as session:
        import_sheet(session, ods)
    assert devices(empty_db)["QF3"].ic_max == pytest.approx(0.020)


def test_a_workbook_without_the_extra_is_one_clear_line(empty_db, tmp_path: Path,  # type: ignore[no-untyped-def]
                                                       monkeypatch: pytest.MonkeyPatch) -> None:
    import importlib.util

    from partsdb.errors import EnvironmentProblem

    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name == "openpyxl" else real(name, *a))
    (tmp_path / "x.xlsx").write_bytes(b"PK")
    with pytest.raises(EnvironmentProblem, match=r"partsdb-drawers\[spreadsheets\]"), \
            empty_db.session() as session:
        import_sheet(session, tmp_path / "x.xlsx")
