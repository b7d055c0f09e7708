"""Every deliberate error carries its documented exit code, and the CLI ends on one line."""

from __future__ import annotations

import pytest
from click.testing import CliRunner

from partsdb import errors
from partsdb.bias import BiasError
from partsdb.cli import main
from partsdb.derating import PolicyError
from partsdb.device import InvalidRecord
from partsdb.ranking import SpecError
from partsdb.services.catalog import CatalogError, NotFound
from partsdb.services.config import ConfigError
from partsdb.services.demo import DemoError
from partsdb.services.exchange import ImportRejected
from partsdb.services.shop import BackupError
from partsdb.services.stock import StockError
from partsdb.services.swaplog import SwapError
from partsdb.storage.database import DatabaseError, ReadOnlyError
from partsdb.units import UnitError


@pytest.mark.parametrize(("cls", "code"), [
    (NotFound, 1),
    (InvalidRecord, 2), (ImportRejected, 2), (CatalogError, 2), (StockError, 2), (UnitError, 2),
    (PolicyError, 2), (ConfigError, 2), (SpecError, 2), (BiasError, 2), (SwapError, 2),
    (BackupError, 2), (ReadOnlyError, 2),
    (DatabaseError, 3), (DemoError, 3),
])
def test_each_error_carries_its_exit_code(cls: type, code: int) -> None:
    assert issubclass(cls, errors.PartsdbError)
    assert cls.exit_code == code


def test_missing_seed_folder_is_one_line_and_exit_3(tmp_path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    monkeypatch.setenv("PARTSDB_SEED", str(tmp_path / "nowhere"))
    target = tmp_path / "demo.sqlite"
    result = CliRunner().invoke(main, ["demo", "--no-ui", "--path", str(target)])
    assert result.exit_code == 3, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: demo seed files not found")
    assert not target.exists()



@pytest.mark.parametrize(("args", "expected"), [
    (["substitute", "--polarity", "npn", "--vce-peak", "40xV"],
     "error: Invalid value for '--vce-peak': vce_peak: '40xV' is not valid; expected a voltage"),
    (["check", "QZ1", "--vce", "9", "--ic", "1mA", "--ambient", "hot"],
     "error: Invalid value for '--ambient'"),
    (["stock", "receive", "QZ1", "-3", "--to", "C1/D01"],
     "error: quantity: '-3' is not valid; expected a whole number from 1 to 1,000,000"),
])
def test_a_value_that_does_not_read_is_one_line_exit_2(tmp_path, args, expected) -> None:  # type: ignore[no-untyped-def]
    db = tmp_path / "never.sqlite"
    result = CliRunner().invoke(main, ["--db", str(db), *args])
    assert result.exit_code == 2, result.output
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(expected), lines
    assert not db.exists()


def test_a_mistyped_db_file_is_not_created(tmp_path) -> None:  # type: ignore[no-untyped-def]
    """A look-up or a change on a --db file that does not exist creates nothing (exit 3, one
    line naming the file and `init`); `init` creates it."""
    typo = tmp_path / "shpo.sqlite"
    for args in (["stock", "where", "OC375"], ["device", "add", "QZ1", "--polarity", "npn"]):
        result = CliRunner().invoke(main, ["--db", str(typo), *args])
        assert result.exit_code == 3, result.output
        assert len(result.stderr.strip().splitlines()) == 1 and "init" in result.stderr
        assert not typo.exists()
    assert CliRunner().invoke(main, ["--db", str(typo), "-q", "init"]).exit_code == 0
    assert typo.exists()


def test_db_after_the_command_is_the_same_as_before_it(tmp_path) -> None:  # type: ignore[no-untyped-def]
    shop = tmp_path / "shop.sqlite"
    assert CliRunner().invoke(main, ["--db", str(shop), "-q", "init"]).exit_code == 0
    added = CliRunner().invoke(main, ["device", "add", "QZ7", "--polarity", "npn", "--kind", "bjt",
                                      "--material", "si",
                                      "--db", str(shop)])
    assert added.exit_code == 0, added.output
    before = CliRunner().invoke(main, ["--db", str(shop), "device", "show", "QZ7",
                                       "--format", "json"])
    after = CliRunner().invoke(main, ["device", "show", "QZ7", "--format", "json", "--db",
                                      str(shop)])
    assert after.exit_code == 0 and after.stdout == before.stdout
