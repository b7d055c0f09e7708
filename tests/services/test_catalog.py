"""The catalog service's many-record path (``add_many``, used by the CSV importer): new keys
inserted, changed records updated in place, identical ones left, a repeated key refused.

Read back through the one-record service calls (``get_device``), not through the bulk path.
"""

from __future__ import annotations

import pytest

from partsdb.device import FIELD_NAMES, Device
from partsdb.services import catalog


def _row(device: Device) -> tuple[object, ...]:
    values = device.to_dict()
    return (device.key, *[values[name] for name in FIELD_NAMES], None)


def test_add_many_inserts_updates_and_leaves_unchanged(empty_db) -> None:  # type: ignore[no-untyped-def]
    first = [Device(designation="QA 1", vceo=45.0), Device(designation="QA2", vceo=60.0)]
    with empty_db.session() as session:
        stored = catalog.add_many(session, [[_row(d) for d in first]])
    assert (stored.added, stored.updated, stored.unchanged) == (2, 0, 0)
    again = [Device(designation="QA 1", vceo=45.0), Device(designation="QA2", vceo=80.0),
             Device(designation="QA3", ic_max=0.1)]
    with empty_db.session() as session:
        # two batches: the stored rows must be found in each
        stored = catalog.add_many(session, [[_row(again[0])], [_row(d) for d in again[1:]]])
    assert (stored.added, stored.updated, stored.unchanged) == (1, 1, 1)
    with empty_db.session() as session:
        assert catalog.get_device(session, "qa-1").vceo == 45.0  # type: ignore[union-attr]
        assert catalog.get_device(session, "QA2").vceo == 80.0  # type: ignore[union-attr]
        assert catalog.get_device(session, "QA3").ic_max == 0.1  # type: ignore[union-attr]
        assert catalog.count_devices(session) == 3


def test_add_many_refuses_a_repeated_key_across_batches(empty_db) -> None:  # type: ignore[no-untyped-def]
    rows = [_row(Device(designation="QB7")), _row(Device(designation="QB 7"))]
    with pytest.raises(catalog.CatalogError, match="designation: the key 'QB7' is given twice"), \
            empty_db.session() as session:
        catalog.add_many(session, [rows[:1], rows[1:]])
    with empty_db.session() as session:
        assert catalog.count_devices(session) == 0
