"""``partsdb decode`` and ``partsdb find`` through click, checked against the library.

Catalog rows are invented designations in scheme shapes; stock is put in through the stock
service and the CLI's stock columns are checked against ``stock_summary``. Decoding oracles are
the schemes' letter tables (Pro Electron, JIS C 7012), as in tests/domain/test_designations.py.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main


@pytest.fixture
def stocked_url(db_url: str) -> str:
    from partsdb.services import catalog, stock
    from partsdb.storage.database import open_database

    db = open_database(db_url, notify=None)
    with db.session() as session:
        for designation, polarity, notes in [
            ("2SC3377", "npn", "driver stage of the bench amplifier"),
            ("2SA3377", "pnp", None),
            ("BC384B", "npn", None),
            ("BC348", "npn", None),
            ("2N7781", "npn", "salvaged from a tuner board"),
        ]:
            catalog.add_device(session, {"designation": designation, "kind": "bjt",
                                         "polarity": polarity, "material": "si",
                                         "notes": notes})
        stock.receive(session, "2SC3377", 12, "C1/D4")
        stock.receive(session, "2SC3377", 3, "C2/D1")
        stock.receive(session, "BC348", 5, "C1/D2")
    db.dispose()
    return db_url


def run(url: str, *args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, ["--db", url, "-q", *args])
    return result.exit_code, result.stdout, result.stderr


def summary_of(url: str) -> dict[str, object]:
    from partsdb.services import stock
    from partsdb.storage.database import open_database

    db = open_database(url, notify=None)
    with db.session() as session:
        out = stock.stock_summary(session)
    db.dispose()
    return out  # type: ignore[return-value]


def test_find_json_reports_stock_and_drawers(stocked_url: str) -> None:
    code, out, _ = run(stocked_url, "find", "2sc-3377", "--format", "json")
    assert code == 0
    hits = json.loads(out)
    assert hits[0]["designation"] == "2SC3377" and hits[0]["score"] == 100
    assert set(hits[0]) >= {"designation", "score", "in_stock", "locations"}
    held = summary_of(stocked_url)["2SC3377"]
    assert hits[0]["in_stock"] == held.quantity == 15  # type: ignore[attr-defined]
    assert hits[0]["locations"] == held.locations == ["C1/D4", "C2/D1"]  # type: ignore[attr-defined]


def test_find_marking_without_2s_says_so(stocked_url: str) -> None:
    # JIS C 7012 body marking "C3377" means 2SC3377 (an inference the output names).
    code, out, _ = run(stocked_url, "find", "C3377", "--format", "json")
    assert code == 0
    first = json.loads(out)[0]
    assert first["designation"] == "2SC3377" and "without 2S" in first["reason"]
    code, table, _ = run(stocked_url, "find", "C3377")
    assert code == 0 and "2SC3377" in table and "omit 2S" in table


def test_find_table_shows_stock_and_drawers(stocked_url: str) -> None:
    code, out, _ = run(stocked_url, "find", "BC384")
    assert code == 0
    assert "BC384B" in out and "BC348" in out and "C1/D2" in out


def test_find_in_stock_only(stocked_url: str) -> None:
    code, out, _ = run(stocked_url, "find", "BC384", "--in-stock", "--format", "json")
    assert code == 0
    names = [h["designation"] for h in json.loads(out)]
    assert names == ["BC348"]  # BC384B has no stock; BC348 is a transposition with 5 parts


def test_find_notes_and_limit(stocked_url: str) -> None:
    code, out, _ = run(stocked_url, "find", "tuner", "--limit", "1", "--format", "json")
    assert code == 0
    hits = json.loads(out)
    assert len(hits) == 1 and hits[0]["designation"] == "2N7781"


def test_find_nothing_exits_1_and_empty_query_exits_2(stocked_url: str) -> None:
    code, _, err = run(stocked_url, "find", "QQQQQQQQQQ")
    assert code == 1 and "no designation or note" in err
    code, _, err = run(stocked_url, "find", "   ")
    assert code == 2 and "query" in err
    code, _, err = run(stocked_url, "find", "BC", "--limit", "0")
    assert code == 2


def test_decode_json_needs_no_database(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'never.sqlite'}"
    code, out, _ = run(url, "decode", "bc 384-b", "--format", "json")
    assert code == 0
    data = json.loads(out)
    # Pro Electron: B silicon, C audio small-signal, suffix B medium gain group.
    assert (data["scheme"], data["material"], data["application"], data["gain_group"]) == (
        "pro-electron", "si", "audio", "B")
    assert not (tmp_path / "never.sqlite").exists()


def test_decode_table_lists_inferences(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'never.sqlite'}"
    code, out, _ = run(url, "decode", "A3377")
    assert code == 0
    # JIS C 7012: A = PNP high-frequency; the missing 2S is an inference.
    assert "2SA3377" in out and "PNP" in out and "inferred:" in out


def test_decode_unknown_and_empty(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'never.sqlite'}"
    code, out, _ = run(url, "decode", "QX7781", "--format", "json")
    assert code == 0 and json.loads(out)["scheme"] == "unknown"
    code, _, err = run(url, "decode", " - ")
    assert code == 2 and "designation" in err


def test_commands_have_help() -> None:
    for name in ("decode", "find"):
        result = CliRunner().invoke(main, [name, "--help"])
        assert result.exit_code == 0 and len(result.output) > 200
