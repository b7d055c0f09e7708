"""CLI: ``import`` and ``export`` of devices and stock as CSV (all-or-nothing imports)."""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, pass_state


def _report(report: object) -> None:
    from partsdb.services.exchange import ImportReport

    assert isinstance(report, ImportReport)
    for line, message in report.warnings:
        click.echo(f"warning: line {line}: {message}", err=True)
    click.echo(f"imported: {report.summary()}")


@click.group("import")
def import_group() -> None:
    """Import CSV files; a file with any bad row writes nothing and lists every bad line."""


@import_group.command("devices")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--strict", is_flag=True,
              help="Treat designation/field contradictions as errors (refuse the file).")
@pass_state
def import_devices(state: CliState, file: str, strict: bool) -> None:
    """Import device records. Columns are the device fields (see `partsdb device add --help`);
    cells may carry units ("40V", "200mA"); re-importing updates in place. FILE `-` reads
    standard input."""
    from partsdb.services import exchange
    from partsdb.services.files import input_path

    with input_path(file) as path, state.database().session() as session:
        report = exchange.import_devices(session, path, strict=strict)
    _report(report)


@import_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False))
@pass_state
def import_stock(state: CliState, file: str) -> None:
    """Import lots: columns designation, location, quantity, condition, note. Each row sets
    that lot to the quantity given (a count, recorded in the ledger). FILE `-` reads standard
    input."""
    from partsdb.services import exchange
    from partsdb.services.files import input_path

    with input_path(file) as path, state.database().session() as session:
        report = exchange.import_stock(session, path)
    _report(report)


@click.group("export")
def export_group() -> None:
    """Export CSV files (SI base units; spreadsheet formulas neutralised)."""


@export_group.command("devices")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--force", is_flag=True, help="Replace FILE if it exists.")
@pass_state
def export_devices(state: CliState, file: str, force: bool) -> None:
    """Export every device record to FILE (`-`: standard output). FILE appears only when
    complete; an existing FILE or a file of the open database is refused (--force replaces an
    existing FILE, never the database)."""
    from partsdb.services import exchange
    from partsdb.services.files import atomic_open, protected_files

    db = state.database()
    with atomic_open(file, force=force, protect=protected_files(db),
                     what="export devices") as handle, db.session() as session:
        n = exchange.export_devices(session, handle)
    click.echo(f"exported {n} device(s) to {'standard output' if file == '-' else file}",
               err=file == "-")


@export_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--force", is_flag=True, help="Replace FILE if it exists.")
@pass_state
def export_stock(state: CliState, file: str, force: bool) -> None:
    """Export every lot to FILE (`-`: standard output); written like `export devices`."""
    from partsdb.services import exchange
    from partsdb.services.files import atomic_open, protected_files

    db = state.database()
    with atomic_open(file, force=force, protect=protected_files(db),
                     what="export stock") as handle, db.session() as session:
        n = exchange.export_stock(session, handle)
    click.echo(f"exported {n} lot(s) to {'standard output' if file == '-' else file}",
               err=file == "-")


COMMANDS = (import_group, export_group)
