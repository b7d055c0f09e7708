"""Issue 14 items 8, 10, 11 and 12 at the command line: CSV output guarded, device edit renames
without warnings, --limit and place filters read strictly. Checked through the services."""

from __future__ import annotations

import csv
import io
import warnings
from typing import Any

import pytest
from click.testing import CliRunner
from sqlalchemy import update

from partsdb.cli import main
from partsdb.services import catalog, stock
from partsdb.storage.database import open_database
from partsdb.storage.models import LotRow

FORMULA = "=HYPERLINK(\"http://x\",\"y\")"


@pytest.fixture
def workshop(db_url: str) -> Any:
    db = open_database(db_url, notify=None)
    with db.session() as session:
        catalog.add_device(session, {"designation": "QA1", "kind": "bjt", "polarity": "npn",
                                     "material": "si", "notes": FORMULA, "application": "@sum"})
        stock.receive(session, "QA1", 4, "C1/D01", job="+J1", note="-1 bent lead")
        stock.receive(session, "QA1", 1, "C_", note="'-' marks the emitter")
        session.execute(update(LotRow).values(note="=1+1"))  # a lot note, as an import sets
    yield db_url
    db.dispose()


def _run(url: str, *args: str) -> Any:
    return CliRunner().invoke(main, ["--db", url, *args])


@pytest.mark.parametrize("command", [["device", "list"], ["device", "show", "QA1"],
                                     ["stock", "where", "QA1"], ["stock", "ledger"]])
def test_every_csv_output_is_formula_guarded(workshop: str, command: list[str]) -> None:
    result = _run(workshop, *command, "--format", "csv")
    assert result.exit_code == 0, result.output
    cells = [cell for row in csv.reader(io.StringIO(result.stdout)) for cell in row]
    # OWASP "CSV Injection": no text cell may start with = + - @ (numbers stay numbers).
    texts = [c for c in cells if c and not c.lstrip("+-").replace(".", "").isdigit()]
    assert texts and not [c for c in texts if c.startswith(("=", "+", "-", "@"))]
    guarded = {c for c in texts if c.startswith("'")}
    assert guarded  # each command here shows at least one hostile text, guarded


def test_ledger_change_stays_a_number_in_csv(workshop: str) -> None:
    rows = list(csv.DictReader(io.StringIO(_run(workshop, "stock", "ledger", "--format",
                                                "csv").stdout)))
    assert sorted(int(r["change"]) for r in rows) == [1, 4]


def test_ledger_at_c_underscore_is_that_place_only(workshop: str) -> None:
    db = open_database(workshop, notify=None)
    with db.session() as session:
        stock.receive(session, "QA1", 2, "C1/D02")
    db.dispose()
    rows = list(csv.DictReader(io.StringIO(_run(workshop, "stock", "ledger", "--at", "C_",
                                                "--format", "csv").stdout)))
    assert [r["location"] for r in rows] == ["C_"]


def test_device_edit_new_designation_renames_without_warnings(workshop: str) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # click's UserWarning would fail the test
        result = _run(workshop, "device", "edit", "QA1", "--new-designation", "QA1B")
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    db = open_database(workshop, notify=None)
    with db.session() as session:
        assert catalog.get_device(session, "QA1") is None
        assert catalog.get_device(session, "QA1B").notes == FORMULA  # type: ignore[union-attr]
        assert stock.where(session, "QA1B")[0].quantity == 4  # the stock follows the record
    db.dispose()


@pytest.mark.parametrize("command", [["stock", "ledger"], ["device", "list"]])
@pytest.mark.parametrize("value", ["99999999999999999999", "0", "-1", "1e3", "inf"])
def test_limit_option_is_one_line_and_exit_2(workshop: str, command: list[str],
                                             value: str) -> None:
    result = _run(workshop, *command, "--limit", value)
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: --limit:")
