"""``partsdb swaplog set`` and the filters of ``swaplog list``, checked through the library."""

from __future__ import annotations

import json

from partsdb.services import swaplog
from partsdb.storage.database import open_database
from tests.cli.conftest import ADD_QK55


def _setup(run) -> None:  # type: ignore[no-untyped-def]
    assert run(*ADD_QK55).exit_code == 0
    assert run("swaplog", "add", "OLD1", "QK55", "--job", "J-7").exit_code == 0
    assert run("swaplog", "add", "OLD2", "QK55", "--job", "J-8", "--outcome", "worked"
               ).exit_code == 0


def test_set_outcome_and_filter(run) -> None:  # type: ignore[no-untyped-def]
    _setup(run)
    listed = json.loads(run("swaplog", "list", "--job", "J-7", "--format", "json").output)
    assert [s["job"] for s in listed] == ["J-7"]
    swap_id = listed[0]["id"]
    result = run("swaplog", "set", str(swap_id), "--outcome", "failed", "--note", "ran hot")
    assert result.exit_code == 0, result.output
    db = open_database(run.url, notify=None)
    try:
        with db.session() as session:
            (view,) = swaplog.list_swaps(session, outcome="failed")
        assert (view.id, view.note) == (swap_id, "ran hot")
    finally:
        db.dispose()
    failed = json.loads(run("swaplog", "list", "--outcome", "failed", "--format", "json").output)
    assert [s["job"] for s in failed] == ["J-7"]
    unknown = run("swaplog", "list", "--outcome", "unknown", "--substitute", "QK55",
                  "--since", "2000-01-01", "--format", "json")
    assert json.loads(unknown.output) == []


def test_set_refuses_unknown_id_and_outcome(run) -> None:  # type: ignore[no-untyped-def]
    _setup(run)
    missing = run("swaplog", "set", "99", "--outcome", "worked")
    assert missing.exit_code == 1 and "#99" in missing.output
    bad = run("swaplog", "set", "1", "--outcome", "maybe")
    assert bad.exit_code == 2 and "maybe" in bad.output
    dates = run("swaplog", "list", "--since", "2026-13-01")
    assert dates.exit_code == 2 and "--since" in dates.output
