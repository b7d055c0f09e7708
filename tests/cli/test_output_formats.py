"""Tables written to a pipe keep their full width; the lists also come as TSV."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services import stock
from partsdb.services.catalog import add_device
from partsdb.storage.database import open_database

LONG_NOTE = "pulled from the second IF stage of a 1962 table radio, leads re-formed, tested twice"


@pytest.fixture
def shop(tmp_path: Path) -> str:
    path = tmp_path / "shop.sqlite"
    db = open_database(path, notify=None)
    with db.session() as session:
        add_device(session, {"designation": "ZT101", "kind": "bjt", "polarity": "npn",
                             "material": "si", "low_stock": 10})
        stock.receive(session, "ZT101", 3, "K1/D2", note=LONG_NOTE)
        stock.receive(session, "ZT101", 2, "K1/D3", condition="used", note="box\tB2\nleft")
    db.dispose()
    return str(path)


def test_a_piped_table_is_never_cut(shop: str) -> None:
    # CliRunner's stdout is not a terminal, as in `partsdb stock where ZT101 | less`.
    result = CliRunner().invoke(main, ["--db", shop, "stock", "ledger", "ZT101"])
    assert result.exit_code == 0, result.output
    assert LONG_NOTE in result.output and "…" not in result.output
    assert max(len(line) for line in result.output.splitlines()) > 80


def test_tsv_one_line_per_row_tabs_only_between_cells(shop: str) -> None:
    result = CliRunner().invoke(main, ["--db", shop, "stock", "ledger", "--format", "tsv"])
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    header = lines[0].split("\t")
    rows = [dict(zip(header, line.split("\t"), strict=True)) for line in lines[1:]]
    assert len(rows) == 2
    assert {r["note"] for r in rows} == {LONG_NOTE, "box B2 left"}
    # The change is a number, as in CSV.
    assert {(r["location"], r["change"]) for r in rows} == {("K1/D2", "3"), ("K1/D3", "2")}
    low = CliRunner().invoke(main, ["--db", shop, "stock", "low", "--format", "tsv"])
    assert low.output.splitlines()[1].split("\t")[:3] == ["ZT101", "5", "10"]
