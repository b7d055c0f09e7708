"""Limits on input (issue 14, items 4-9): the same refusal on SQLite and PostgreSQL, before any
write, from the services themselves (so every face inherits them)."""

from __future__ import annotations

import threading
import unicodedata
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import update

from partsdb.csvsafe import guard, unguard
from partsdb.designations import normalize
from partsdb.device import InvalidRecord
from partsdb.limits import MAX_LOT, MAX_MOVEMENT
from partsdb.services import catalog, exchange, export, stock
from partsdb.services.stock import StockError
from partsdb.storage.database import open_database
from partsdb.storage.models import LotRow
from tests.storage.workers import dump

BASE = {"kind": "bjt", "polarity": "npn", "material": "si"}


def _device(session: Any, name: str = "QA1", **extra: str) -> None:
    catalog.add_device(session, {"designation": name, **BASE, **extra})


# ---------------------------------------------------------------- item 4: quantities

@pytest.mark.parametrize("qty", [-1, -(10**20), 0, MAX_MOVEMENT + 1, 2**63, 10**20])
def test_the_service_refuses_every_quantity_outside_the_limit(empty_db: Any, qty: int) -> None:
    with empty_db.session() as session:
        _device(session)
        stock.receive(session, "QA1", 5, "C1/D01")
    before = dump(empty_db)
    for op in (lambda s: stock.take(s, "QA1", qty, "C1/D01"),
               lambda s: stock.receive(s, "QA1", qty, "C1/D01"),
               lambda s: stock.return_parts(s, "QA1", qty, "C1/D01"),
               lambda s: stock.move(s, "QA1", qty, "C1/D01", "C1/D02")):
        with pytest.raises(StockError, match=r"quantity: .* expected a whole number from 1 to "
                                             r"1,000,000"), empty_db.session() as session:
            op(session)
    assert dump(empty_db) == before


def test_a_lot_stays_within_int32(empty_db: Any) -> None:
    # PostgreSQL "integer" holds -2147483648 to +2147483647 (PostgreSQL docs, "Numeric Types",
    # Table 8.2); SQLite would silently go on to 64 bits, then REAL.
    assert MAX_LOT == 2**31 - 1
    with empty_db.session() as session:
        _device(session)
        stock.receive(session, "QA1", 1, "C1/D01")
        session.execute(update(LotRow).values(quantity=MAX_LOT - 1))
    with pytest.raises(StockError, match="at most 2,147,483,647"), empty_db.session() as session:
        stock.receive(session, "QA1", 2, "C1/D01")
    with empty_db.session() as session:
        stock.receive(session, "QA1", 1, "C1/D01")  # exactly the limit is fine
        assert stock.where(session, "QA1")[0].quantity == MAX_LOT


# ---------------------------------------------------------------- item 5: places

def test_case_variants_of_a_place_are_one_place(empty_db: Any) -> None:
    with empty_db.session() as session:
        _device(session)
        stock.receive(session, "QA1", 1, "case0/D1")
        stock.receive(session, "QA1", 2, "CASE0/d1")
        stock.receive(session, "QA1", 3, "Case0")
    with empty_db.session() as session:
        assert stock.location_paths(session) == ["case0", "case0/D1"]  # first spelling kept
        held = {v.location: v.quantity for v in stock.where(session, "QA1")}
        assert held == {"case0/D1": 3, "case0": 3}


