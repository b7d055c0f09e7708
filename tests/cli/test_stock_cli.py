"""`partsdb stock`: receive, take, move, count, where and ledger; a refused take changes nothing."""

from __future__ import annotations

import json

from partsdb.services import stock
from partsdb.storage.database import open_database
from tests.cli.conftest import ADD_QK55


def test_stock_take_too_many_changes_nothing(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_QK55)
    assert run("stock", "receive", "QK55", "10", "--to", "C2/D14", "--create").exit_code == 0
    result = run("stock", "take", "QK55", "11", "--from", "C2/D14", "--job", "J-9")
    assert result.exit_code == 2
    assert "only 10 there" in result.output
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert [v.quantity for v in stock.where(session, "QK55")] == [10]
        assert [e.reason for e in stock.ledger(session)] == ["receive"]
    db.dispose()

def test_stock_where_json_and_ledger(run) -> None:  # type: ignore[no-untyped-def]
    run(*ADD_QK55)
    run("stock", "receive", "QK55", "10", "--to", "C2/D14", "--create")
    run("stock", "take", "QK55", "3", "--from", "C2/D14", "--job", "J-9")
    run("stock", "move", "QK55", "2", "--from", "C2/D14", "--to", "C1/D01", "--create")
    run("stock", "count", "QK55", "6", "--at", "C2/D14")
    data = json.loads(run("stock", "where", "QK55", "--format", "json").output)
    assert {(d["location"], d["quantity"]) for d in data} == {("C2/D14", 6), ("C1/D01", 2)}
    ledger = json.loads(run("stock", "ledger", "QK55", "--job", "J-9", "--format", "json").output)
    assert [(e["reason"], e["change"]) for e in ledger] == [("take", -3)]


def test_ledger_at_an_unknown_place_is_not_found(run) -> None:  # type: ignore[no-untyped-def]
    """`--at` names a place: one that does not exist is exit 1, as `take --from` is, not an
    empty ledger that looks like a quiet drawer."""
    result = run("stock", "ledger", "--at", "C9")
    assert result.exit_code == 1 and "location 'C9' not found" in result.output


def test_take_without_a_job_is_refused_when_the_config_requires_one(
        run, tmp_path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    """`[stock] require_job = true`: a take without --job exits 2 naming the field and the
    setting, and writes nothing; with --job it is made."""
    config = tmp_path / "config.toml"
    config.write_text("[stock]\nrequire_job = true\n", encoding="utf-8")
    monkeypatch.setenv("PARTSDB_CONFIG", str(config))
    run(*ADD_QK55)
    run("stock", "receive", "QK55", "10", "--to", "C2/D14", "--create")
    refused = run("stock", "take", "QK55", "1", "--from", "C2/D14")
    assert refused.exit_code == 2
    assert "job: empty" in refused.output and "require_job" in refused.output
    assert run("stock", "take", "QK55", "1", "--from", "C2/D14", "--job", "J-9").exit_code == 0
    db = open_database(run.url, notify=None)
    with db.session() as session:
        assert [(e.reason, e.job) for e in stock.ledger(session)] == [("take", "J-9"),
                                                                      ("receive", None)]
    db.dispose()
    config.write_text("[stock]\nrequire_job = 'yes'\n", encoding="utf-8")
    bad = run("stock", "take", "QK55", "1", "--from", "C2/D14", "--job", "J-9")
    assert bad.exit_code == 2 and "stock.require_job = 'yes'; expected true or false" in bad.output
