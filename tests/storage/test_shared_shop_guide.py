"""The shared-shop guide (docs/shared-shop.md) works as written, on a throwaway PostgreSQL server.

Its SQL blocks run verbatim (role, database and password names made unique for the test
cluster) as the server's administrator; a bench then connects as the owner role with only a
``.pgpass`` file (PGPASSFILE) for the password, creates the schema, copies a demo bench in and
looks a part up; the read-only role looks up too, and the server refuses its write in one line
with nothing changed. Last, the guide's pg_dump / pg_restore pair makes a restorable backup.
Reference: PostgreSQL 15 docs ("The Password File", "Client Authentication", GRANT, ALTER
DEFAULT PRIVILEGES, pg_dump, pg_restore).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import create_engine, text
from sqlalchemy.engine import URL, make_url

from partsdb.cli import main
from partsdb.services.demo import build_demo

GUIDE = Path(__file__).resolve().parents[2] / "docs" / "shared-shop.md"
PG_BIN = Path(os.environ.get("PARTSDB_PG_BIN", "/usr/lib/postgresql/15/bin"))

pytestmark = pytest.mark.postgres


def guide_blocks(language: str) -> list[str]:
    return re.findall(rf"^```{language}\n(.*?)^```", GUIDE.read_text(encoding="utf-8"),
                      flags=re.S | re.M)


@pytest.fixture
def admin() -> str:
    url = os.environ.get("PARTSDB_TEST_PG")
    if not url:
        pytest.skip("PostgreSQL tests skipped: set PARTSDB_TEST_PG to a server URL "
                    "(.ci/run starts one)")
    return url


@pytest.fixture
def names(admin: str) -> Iterator[dict[str, str]]:
    """The guide's names, made unique in the shared test cluster; dropped afterwards."""
    tag = uuid.uuid4().hex[:8]
    out = {"shop": f"shop_{tag}", "counter": f"counter_{tag}", "partsdb": f"partsdb_{tag}",
           "partsdb_restored": f"restored_{tag}",
           "change-me-shop": uuid.uuid4().hex, "change-me-counter": uuid.uuid4().hex}
    yield out
    engine = create_engine(admin, isolation_level="AUTOCOMMIT")
    with engine.connect() as conn:
        for db in (out["partsdb"], out["partsdb_restored"]):
            conn.execute(text(f'DROP DATABASE IF EXISTS "{db}" WITH (FORCE)'))
        for role in (out["counter"], out["shop"]):
            conn.execute(text(f'DROP ROLE IF EXISTS "{role}"'))
    engine.dispose()


def as_test_names(sql: str, names: dict[str, str]) -> str:
    for word in sorted(names, key=len, reverse=True):
        sql = re.sub(rf"(?<![\w-]){re.escape(word)}(?![\w-])", names[word], sql)
    return sql


def run_sql(admin: str, block: str) -> None:
    """Statements as psql would run them for the administrator; ``\\connect DB`` switches."""
    url = make_url(admin)
    database = url.database
    statements: list[tuple[str | None, str]] = []
    for line in block.splitlines():
        found = re.fullmatch(r"\\connect (\S+)", line.strip())
        if found:
            database = found.group(1)
            continue
        statements.append((database, line))
    current: str | None = None
    engine = None
    buffer = ""
    for db, line in statements:
        if db != current:
            if engine is not None:
                engine.dispose()
            engine = create_engine(url.set(database=db), isolation_level="AUTOCOMMIT")
            current = db
        buffer += line + "\n"
        if line.rstrip().endswith(";"):
            assert engine is not None
            with engine.connect() as conn:
                conn.exec_driver_sql(buffer)
            buffer = ""
    assert not buffer.strip()
    if engine is not None:
        engine.dispose()


def cli(*args: str) -> object:
    return CliRunner().invoke(main, list(args))


