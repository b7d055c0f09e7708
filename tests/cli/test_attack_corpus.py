"""The attack corpus (tests/attack_corpus/inputs): hostile CSV files, designations and quantities.

Each case is refused with its documented exit code (the file or JSON entry gives it; 2 = invalid
input, errors.py), with an error line and no traceback, and the database is unchanged: every row
of every table is dumped before and after and compared. Run once per backend, so SQLite and
PostgreSQL refuse the same input in the same words.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner, Result

from partsdb.cli import main
from partsdb.services import catalog, stock
from partsdb.storage.database import open_database
from tests.storage.workers import dump

CORPUS = Path(__file__).resolve().parent.parent / "attack_corpus" / "inputs"


def _load(name: str) -> list[dict[str, Any]]:
    return list(json.loads((CORPUS / name).read_text(encoding="utf-8")))


def _workshop(url: str) -> Any:
    db = open_database(url, notify=None)
    with db.session() as session:
        catalog.add_device(session, {"designation": "QA1", "kind": "bjt", "polarity": "npn",
                                     "material": "si", "vceo": "40V", "notes": "kept"})
        stock.receive(session, "QA1", 5, "C1/D01", job="J-1", note="first")
    return db


def _refused(result: Result, code: int, one_line: bool, case: str) -> None:
    assert result.exit_code == code, f"{case}: exit {result.exit_code}: {result.output}"
    assert result.exception is None or isinstance(result.exception, SystemExit), case
    err = result.stderr.strip()
    assert err.startswith(("error:", "Error:")), f"{case}: {err[:200]}"
    assert "Traceback" not in result.output and "[SQL:" not in err and "sqlalche.me" not in err
    if one_line:
        assert len(err.splitlines()) == 1, f"{case}: {err[:300]}"


def test_every_csv_case_is_refused_and_writes_nothing(db_url: str) -> None:
    db = _workshop(db_url)
    before = dump(db)
    cases = _load("csv_cases.json")
    assert len(cases) == len(list(CORPUS.glob("*.csv")))  # every file in the corpus has a case
    for case in cases:
        result = CliRunner().invoke(main, ["--db", db_url, *case["command"],
                                           str(CORPUS / case["file"])])
        _refused(result, case["exit"], one_line=False, case=case["file"])
        assert dump(db) == before, case["file"]
    db.dispose()


def test_every_hostile_designation_is_refused_and_writes_nothing(db_url: str) -> None:
    db = _workshop(db_url)
    before = dump(db)
    for case in _load("hostile_designations.json"):
        result = CliRunner().invoke(main, ["--db", db_url, "device", "add", case["value"],
                                           "--kind", "bjt", "--polarity", "npn",
                                           "--material", "si"])
        _refused(result, case["exit"], one_line=True, case=case["why"])
        assert dump(db) == before, case["why"]
    db.dispose()


@pytest.mark.parametrize("verb", ["receive", "take", "count"])
def test_every_hostile_quantity_is_refused_and_writes_nothing(db_url: str, verb: str) -> None:
    db = _workshop(db_url)
    before = dump(db)
    place = {"receive": "--to", "take": "--from", "count": "--at"}[verb]
    for case in _load("hostile_quantities.json"):
        if verb == "count" and case["value"] == "0":
            continue  # a stock-take of 0 is a valid count
        result = CliRunner().invoke(main, ["--db", db_url, "stock", verb, "QA1", place,
                                           "C1/D01", "--", case["value"]])
        _refused(result, case["exit"], one_line=True, case=f"{verb} {case['value']!r}")
        assert "quantity" in result.stderr
        assert dump(db) == before, case["value"]
    db.dispose()


def test_every_fet_stress_case_is_refused_in_one_line(db_url: str) -> None:
    """The field-effect stress options (hostile_fet_stress.json): bad values, and a FET stress
    for a bipolar original, are refused with exit 2 in one line naming the option; nothing
    changes."""
    db = _workshop(db_url)
    before = dump(db)
    for case in _load("hostile_fet_stress.json"):
        result = CliRunner().invoke(main, ["--db", db_url, "substitute", "QA1", *case["args"]])
        _refused(result, case["exit"], one_line=True, case=" ".join(case["args"]))
        assert case["words"] in result.stderr, result.stderr
        assert dump(db) == before, case["args"]
    db.dispose()


def test_every_hostile_fet_field_is_refused_naming_the_field(db_url: str) -> None:
    """FET fields (device add with the options derived from device.FIELDS): non-finite numbers,
    stray ± signs, wrong units, wrong signs for the channel, fields of the other kind; each one
    line naming the field, exit 2, nothing written."""
    db = _workshop(db_url)
    before = dump(db)
    for case in _load("hostile_fet_fields.json"):
        result = CliRunner().invoke(main, ["--db", db_url, "device", "add", "QF9", *case["args"]])
        _refused(result, case["exit"], one_line=True, case=case["why"])
        assert case["field"] in result.stderr, f"{case['why']}: {result.stderr}"
        assert dump(db) == before, case["why"]
    db.dispose()


def test_every_fet_circuit_case_is_refused_and_writes_nothing(db_url: str) -> None:
    db = _workshop(db_url)
    with db.session() as session:
        catalog.add_device(session, {"designation": "QJ1", "kind": "jfet", "polarity": "n",
                                     "material": "si", "idss_min": "2mA", "idss_max": "8mA",
                                     "vgs_off_min": "-1V", "vgs_off_max": "-4V"})
        catalog.add_device(session, {"designation": "QM1", "kind": "mosfet", "material": "si",
                                     "mode": "enhancement", "polarity": "n", "vds": "100V",
                                     "id_max": "20A", "rds_on": "0.1", "rds_on_vgs": "10V",
                                     "tj_max": "150", "ptot": "50W", "ptot_ref": "case"})
    before = dump(db)
    for case in _load("fet_circuit_cases.json"):
        result = CliRunner().invoke(main, ["--db", db_url, *case["command"]])
        _refused(result, case["exit"], one_line=True, case=case["why"])
        assert dump(db) == before, case["why"]
    db.dispose()
