"""Fixtures for the TUI tests: a small invented workshop, built through the services.

The parts are invented (designations in a maker's-own style that no numbering scheme decodes,
plus one Pro Electron-looking name whose material contradicts its first letter, to have a
"suspect" record). Their values are invented too and are never used as an oracle: the tests
check what the UI does against what the services report afterwards.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from partsdb.storage.database import Database

DEVICES: tuple[dict[str, str], ...] = (
    {"designation": "QX3301", "kind": "bjt", "polarity": "npn", "material": "si", "vceo": "45V",
     "vcbo": "50V", "ic_max": "100mA", "ptot": "500mW", "ptot_ref": "ambient", "tj_max": "150",
     "hfe_min": "110", "hfe_max": "450", "ft": "250MHz", "vbe_on": "0.65V", "vbe_ic": "2mA",
     "package": "TO-92", "pinout": "EBC", "notes": "small signal audio workhorse"},
    {"designation": "QX3302", "kind": "bjt", "polarity": "npn", "material": "si", "vceo": "60V",
     "vcbo": "80V", "ic_max": "200mA", "ptot": "625mW", "ptot_ref": "ambient", "tj_max": "150",
     "hfe_min": "100", "hfe_max": "300", "ft": "300MHz", "vbe_on": "0.66V", "vbe_ic": "2mA",
     "package": "TO-92", "pinout": "CBE", "notes": "general purpose switching"},
    {"designation": "QX3310", "kind": "bjt", "polarity": "npn", "material": "si", "vceo": "30V",
     "vcbo": "40V", "ic_max": "50mA", "ptot": "300mW", "ptot_ref": "ambient", "tj_max": "125",
     "hfe_min": "40", "hfe_max": "120", "ft": "100MHz", "package": "TO-92", "pinout": "EBC",
     "obsolete": "yes"},
    {"designation": "QX5500", "kind": "bjt", "polarity": "pnp", "material": "si", "vceo": "45V",
     "vcbo": "50V", "ic_max": "100mA", "ptot": "500mW", "ptot_ref": "ambient",
     "hfe_min": "110", "hfe_max": "450", "package": "TO-92", "pinout": "EBC"},
    {"designation": "AC987", "kind": "bjt", "polarity": "pnp", "material": "si", "vceo": "32V",
     "ic_max": "100mA", "ptot": "300mW", "ptot_ref": "ambient", "hfe_min": "50",
     "hfe_max": "150", "package": "TO-1"},
)

STOCK: tuple[tuple[str, int, str], ...] = (
    ("QX3301", 12, "C1/D1"),
    ("QX3302", 3, "C1/D2"),
    ("QX5500", 5, "C2/D1"),
)

NOTES = {"QX5500": "pulled from the power supply board of a customer's bench amplifier, tested"}
"""A note longer than the ledger table shows at 80 columns."""


def build_small_shop(path: Path) -> Database:
    from partsdb.services import catalog, stock
    from partsdb.storage.database import open_database

    db = open_database(path, notify=None)
    with db.session() as session:
        for raw in DEVICES:
            catalog.add_device(session, raw)
        for designation, qty, place in STOCK:
            stock.receive(session, designation, qty, place, note=NOTES.get(designation))
        catalog.edit_device(session, "QX3302", {"low_stock": "5"})
    return db


@pytest.fixture
def shop_db(tmp_path: Path) -> Iterator[Database]:
    """Five invented devices, three lots in two cabinets; QX3302 is below its low mark."""
    db = build_small_shop(tmp_path / "shop.sqlite")
    yield db
    db.dispose()
