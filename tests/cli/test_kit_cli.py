"""``partsdb kit FILE``: a five-line kit on each backend, the pick list, taking it whole, and
the kit sheet (Markdown, and PDF read back with pypdf and rendered with poppler's pdftoppm).

Checked through the library (stock.where, swaplog.list_swaps). The shop and the kit file are
in tests/kit_shop.py (verdicts by the workshop policy's 80 %, common practice).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest

from partsdb.services import kit, stock, swaplog
from partsdb.storage.database import open_database
from tests.kit_shop import KIT, fill_kit_shop, held, write_kit


@pytest.fixture
def shop(db_url: str) -> Any:
    db = open_database(db_url, notify=None)
    fill_kit_shop(db)
    yield db
    db.dispose()


def _kit_file(tmp_path: Path, text: str = KIT) -> str:
    return str(write_kit(tmp_path, text))


def _held(db: Any) -> dict[tuple[str, str], int]:
    return held(db)


def test_five_lines_give_a_pick_list_sorted_by_drawer(run, shop: Any, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path), "--format", "json")
    assert result.exit_code == 0, result.output
    data = json.loads(result.output)
    assert set(data) == {"lines", "pick_list"}
    lines = {ln["reference"]: ln for ln in data["lines"]}
    assert all(set(ln) == {"reference", "designation", "quantity", "action", "part", "verdict",
                           "picks"} for ln in data["lines"])
    assert [lines[r]["action"] for r in ("Q1", "Q2", "Q3", "Q4", "Q5")] == [
        "stock", "substitute", "stock", "substitute", "stock"]
    # Q2 and Q4 share the substitute: QK23 holds exactly 3; QK22 is under-rated at 25 V.
    assert lines["Q2"]["part"] == lines["Q4"]["part"] == "QK23"
    assert lines["Q2"]["verdict"] == "suitable"  # 25 V is 42 % of 60 V (under 80 %)
    assert data["pick_list"] == [
        {"location": "C1/D01", "part": "QK10", "quantity": 1},
        {"location": "C1/D02", "part": "QK10", "quantity": 2},
        {"location": "C2/D05", "part": "QK23", "quantity": 3},
        {"location": "C3/D01", "part": "QK30", "quantity": 1},
    ]
    assert run("kit", _kit_file(tmp_path), "--format", "csv").output.splitlines()[0] == \
        "location,part,quantity"


def test_take_takes_every_part_in_one_go_and_logs_the_swaps(run, shop: Any, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path), "--take", "--job", "J-77")
    assert result.exit_code == 0, result.output
    held = _held(shop)
    assert held[("QK10", "C1/D01")] == 0 and held[("QK10", "C1/D02")] == 0
    assert held[("QK23", "C2/D05")] == 0 and held[("QK30", "C3/D01")] == 3
    assert held[("QK22", "C2/D01")] == 9
    with shop.session() as session:
        swaps = swaplog.list_swaps(session, job="J-77")
    assert sorted((s.original, s.substitute, s.stress.vce_peak) for s in swaps) == [
        ("QK20", "QK23", 25.0), ("QK20", "QK23", 25.0)]


def test_take_refuses_as_a_whole_when_one_line_cannot_be_met(run, shop: Any,
                                                              tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    before = _held(shop)
    short = KIT.replace("Q4,QK20,2,25V,workshop", "Q4,QK20,3,25V,workshop")
    result = run("kit", _kit_file(tmp_path, short), "--take", "--job", "J-78")
    assert result.exit_code == 2
    assert "Q4 (QK20)" in result.output and "nothing was taken" in result.output
    assert _held(shop) == before
    with shop.session() as session:
        assert swaplog.list_swaps(session) == []


def test_a_lot_emptied_after_planning_rolls_back_every_line(shop: Any, tmp_path: Path) -> None:
    plan = kit.plan_kit(shop, kit.read_kit(_kit_file(tmp_path)))
    with shop.session() as session:
        stock.take(session, "QK30", 4, "C3/D01")  # someone else took them meanwhile
    before = _held(shop)
    with pytest.raises(stock.StockError, match="QK30"):
        kit.take_kit(shop, plan, "J-79")
    assert _held(shop) == before
    with shop.session() as session:
        assert swaplog.list_swaps(session) == []


@pytest.mark.parametrize(("text", "words"), [
    ("Ref,Designation,Colour\nQ1,QK10,red\n", "column 'colour'"),
    ("Ref,Designation,Qty\nQ1,QK10,two\n", "kit line 2: quantity"),
    ("Ref,Designation,Qty,Vce peak\nQ1,QK10,1,9A\n", "kit line 2"),
    ("Ref,Designation\nQ1,NOPE1\n", "NOPE1"),
])
def test_bad_kit_file_is_one_line(run, shop: Any, tmp_path: Path, text: str, words: str) -> None:  # type: ignore[no-untyped-def]
    result = run("kit", _kit_file(tmp_path, text))
    assert result.exit_code in (1, 2)
    assert words in result.output and "Traceback" not in result.output
