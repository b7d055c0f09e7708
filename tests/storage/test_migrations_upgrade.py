"""Schema evolution: a database made by an older partsdb is upgraded, data intact: a SQLite file
on open, a shared PostgreSQL database only by an explicit ``partsdb upgrade``.

The database is built at revision 0001 with Alembic itself, filled with rows written by plain
SQL (not by the current services), then opened with ``open_database``. The reference for the
final schema is Alembic's own comparison of the migrated database with the ORM models
(``alembic.autogenerate.compare_metadata``), on both backends.
"""

from __future__ import annotations

from datetime import datetime

import pytest
from click.testing import CliRunner
from sqlalchemy import insert, inspect, select, text

from partsdb.cli import main
from partsdb.services import corrections, stock
from partsdb.storage.database import (
    ReadOnlyError,
    SchemaMismatch,
    current_revision,
    head_revision,
    make_engine,
    open_database,
    resolve_url,
    upgrade,
)
from partsdb.storage.models import Base, SwapRow
from tests.storage.workers import dump

AT = datetime(2026, 3, 1, 9, 30, 15, 250000)


def _old_database(url: str) -> dict[str, list[tuple[object, ...]]]:
    """A database at revision 0001 holding one device, two places, a lot and its ledger."""
    engine = make_engine(resolve_url(url))
    upgrade(engine, "0001")
    t = Base.metadata.tables
    # Ids come from the database (as the old version's inserts did), so sequences stay right.
    device = {"designation": "ZT303", "key": "ZT303", "kind": "bjt", "polarity": "npn",
              "material": "si", "vceo": 60.0, "ic_max": 0.8, "ptot": 0.625, "ptot_ref": "ambient",
              "obsolete": True, "notes": "bought 1994", "low_stock": 4, "updated_at": AT}
    with engine.begin() as conn:
        def add(table: str, **values: object) -> int:
            return int(conn.execute(insert(t[table]).values(**values)).inserted_primary_key[0])

        device_id = add("devices", **device)
        cabinet = add("locations", parent_id=None, name="K3", path="K3")
        drawer = add("locations", parent_id=cabinet, name="D2", path="K3/D2")
        lot = add("lots", device_id=device_id, location_id=drawer, condition="used", quantity=9)
        add("movements", at=AT, lot_id=lot, change=12, reason="receive")
        add("movements", at=AT, lot_id=lot, change=-3, reason="take", job="R-1", note="amp")
    assert current_revision(engine) == "0001"
    assert "swaps" not in inspect(engine).get_table_names()
    old_rows = {}
    with engine.connect() as conn:
        for name in ("devices", "locations", "lots", "movements"):
            table = t[name]
            columns = [c for c in table.c if c.name not in ADDED_LATER]
            old_rows[name] = [tuple(r) for r in
                              conn.execute(select(*columns).order_by(table.c.id))]
    engine.dispose()
    return old_rows


FET_COLUMNS = ("mode", "rth_jc", "vds", "vgs_max", "id_max", "id_max_ref", "rds_on", "rds_on_vgs",
               "rds_on_id", "vgs_th_min", "vgs_th_max", "qg", "qgd", "ciss", "body_diode", "trr",
               "vgs_off_min", "vgs_off_max", "idss_min", "idss_max", "yfs", "yfs_id", "en")
ADDED_LATER = {"key", "label", "reorder_to", "undoes", "veb_peak", *FET_COLUMNS}
"""Columns added after revision 0001 (locations.key, 0004; locations.label, devices.reorder_to,
movements.undoes, 0005; swaps.veb_peak, 0006; the FET columns, 0007): not there to fill or
read."""


def _without_later_columns(name: str, rows: list[tuple[object, ...]]) -> list[tuple[object, ...]]:
    names = [c.name for c in Base.metadata.tables[name].c]
    keep = [i for i, n in enumerate(names) if n not in ADDED_LATER]
    return [tuple(row[i] for i in keep) for row in rows]


