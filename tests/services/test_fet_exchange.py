"""FET records through storage and CSV: stored and read back on both backends, imported from a
hand-kept file (units, P-channel minus signs, ± ratings, channel words), refused all-or-nothing
with the field named, and exported and re-imported unchanged.

Expected values are hand conversions with the SI prefixes (BIPM SI Brochure, 9th ed., table 7):
"28 mΩ" = 0.028 Ω, "25nC" = 2.5e-8 C, "6.5 mA" = 6.5e-3 A.
"""

from __future__ import annotations

import csv
from pathlib import Path

import pytest

from partsdb.services import catalog, exchange, export
from partsdb.services.exchange import ImportRejected

HEADER = ("designation,kind,mode,polarity,material,vds,vgs_max,id_max,ptot,ptot_ref,rds_on,"
          "rds_on_vgs,vgs_th_min,vgs_th_max,qg,body_diode,vgs_off_min,vgs_off_max,idss_min,"
          "idss_max,yfs,yfs_id,en,pinout\n")
ROWS = [
    "HX-N60T,mosfet,,N-channel,si,60V,±20V,30A,75W,case,28 mΩ,10V,2V,4V,25nC,yes,,,,,,,,GDS\n",
    "HX-P30,mosfet,enhancement,pch,si,-30V,+/-20 V,-12A,40W,case,60mR,-10V,-1V,-2.5V,15nC,,,,,,,"
    ",,G-D-S\n",
    "HX-J12,jfet,,n,si,40V,,,300mW,ambient,,,,,,,-0.5V,-2.5V,2.6mA,6.5 mA,12mS,3mA,2nV/rtHz,"
    "SGD\n",
    "QX-1,bjt,,p,si,,,,,,,,,,,,,,,,,,,\n",
]


def _write(path: Path, rows: list[str]) -> Path:
    path.write_text(HEADER + "".join(rows), encoding="utf-8")
    return path


def test_fets_import_store_and_read_back(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        report = exchange.import_devices(session, _write(tmp_path / "f.csv", ROWS))
    assert report.added == 4
    with empty_db.session() as session:
        n = catalog.get_device(session, "HX-N60T")
        p = catalog.get_device(session, "HX-P30")
        j = catalog.get_device(session, "HX-J12")
        q = catalog.get_device(session, "QX-1")
    assert n is not None and p is not None and j is not None and q is not None
    assert (n.kind, n.mode, n.polarity, n.vgs_max, n.body_diode) == (
        "mosfet", "enhancement", "n", 20.0, True)
    assert n.rds_on == pytest.approx(0.028) and n.qg == pytest.approx(25e-9)
    assert (p.polarity, p.vds, p.id_max, p.rds_on_vgs) == ("p", 30.0, 12.0, 10.0)
    assert (p.vgs_th_min, p.vgs_th_max, p.body_diode) == (-1.0, -2.5, None)
    assert p.rds_on == pytest.approx(0.060)
    assert (j.mode, j.vgs_off_min, j.vgs_off_max) == (None, -0.5, -2.5)
    assert j.idss_max == pytest.approx(6.5e-3) and j.en == pytest.approx(2e-9)
    assert q.polarity == "pnp"  # "p" on a bipolar row keeps meaning PNP


def test_the_one_record_path_and_the_column_path_agree(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    """The same rows entered one by one (add_device) and imported column-wise give equal records."""
    with empty_db.session() as session:
        exchange.import_devices(session, _write(tmp_path / "f.csv", ROWS))
        imported = {d.designation: d.to_dict() for d in catalog.list_devices(session)}
    names = HEADER.strip().split(",")
    for row in ROWS:
        cells = next(csv.reader([row.strip()]))
        raw = dict(zip(names, cells, strict=True))
        from partsdb.device import parse_device

        one = parse_device(raw).to_dict()
        assert one == pytest.approx(imported[raw["designation"]]) or one == imported[
            raw["designation"]]


@pytest.mark.parametrize(("row", "words"), [
    ("HX-N61,mosfet,,n,si,60V,20V,30A,,,28mΩ,10V,-2V,4V,,,,,,,,,,GDS\n",
     "vgs_th_min: -2 V has the wrong sign"),
    ("HX-J13,jfet,,n,si,40V,,,,,,,,,,,0.5V,2.5V,,,,,,\n", "expected Vgs(off) negative"),
    ("HX-J14,jfet,,n,si,40V,,,,,,,,,,,,,6mA,2mA,,,,\n", "idss_min: 6 mA is beyond idss_max"),
    ("HX-N62,mosfet,,npn,si,60V,,,,,,,,,,,,,,,,,,\n", "polarity: 'npn' is a bipolar polarity"),
    ("HX-N63,mosfet,,n,si,60V,,,,,,,,,,perhaps,,,,,,,,\n", "body_diode: 'perhaps'"),
    ("HX-N64,mosfet,,n,si,60V,,,,,,,,,0,,,,,,,,,\n", "qg: '0' is not valid"),
    ("HX-J15,jfet,,n,si,40V,,,,,,,,,,,0,,,,,,,\n", "vgs_off_min: '0' is not valid"),
    ("QX-2,bjt,,npn,si,40V,,,,,,,,,,,,,,,,,,\n", "vds: a FET field (Vds), not used on a bjt"),
])
def test_a_bad_fet_row_refuses_the_whole_file(empty_db, tmp_path: Path, row: str,  # type: ignore[no-untyped-def]
                                              words: str) -> None:
    with pytest.raises(ImportRejected, match=r"line 6: .*" + words.replace("(", r"\(")
                       .replace(")", r"\)")), empty_db.session() as session:
        exchange.import_devices(session, _write(tmp_path / "f.csv", [*ROWS, row]))
    with empty_db.session() as session:
        assert catalog.count_devices(session) == 0


def test_export_and_reimport_is_exact(empty_db, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    with empty_db.session() as session:
        exchange.import_devices(session, _write(tmp_path / "f.csv", ROWS))
        export.export_devices(session, tmp_path / "out.csv")
    with (tmp_path / "out.csv").open(newline="") as fh:
        rows = {r["designation"]: r for r in csv.DictReader(fh)}
    # JSON and CSV carry SI base units: 28 mΩ is written 0.028, the JFET's cut-off with its sign.
    assert float(rows["HX-N60T"]["rds_on"]) == pytest.approx(0.028)
    assert rows["HX-J12"]["vgs_off_min"] == "-0.5"
    assert rows["HX-P30"]["body_diode"] == ""  # unknown is written blank, not "False"
    assert rows["HX-N60T"]["body_diode"] in ("True", "true", "yes", "1")
    with empty_db.session() as session:
        report = exchange.import_devices(session, tmp_path / "out.csv")
    assert (report.added, report.updated, report.unchanged) == (0, 0, 4)
