"""CLI: ``copy`` a whole shop between databases, ``backup`` it, ``restore`` it, ``upgrade`` it.

Each command is one call into :mod:`partsdb.services.shop`; refusals (a non-empty target, an
existing backup file, a damaged archive) exit 2 with a message, and nothing is changed.
"""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, busy, emit_json, fail, format_option, pass_state


def _notice(state: CliState) -> object:
    return None if state.quiet else (lambda message: click.echo(message, err=True))


def _print_report(report: object, verb: str) -> None:
    from partsdb.services.shop import CopyReport

    assert isinstance(report, CopyReport)
    click.echo(f"{verb} {report.source} -> {report.target}")
    for line in report.lines():
        click.echo(f"  {line}")
    click.echo("verified: row counts per table, every lot's quantity and the ledger sum match")


@click.command("copy")
@click.option("--from", "source", required=True, metavar="PATH|URL",
              help="Database to copy from (a SQLite file or a SQLAlchemy URL).")
@click.option("--to", "target", required=True, metavar="PATH|URL",
              help="Database to copy into (created and brought to the newest schema if needed).")
@click.option("--force", is_flag=True,
              help="Replace everything in a target that already holds data.")
@click.option("--allow-empty", is_flag=True,
              help="With --force: let an empty source empty a target that holds data.")
@format_option("table", "json")
@pass_state
def copy(state: CliState, source: str, target: str, force: bool, allow_empty: bool,
         fmt: str) -> None:
    """Copy a whole shop (devices, places, lots, ledger, swap log) into another database,
    keeping ids, e.g. from a bench's SQLite file to the shop's PostgreSQL server:

    \b
      partsdb copy --from bench.sqlite --to postgresql+psycopg://shop@server/partsdb

    The source is read in one consistent snapshot; the target is written in one transaction
    and committed only when row counts per table, every lot's quantity and the ledger sum
    match the source. A target holding data is refused unless --force is given; an empty
    source never empties it unless --allow-empty is given too. The source must exist and
    hold a partsdb schema: it is opened read-only, never created or upgraded. Give
    passwords through PGPASSFILE or PGPASSWORD rather than in the URL; they are never printed.
    """
    from partsdb.services.shop import copy_database
    from partsdb.storage.database import open_database

    notify = _notice(state)
    source_db = open_database(source, read_only=True, notify=notify)  # type: ignore[arg-type]
    try:
        target_db = open_database(target, read_only=state.read_only,
                                  notify=notify)  # type: ignore[arg-type]
        try:
            with busy(state, "copying", fmt == "json"):
                report = copy_database(source_db, target_db, force=force,
                                       allow_empty=allow_empty)
        finally:
            target_db.dispose()
    finally:
        source_db.dispose()
    if fmt == "json":
        emit_json(report.to_json())
    else:
        _print_report(report, "copied")


@click.command("backup")
@click.argument("dest", type=click.Path(dir_okay=False))
@click.option("--format", "kind", type=click.Choice(["auto", "sqlite", "zip"]), default="auto",
              show_default=True,
              help="sqlite: a SQLite file made with SQLite's online backup API (SQLite databases "
                   "only); zip: one CSV per table plus manifest.json, restorable into SQLite or "
                   "PostgreSQL; auto: zip for a name ending in .zip or a server database, sqlite "
                   "otherwise.")
@click.option("--force", is_flag=True, help="Overwrite DEST if it exists.")
@pass_state
def backup(state: CliState, dest: str, kind: str, force: bool) -> None:
    """Write a consistent backup of the database to DEST while others may keep working.

    A SQLite database is copied with SQLite's online backup API into a single SQLite file; a
    PostgreSQL database is exported, in one REPEATABLE READ snapshot, as a portable zip of
    CSV files (one per table) with a manifest giving the schema revision, row counts and
    checksums. The zip is for `partsdb restore`, not for spreadsheets (use `partsdb export`).
    DEST appears only when complete; an existing DEST is refused unless --force is given.
    """
    from partsdb.services.shop import backup as make_backup

    with busy(state, "backing up"):
        report = make_backup(state.database(), dest, fmt=kind, force=force)
    rows = ", ".join(f"{n} {t}" for t, n in report.tally.rows.items())
    click.echo(f"backed up {state.database().describe()} to {report.path} ({report.format}, "
               f"schema {report.revision}): {rows}; stock total {report.tally.stock_total}")


@click.command("restore")
@click.argument("src", type=click.Path(exists=True, dir_okay=False))
@click.option("--force", is_flag=True,
              help="Replace everything in a database that already holds data.")
@click.option("--allow-empty", is_flag=True,
              help="With --force: let a backup with no rows empty a database that holds data.")
@pass_state
def restore(state: CliState, src: str, force: bool, allow_empty: bool) -> None:
    """Load the backup SRC (a zip or SQLite file from `partsdb backup`) into the database.

    A database holding data is refused unless --force is given; then its whole content is
    replaced in one transaction, committed only when the result matches the backup's counts.
    Every row is checked like an import first; a tampered or damaged archive changes nothing.
    """
    from partsdb.services.shop import restore as load_backup

    with busy(state, "restoring"):
        report = load_backup(state.database(), src, force=force, allow_empty=allow_empty)
    _print_report(report, "restored")


@click.command("upgrade")
@pass_state
def upgrade(state: CliState) -> None:
    """Bring the database's schema to the one this partsdb uses (after a backup).

    A shared PostgreSQL database is never upgraded by ordinary commands, since benches with an
    older partsdb could no longer open it: back it up, update partsdb on every bench, then run
    this once. A SQLite file is upgraded when any command opens it; this does it explicitly.
    """
    from partsdb.storage.database import SCHEMA_HEAD, current_revision, open_database

    if state.read_only:
        fail("--read-only: an upgrade changes the database; run it without --read-only")
    notices: list[str] = []
    db = open_database(state.db_url, upgrade_schema=True, notify=notices.append)
    try:
        for notice in notices:
            click.echo(notice.removeprefix("partsdb: "))
        if not notices:
            click.echo(f"schema {current_revision(db.engine)} of {db.describe()} is current "
                       f"({SCHEMA_HEAD}); nothing to do")
    finally:
        db.dispose()


COMMANDS = (copy, backup, restore, upgrade)