def test_old_database_is_upgraded_on_open_with_data_intact(db_url: str) -> None:
    old_rows = _old_database(db_url)
    notices: list[str] = []
    if db_url.startswith("postgresql"):
        # Shared: ordinary opens refuse, in one line naming the command, and change nothing.
        with pytest.raises(SchemaMismatch, match=r"schema 0001, older .*run `partsdb upgrade`"):
            open_database(db_url, notify=notices.append)
        engine = make_engine(resolve_url(db_url))
        assert current_revision(engine) == "0001"
        engine.dispose()
        db = open_database(db_url, upgrade_schema=True, notify=notices.append)
    else:
        db = open_database(db_url, notify=notices.append)
    assert current_revision(db.engine) == head_revision() != "0001"
    assert notices == [f"partsdb: upgraded database schema 0001 -> {head_revision()}"]
    now = dump(db)
    assert {name: _without_later_columns(name, now[name]) for name in old_rows} == old_rows
    assert now["swaps"] == []
    with db.session() as session:
        assert stock.ledger_mismatches(session) == []
        # The upgraded database works like a new one: stock moves and the new swap log.
        stock.take(session, "ZT303", 2, "K3/D2", job="R-2")
        session.add(SwapRow(original="ZT303", original_key="ZT303", substitute="ZT101",
                            substitute_key="ZT101", job="R-2"))
    with db.session() as session:
        assert stock.where(session, "ZT303")[0].quantity == 7
        assert stock.ledger_mismatches(session) == []
    db.dispose()


def test_old_database_is_not_upgraded_read_only(db_url: str) -> None:
    _old_database(db_url)
    with pytest.raises(ReadOnlyError, match=r"older schema \(0001.*partsdb --db PATH upgrade.* upgrades it"):
        open_database(db_url, read_only=True, notify=None)
    engine = make_engine(resolve_url(db_url))
    assert current_revision(engine) == "0001"
    engine.dispose()


def test_migrations_build_exactly_the_models(db_url: str) -> None:
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    db = open_database(db_url, notify=None)
    with db.engine.connect() as conn:
        context = MigrationContext.configure(conn, opts={"compare_type": True})
        differences = compare_metadata(context, Base.metadata)
    db.dispose()
    assert differences == []


def test_cli_upgrade_command_and_the_refusals_it_answers(db_url: str) -> None:
    _old_database(db_url)
    shared = db_url.startswith("postgresql")
    look = CliRunner().invoke(main, ["--db", db_url, "stock", "where", "ZT303"])
    if shared:  # errors.py: 3 is database trouble; one line, nothing changed
        assert look.exit_code == 3
        assert len(look.stderr.splitlines()) == 1 and "partsdb upgrade" in look.stderr
    else:
        assert look.exit_code == 0, look.output
    result = CliRunner().invoke(main, ["--db", db_url, "upgrade"])
    assert result.exit_code == 0, result.output
    assert (f"upgraded database schema 0001 -> {head_revision()}" in result.output) is shared
    assert CliRunner().invoke(main, ["--db", db_url, "stock", "where", "ZT303"]).exit_code == 0


def test_a_schema_newer_than_this_partsdb_is_refused_in_one_line(db_url: str) -> None:
    db = open_database(db_url, notify=None)
    with db.engine.begin() as conn:  # as a later partsdb with revision 9999 would leave it
        conn.execute(text("UPDATE alembic_version SET version_num = '9999'"))
    db.dispose()
    for args in (["device", "list"], ["upgrade"]):
        result = CliRunner().invoke(main, ["--db", db_url, *args])
        assert result.exit_code == 3
        lines = result.stderr.splitlines()
        assert len(lines) == 1 and "schema 9999, newer than this partsdb" in lines[0]


