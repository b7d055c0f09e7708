"""Shell completion offers stored designations and place paths, quickly and without errors."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import stock
from partsdb.services.catalog import add_device
from partsdb.services.completion import complete_designations, complete_places
from partsdb.storage.database import open_database


@pytest.fixture
def shop(tmp_path: Path) -> str:
    path = tmp_path / "shop.sqlite"
    db = open_database(path, notify=None)
    with db.session() as session:
        for name in ("ZT101", "ZT102", "ZQ7", "zt_9"):
            add_device(session, {"designation": name, "kind": "bjt", "polarity": "npn",
                                 "material": "si"})
        stock.receive(session, "ZT101", 3, "K1/D2")
        stock.receive(session, "ZT102", 3, "K1/D10/B1")
        stock.receive(session, "ZQ7", 3, "K2/D1")
    db.dispose()
    return str(path)


def complete(*words: str) -> list[str]:
    """What bash would offer for the last word (click's bash_complete protocol)."""
    result = CliRunner().invoke(main, [], prog_name="partsdb", env={
        "_PARTSDB_COMPLETE": "bash_complete", "COMP_WORDS": " ".join(("partsdb", *words)),
        "COMP_CWORD": str(len(words))})
    assert result.exit_code == 0, result.output
    return [line.split(",", 1)[1] for line in result.output.splitlines() if line]


def test_designations_and_places_from_the_database(shop: str) -> None:
    assert complete("--db", shop, "stock", "where", "zt1") == ["ZT101", "ZT102"]
    assert complete("--db", shop, "substitute", "Z") == ["ZQ7", "ZT101", "ZT102", "zt_9"]
    assert complete("--db", shop, "stock", "take", "ZT101", "1", "--from", "K1/D1") == \
        ["K1/D10", "K1/D10/B1"]
    # "_" is a LIKE wildcard: typed, it matches only itself.
    assert complete_designations(shop, "zt_") == ["zt_9"]
    assert complete_places(shop, "K2") == ["K2", "K2/D1"]


def test_new_names_and_databases_are_not_completed_from_stored_parts(shop: str) -> None:
    assert complete("--db", shop, "device", "add", "ZT") == []
    assert "ZT101" not in complete("--db", shop, "copy", "--from", "Z")


def test_no_database_completes_nothing_and_creates_nothing(tmp_path: Path) -> None:
    missing = tmp_path / "none.sqlite"
    assert complete("--db", str(missing), "stock", "where", "ZT") == []
    assert not missing.exists()
    broken = tmp_path / "broken.sqlite"
    broken.write_bytes(b"not a database at all")
    assert complete("--db", str(broken), "stock", "where", "ZT") == []
    assert complete("--db", "postgresql+psycopg://nobody@127.0.0.1:1/none",
                    "stock", "where", "ZT") == []