def test_the_guide_sets_up_a_shared_shop(admin: str, names: dict[str, str], tmp_path: Path,
                                         monkeypatch: pytest.MonkeyPatch) -> None:
    sql = guide_blocks("sql")
    assert len(sql) == 2
    for block in sql:
        run_sql(admin, as_test_names(block, names))

    # .pgpass as the guide writes it, for this server; no password anywhere else.
    server = make_url(admin)
    pgpass_lines = [line for block in guide_blocks("text") for line in block.splitlines()
                    if re.fullmatch(r"[\w.]+:\d+:\w+:\w+:\S+", line)]
    assert len(pgpass_lines) == 1
    _host, _port, db, role, password = pgpass_lines[0].split(":")
    passfile = tmp_path / "pgpass"
    passfile.write_text("".join(
        f"{server.host}:{server.port}:{names[db]}:{names[r]}:{names[p]}\n"
        for r, p in ((role, password), ("counter", "change-me-counter"))))
    passfile.chmod(0o600)  # libpq ignores a password file others can read
    monkeypatch.setenv("PGPASSFILE", str(passfile))
    monkeypatch.delenv("PGPASSWORD", raising=False)

    def url(who: str) -> str:
        return URL.create("postgresql+psycopg", names[who], None, server.host, server.port,
                          names["partsdb"]).render_as_string(hide_password=False)

    bench = tmp_path / "bench.sqlite"
    build_demo(bench).dispose()
    for args in (("--db", url("shop"), "init"),
                 ("copy", "--from", str(bench), "--to", url("shop")),
                 ("--db", url("shop"), "stock", "where", "OC372")):
        result = cli(*args)
        assert result.exit_code == 0, (args, result.output)  # type: ignore[attr-defined]
    where = cli("--db", url("counter"), "stock", "where", "OC372", "--format", "json")
    assert where.exit_code == 0, where.output  # type: ignore[attr-defined]
    refused = cli("--db", url("counter"), "stock", "receive", "OC372", "5", "--to", "C1/D01/B1")
    assert refused.exit_code == 2  # type: ignore[attr-defined]
    lines = refused.stderr.splitlines()  # type: ignore[attr-defined]
    assert len(lines) == 1 and "permission denied" in lines[0] and "nothing was changed" in lines[0]
    again = cli("--db", url("counter"), "stock", "where", "OC372", "--format", "json")
    assert again.output == where.output  # type: ignore[attr-defined]

    # Backups: the guide's pg_dump and pg_restore, then the restored copy answers the same.
    if not (PG_BIN / "pg_dump").is_file():
        pytest.skip("pg_dump not installed")
    env = {**os.environ, "PGHOST": str(server.host), "PGPORT": str(server.port),
           "PGUSER": str(server.username), "PGPASSWORD": str(server.password)}
    dump = tmp_path / "partsdb.dump"
    commands = [line for block in guide_blocks("text") for line in block.splitlines()
                if line.startswith(("pg_dump ", "createdb ", "pg_restore "))]
    assert [c.split()[0] for c in commands] == ["pg_dump", "createdb", "pg_restore"]
    for command in commands:
        # The dated file in /var/backups (by the shell's $(date +%F), or a date) is a temporary.
        command = re.sub(r"/var/backups/partsdb/partsdb-(\$\(date \+%F\)|[\d-]+)\.dump",
                         "DUMPFILE", command)
        words = [str(dump) if w == "DUMPFILE" else w
                 for w in as_test_names(command, names).split()]
        tool = PG_BIN / words[0] if (PG_BIN / words[0]).is_file() else shutil.which(words[0])
        done = subprocess.run([str(tool), *words[1:]], env=env, capture_output=True, text=True,
                              timeout=120)
        assert done.returncode == 0, (command, done.stderr)
    restored = URL.create("postgresql+psycopg", names["shop"], None, server.host, server.port,
                          names["partsdb_restored"]).render_as_string(hide_password=False)
    monkeypatch.setenv("PGPASSFILE", str(passfile))
    passfile.write_text(passfile.read_text() + f"{server.host}:{server.port}:"
                        f"{names['partsdb_restored']}:{names['shop']}:{names['change-me-shop']}\n")
    copy = cli("--db", restored, "stock", "where", "OC372", "--format", "json")
    assert copy.exit_code == 0 and copy.output == where.output  # type: ignore[attr-defined]