def test_place_keys_upgrade_merges_case_duplicates(db_url: str) -> None:
    """0003 -> 0004: "C9"/"c9" (and their drawers) become one place, first-written path kept,
    quantities added and every ledger still summing to its lot."""
    engine = make_engine(resolve_url(db_url))
    upgrade(engine, "0003")
    t = Base.metadata.tables
    columns = {name: [c for c in t[name].c if c.name not in ADDED_LATER] for name in t}
    with engine.begin() as conn:
        def add(table: str, **values: object) -> int:
            ins = insert(t[table]).values(**values)
            return int(conn.execute(ins).inserted_primary_key[0])

        dev = add("devices", designation="ZT303", key="ZT303", kind="bjt", polarity="npn",
                  material="si", obsolete=False, updated_at=AT)
        first = add("locations", parent_id=None, name="C9", path="C9")
        second = add("locations", parent_id=None, name="c9", path="c9")
        drawer = add("locations", parent_id=second, name="D1", path="c9/D1")
        lot_a = add("lots", device_id=dev, location_id=first, condition="new", quantity=5)
        lot_b = add("lots", device_id=dev, location_id=second, condition="new", quantity=3)
        lot_c = add("lots", device_id=dev, location_id=second, condition="used", quantity=2)
        lot_d = add("lots", device_id=dev, location_id=drawer, condition="new", quantity=1)
        for lot, change in ((lot_a, 5), (lot_b, 3), (lot_c, 2), (lot_d, 1)):
            add("movements", at=AT, lot_id=lot, change=change, reason="receive")
    assert columns  # the insert above used only the 0003 columns
    engine.dispose()
    db = open_database(db_url, upgrade_schema=True, notify=None)
    assert current_revision(db.engine) == head_revision()
    with db.session() as session:
        assert stock.location_paths(session) == ["C9", "c9/D1"]
        held = {(v.location, v.condition): v.quantity for v in stock.where(session, "ZT303")}
        assert held == {("C9", "new"): 8, ("C9", "used"): 2, ("c9/D1", "new"): 1}
        assert stock.ledger_mismatches(session) == []
        # The merged place is reached in any case, and a new case variant is not a new place.
        stock.receive(session, "ZT303", 1, "c9")
        stock.receive(session, "ZT303", 1, "C9/d1")
        assert stock.location_paths(session) == ["C9", "c9/D1"]
        assert stock.find_location(session, "C9/D1").parent_id == first  # type: ignore[union-attr]
    db.dispose()


def test_0005_merges_number_duplicates_and_keeps_the_ledger(db_url: str) -> None:
    """0004 -> 0005: "C3/D2" and "C3/D02" become one place (first written kept), labels,
    'nos' lots, undo links and reorder targets work, and every ledger still sums to its lot."""
    engine = make_engine(resolve_url(db_url))
    upgrade(engine, "0004")
    t = Base.metadata.tables
    with engine.begin() as conn:
        def add(table: str, **values: object) -> int:
            return int(conn.execute(insert(t[table]).values(**values)).inserted_primary_key[0])

        dev = add("devices", designation="ZT303", key="ZT303", kind="bjt", polarity="npn",
                  material="si", obsolete=False, updated_at=AT, low_stock=20)
        cab = add("locations", parent_id=None, name="C3", path="C3", key="c3")
        first = add("locations", parent_id=cab, name="D02", path="C3/D02", key="c3/d02")
        second = add("locations", parent_id=cab, name="d2", path="C3/d2", key="c3/d2")
        lot_a = add("lots", device_id=dev, location_id=first, condition="new", quantity=5)
        lot_b = add("lots", device_id=dev, location_id=second, condition="new", quantity=3)
        for lot, change in ((lot_a, 5), (lot_b, 4)):
            add("movements", at=AT, lot_id=lot, change=change, reason="receive")
        add("movements", at=AT, lot_id=lot_b, change=-1, reason="take", job="J-9")
    engine.dispose()
    db = open_database(db_url, upgrade_schema=True, notify=None)
    assert current_revision(db.engine) == head_revision()
    with db.session() as session:
        assert stock.location_paths(session) == ["C3", "C3/D02"]
        assert [(v.location, v.quantity) for v in stock.where(session, "ZT303")] == \
            [("C3/D02", 8)]
        assert stock.ledger_mismatches(session) == []
        assert len(stock.ledger(session)) == 3  # history kept, re-pointed to the joined lot
        stock.receive(session, "ZT303", 1, "c3/d2", condition="nos", create=False)
        corrections.undo(session)
        corrections.set_condition(session, "ZT303", "C3/D2", "used", condition="new")
    with db.session() as session:
        from partsdb.services import places

        places.set_label(session, "C3/D2", "Si NPN general")
        assert [(v.condition, v.quantity, v.label) for v in stock.where(session, "ZT303")] \
            == [("used", 8, "Si NPN general"), ("nos", 0, "Si NPN general")]
        assert stock.ledger_mismatches(session) == []
    db.dispose()