def test_concurrent_receives_into_a_new_place_all_succeed(db_url: str) -> None:
    """Eight benches receive into the same new place at once (in several cases); each succeeds
    and there is one place (68 of 160 failed on PostgreSQL before the upsert)."""
    db = open_database(db_url, notify=None)
    with db.session() as session:
        _device(session)
    barrier = threading.Barrier(8)
    errors: list[BaseException] = []

    def bench(i: int) -> None:
        barrier.wait()
        try:
            db.transact(lambda s: stock.receive(s, "QA1", 1, ["NEW9/D1", "new9/d1"][i % 2]))
        except BaseException as err:
            errors.append(err)

    threads = [threading.Thread(target=bench, args=(i,)) for i in range(8)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    with db.session() as session:
        assert [p for p in stock.location_paths(session) if p.lower().startswith("new9")] \
            in (["NEW9", "NEW9/D1"], ["new9", "new9/d1"])
        assert sum(v.quantity for v in stock.where(session, "QA1")) == 8
        assert stock.ledger_mismatches(session) == []
    db.dispose()


# ---------------------------------------------------------------- item 8: LIKE wildcards

def test_place_filters_treat_underscore_and_percent_as_letters(empty_db: Any) -> None:
    with empty_db.session() as session:
        _device(session)
        for place in ("C1", "C2/D1", "C_", "C_/D4", "CX_/D5"):
            stock.receive(session, "QA1", 1, place)
    with empty_db.session() as session:
        assert {e.location for e in stock.ledger(session, location="C_")} == {"C_", "C_/D4"}
        assert {e.location for e in stock.ledger(session, location="c_/d4")} == {"C_/D4"}
        with pytest.raises(StockError, match="not valid"):
            stock.ledger(session, location="C%")  # "%" is no place name, never a wildcard
        assert {v.location for v in stock.lots_at(session, "C_")} == {"C_", "C_/D4"}
        assert {v.location for v in stock.lots_at(session, "c2")} == {"C2/D1"}


# ---------------------------------------------------------------- item 9: designations, lengths

@pytest.mark.parametrize(("text", "named"), [
    ("QA1\x00", "U+0000 NULL"),
    ("QA\n1", "U+000A LINE FEED"),
    ("QA1\u202e", "U+202E RIGHT-TO-LEFT OVERRIDE"),
    ("Q\u200bA1", "U+200B ZERO WIDTH SPACE"),
    ("\u0412C547", "U+0412 CYRILLIC CAPITAL LETTER VE"),
    ("\u0391C547", "U+0391 GREEK CAPITAL LETTER ALPHA"),
])
def test_hostile_designations_are_refused_naming_the_character(empty_db: Any, text: str,
                                                                named: str) -> None:
    # The names are those of the Unicode Character Database (read here through unicodedata);
    # controls have none there, only aliases (NameAliases.txt: NULL, LINE FEED).
    ch = chr(int(named[2:6], 16))
    assert ch in text and named.endswith(unicodedata.name(ch, named[7:]))
    with pytest.raises(InvalidRecord, match=named.replace("+", r"\+")), \
            empty_db.session() as session:
        _device(session, text)
    with empty_db.session() as session:
        assert catalog.list_devices(session, catalog.DeviceFilter()) == []


def test_fullwidth_designations_fold_to_latin(empty_db: Any) -> None:
    # NFKC maps FULLWIDTH LATIN CAPITAL LETTER B (U+FF22) to B and FULLWIDTH DIGIT FIVE to 5
    # (Unicode Standard Annex #15, compatibility decomposition <wide>).
    wide = "\uff22\uff23\uff15\uff14\uff17"
    assert unicodedata.normalize("NFKC", wide) == "BC547"
    assert normalize(wide) == "BC547"
    with empty_db.session() as session:
        _device(session, wide)
    with empty_db.session() as session:
        assert catalog.get_device(session, "BC547").designation == "BC547"  # type: ignore[union-attr]
        with pytest.raises(catalog.CatalogError):
            _device(session, "BC547")  # the same device, not a second one


@pytest.mark.parametrize(("field", "limit"), [("designation", 64), ("package", 32),
                                              ("application", 64), ("notes", 2000)])
def test_text_lengths_are_the_same_on_both_backends(empty_db: Any, field: str,
                                                    limit: int) -> None:
    # One character over the column width is refused by the record check itself, so SQLite
    # (which does not enforce VARCHAR widths) and PostgreSQL refuse alike.
    values = {"designation": "QL1", field: "Q" * limit}
    with empty_db.session() as session:
        catalog.add_device(session, {**BASE, **values})
    values = {"designation": "QL2", field: "Q" * (limit + 1)}
    with pytest.raises(InvalidRecord, match=f"{field}: .* is {limit + 1:,} characters long; "
                                            f"expected at most {limit}"), \
            empty_db.session() as session:
        catalog.add_device(session, {**BASE, **values})


def test_place_path_and_note_lengths(empty_db: Any) -> None:
    with empty_db.session() as session:
        _device(session)
    long_path = "/".join(["D" + "1" * 62] * 5)  # 5 segments of 63: 319 characters
    with pytest.raises(StockError, match="expected at most 255"), empty_db.session() as s:
        stock.receive(s, "QA1", 1, long_path)
    with pytest.raises(StockError, match=r"note: .* expected at most 2000"), \
            empty_db.session() as s:
        stock.receive(s, "QA1", 1, "C1", note="n" * 2001)
    with pytest.raises(StockError, match=r"job: .*U\+0000 NULL"), empty_db.session() as s:
        stock.receive(s, "QA1", 1, "C1", job="J\x001")


# ---------------------------------------------------------------- items 6, 7: CSV files

def test_stock_rows_with_the_wrong_number_of_cells_are_bad_rows(empty_db: Any,
                                                               tmp_path: Path) -> None:
    # RFC 4180 section 2, item 4: "Each line should contain the same number of fields".
    path = tmp_path / "s.csv"
    path.write_text("designation,location,quantity\nQA1,C1,3\nQA1,C2,3,x\nQA1,C3\n"
                    '"Q\nA1",C4,1\nQA1\n')
    with empty_db.session() as session:
        _device(session)
    with pytest.raises(exchange.ImportRejected) as caught, empty_db.session() as session:
        exchange.import_stock(session, path)
    assert [line for line, _ in caught.value.problems] == [3, 4, 7]


@given(st.text())
def test_the_formula_guard_is_undone_exactly_for_every_text(text: str) -> None:
    guarded = guard(text)
    assert unguard(guarded) == text
    # OWASP "CSV Injection": no guarded cell starts with a character a spreadsheet runs.
    assert not str(guarded).startswith(("=", "+", "-", "@", "\t", "\r", "\n"))


@settings(max_examples=25, deadline=None)
@given(st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc", "Cf", "Zl", "Zp"),
                                      blacklist_characters="\x00"), max_size=30)
       .map(str.strip))
