"""The column cache on disk: a new process ranks from it, and any change to the devices makes
it stale (the ranking then reads the database again).

The oracle is the catalog itself, by hand: devices are added, edited and removed, and the ranking
must show exactly the devices (and the Vceo) the database holds after each change; a stale
cache would rank the old set. Every device below is an NPN BJT, the requirement's group.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pytest

from partsdb.services import catalog, colcache
from partsdb.services.substitution import clear_cache, load_group, rank_substitutes
from partsdb.storage.database import open_database

SPEC = {"polarity": "npn", "kind": "bjt"}


def _part(name: str, vceo: str = "45V") -> dict[str, Any]:
    return {"designation": name, "kind": "bjt", "polarity": "npn", "material": "si",
            "vceo": vceo, "ic_max": "100mA", "ptot": "500mW", "ptot_ref": "ambient",
            "package": "TO-92", "pinout": "EBC"}


@pytest.fixture
def shop(tmp_path: Path) -> Any:
    db = open_database(tmp_path / "shop.sqlite", notify=None)
    with db.session() as session:
        for name in ("QW1001", "QW2002", "QW3003"):
            catalog.add_device(session, _part(name))
    clear_cache()
    yield db
    db.dispose()


def _ranked(db: Any) -> dict[str, float]:
    """Designation -> Vceo (V) of every candidate ranked, as a new process would rank."""
    clear_cache()  # as in a new process: only the disk cache remains
    return {c.designation: c.device["vceo"] for c in rank_substitutes(db, None, SPEC).candidates}


def _cache_files() -> list[Path]:
    return sorted(colcache.cache_dir().glob("*.npz"))


def test_a_new_process_reads_the_columns_from_disk(shop: Any) -> None:
    assert set(_ranked(shop)) == {"QW1001", "QW2002", "QW3003"}
    assert len(_cache_files()) == 1
    with shop.session() as session:
        from partsdb.services.substitution import catalog_version, read_group

        clear_cache()
        cached, _ = load_group(session, "npn", "bjt")
        fresh = read_group(session, "npn", "bjt")
        database = colcache.database_path(session)
        assert database is not None
        assert colcache.load(database, "npn/bjt", catalog_version(session)) is not None
    # The file holds what the database holds: every column equal.
    for name in ("designation", "key", "polarity", "kind", "vceo", "ic_max", "package"):
        a, b = getattr(cached, name), getattr(fresh, name)
        assert np.array_equal(a, b, equal_nan=a.dtype.kind == "f"), name
    assert cached.packages == fresh.packages and cached.pinouts == fresh.pinouts
    assert cached.designation.dtype.kind == "U"  # no Python object per row


def test_every_change_to_the_devices_makes_the_cache_stale(shop: Any) -> None:
    assert _ranked(shop) == {"QW1001": 45, "QW2002": 45, "QW3003": 45}
    with shop.session() as session:
        catalog.add_device(session, _part("QW4004"))
    assert _ranked(shop) == {"QW1001": 45, "QW2002": 45, "QW3003": 45, "QW4004": 45}
    with shop.session() as session:
        catalog.edit_device(session, "QW2002", {"vceo": "30V"})
    assert _ranked(shop) == {"QW1001": 45, "QW2002": 30, "QW3003": 45, "QW4004": 45}
    with shop.session() as session:
        catalog.remove_device(session, "QW3003", force=True)
    assert _ranked(shop) == {"QW1001": 45, "QW2002": 30, "QW4004": 45}
    # Remove one and add one: the count is back where it was, the ranking still sees both.
    with shop.session() as session:
        catalog.remove_device(session, "QW4004", force=True)
        catalog.add_device(session, _part("QW5005", vceo="50V"))
    assert _ranked(shop) == {"QW1001": 45, "QW2002": 30, "QW5005": 50}


def test_an_unreadable_cache_file_is_ignored(shop: Any) -> None:
    assert set(_ranked(shop)) == {"QW1001", "QW2002", "QW3003"}
    (path,) = _cache_files()
    path.write_bytes(b"not a zip file")
    assert set(_ranked(shop)) == {"QW1001", "QW2002", "QW3003"}


def test_clearing_with_a_session_removes_the_files(shop: Any) -> None:
    _ranked(shop)
    assert _cache_files()
    with shop.session() as session:
        clear_cache(session)
    assert not _cache_files()


def test_a_server_database_is_not_cached(empty_db: Any) -> None:
    with empty_db.session() as session:
        catalog.add_device(session, _part("QW1001"))
    assert set(_ranked(empty_db)) == {"QW1001"}
    if empty_db.dialect != "sqlite":
        assert not _cache_files()