def test_swap_veb_peak_upgrade_keeps_the_recorded_swaps(db_url: str) -> None:
    """0005 -> 0006: the swap log gains veb_peak (--veb-peak); a swap recorded before keeps
    every value and reads back with no reverse base voltage given."""
    from partsdb.services import swaplog

    engine = make_engine(resolve_url(db_url))
    upgrade(engine, "0005")
    t = Base.metadata.tables
    with engine.begin() as conn:
        conn.execute(insert(t["devices"]).values(
            designation="ZT303", key="ZT303", kind="bjt", polarity="npn", material="si",
            obsolete=False, updated_at=AT))
        conn.execute(text(
            "INSERT INTO swaps (at, original, original_key, substitute, substitute_key, job, "
            "outcome, vce_peak, ic_peak, power, ambient, freq, heatsink, policy, note) VALUES "
            "(:at, 'ZT300', 'ZT300', 'ZT303', 'ZT303', 'J-7', 'worked', 18.0, 0.05, NULL, 40.0, "
            "NULL, 2.5, 'workshop', 'old row')"), {"at": AT})
    upgrade(engine)  # explicit, as `partsdb upgrade` does (a shared PostgreSQL database)
    engine.dispose()
    db = open_database(db_url, upgrade_schema=True, notify=None)
    assert current_revision(db.engine) == head_revision()
    with db.session() as session:
        (view,) = swaplog.list_swaps(session)
        assert (view.original, view.substitute, view.job, view.outcome, view.note) == (
            "ZT300", "ZT303", "J-7", "worked", "old row")
        assert (view.stress.vce_peak, view.stress.ic_peak, view.stress.ambient,
                view.stress.heatsink, view.stress.veb_peak) == (18.0, 0.05, 40.0, 2.5, None)
    db.dispose()


def test_fet_fields_upgrade_keeps_stock_and_ledger_and_goes_back_when_no_fet_is_stored(
        db_url: str) -> None:
    """0006 -> 0007: devices gain the FET columns and the kinds mosfet / jfet (on SQLite by a
    rebuild of devices, lots and movements); the bipolar record, its lot and ledger survive, a
    FET can then be stored; going back to 0006 is refused while a FET is stored, and works,
    data intact, once it is gone."""
    from partsdb.storage.database import downgrade

    engine = make_engine(resolve_url(db_url))
    upgrade(engine, "0006")
    t = Base.metadata.tables
    with engine.begin() as conn:
        device = conn.execute(insert(t["devices"]).values(
            designation="ZT303", key="ZT303", kind="bjt", polarity="npn", material="si",
            vceo=60.0, obsolete=False, updated_at=AT)).inserted_primary_key[0]
        place = conn.execute(insert(t["locations"]).values(
            parent_id=None, name="K3", path="K3", key="k3")).inserted_primary_key[0]
        lot = conn.execute(insert(t["lots"]).values(
            device_id=device, location_id=place, condition="nos", quantity=5)).inserted_primary_key[0]
        first = conn.execute(text("INSERT INTO movements (at, lot_id, change, reason) "
                                  "VALUES (:at, :lot, 6, 'receive')"), {"at": AT, "lot": lot})
        del first
        conn.execute(text("INSERT INTO movements (at, lot_id, change, reason, job) "
                          "VALUES (:at, :lot, -1, 'take', 'J-1')"), {"at": AT, "lot": lot})
    before = {name: _rows(engine, name) for name in ("lots", "movements")}
    upgrade(engine)
    assert current_revision(engine) == "0007"
    assert {name: _rows(engine, name) for name in ("lots", "movements")} == before
    with engine.begin() as conn:
        conn.execute(insert(t["devices"]).values(
            designation="HX-N60", key="HXN60", kind="mosfet", mode="enhancement", polarity="n",
            material="si", vds=60.0, rds_on=0.028, body_diode=True, obsolete=False,
            updated_at=AT))
    with pytest.raises(RuntimeError, match=r"1 FET record\(s\) stored"):
        downgrade(engine, "0006")
    assert current_revision(engine) == "0007"
    with engine.begin() as conn:
        conn.execute(text("DELETE FROM devices WHERE key = 'HXN60'"))
    downgrade(engine, "0006")
    assert current_revision(engine) == "0006"
    assert {name: _rows(engine, name) for name in ("lots", "movements")} == before
    assert "vds" not in {c["name"] for c in inspect(engine).get_columns("devices")}
    with engine.connect() as conn:
        assert conn.execute(text("SELECT designation, vceo FROM devices")).all() == [("ZT303", 60.0)]
    engine.dispose()


def _rows(engine: object, name: str) -> list[tuple[object, ...]]:
    with engine.connect() as conn:  # type: ignore[attr-defined]
        return [tuple(r) for r in conn.execute(text(f"SELECT * FROM {name} ORDER BY id"))]
