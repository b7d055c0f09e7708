"""`--db` wherever a newcomer puts it: the demo is built where asked, and its hints name it."""

from __future__ import annotations

import shlex
from pathlib import Path

import pytest
from click.testing import CliRunner

from partsdb.cli import main
from partsdb.services.demo import default_demo_path
from partsdb.storage.database import default_path


@pytest.mark.parametrize("where", ["global", "after", "alias"])
def test_demo_is_built_where_db_says(tmp_path: Path, where: str) -> None:
    target = tmp_path / "shop demo.sqlite"
    args = {"global": ["--db", str(target), "demo", "--no-ui"],
            "after": ["demo", "--no-ui", "--db", str(target)],
            "alias": ["demo", "--no-ui", "--path", str(target)]}[where]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    assert target.is_file()
    assert not default_demo_path().exists() and not default_path().exists()
    # The printed hint runs as written, on the demo's database (not the empty default one).
    hint = next(line.split("   (")[0].strip() for line in result.output.splitlines()
                if line.strip().startswith("partsdb --db"))
    assert hint.startswith(f"partsdb --db {shlex.quote(str(target))} substitute ")
    rerun = CliRunner().invoke(main, shlex.split(hint)[1:])
    assert rerun.exit_code == 0, rerun.output
    assert "Substitutes for OC375" in rerun.output


def test_demo_ignores_partsdb_db_from_the_environment(tmp_path: Path, monkeypatch) -> None:  # type: ignore[no-untyped-def]
    # $PARTSDB_DB names the user's own database: the demo must never replace it.
    own = tmp_path / "own.sqlite"
    monkeypatch.setenv("PARTSDB_DB", str(own))
    result = CliRunner().invoke(main, ["demo", "--no-ui"])
    assert result.exit_code == 0, result.output
    assert default_demo_path().is_file() and not own.exists()


@pytest.mark.parametrize("target", ["postgresql+psycopg://shop@server/partsdb", "DEFAULT"])
def test_demo_refuses_a_server_or_the_own_database(target: str) -> None:
    given = str(default_path()) if target == "DEFAULT" else target
    result = CliRunner().invoke(main, ["demo", "--no-ui", "--db", given])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: --db:") and len(result.stderr.splitlines()) == 1
    assert not default_path().exists()