def test_a_note_round_trips_through_stock_export_and_import(text: str) -> None:
    import tempfile

    with tempfile.TemporaryDirectory() as folder:
        a = open_database(Path(folder) / "a.sqlite", notify=None)
        with a.session() as session:
            _device(session)
            stock.receive(session, "QA1", 2, "C1/D01", note=text or None)
            session.execute(update(LotRow).values(note=text or None))
            export.export_stock(session, Path(folder) / "s.csv")
        b = open_database(Path(folder) / "b.sqlite", notify=None)
        with b.session() as session:
            _device(session)
            exchange.import_stock(session, Path(folder) / "s.csv")
            assert (stock.where(session, "QA1")[0].note or "") == text
        a.dispose()
        b.dispose()


def test_the_emitter_note_round_trips(empty_db: Any, tmp_path: Path) -> None:
    note = "'-' marks the emitter"
    with empty_db.session() as session:
        _device(session, notes=note)
        export.export_devices(session, tmp_path / "d.csv")
    assert "''-' marks the emitter" in (tmp_path / "d.csv").read_text()
    with empty_db.session() as session:
        report = exchange.import_devices(session, tmp_path / "d.csv")
        assert report.unchanged == 1
        assert catalog.get_device(session, "QA1").notes == note  # type: ignore[union-attr]
