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
    cells may carry units ("40V", "200mA"); re-importing updates in place."""
    from partsdb.services import exchange

    with state.database().session() as session:
        report = exchange.import_devices(session, file, strict=strict)
    _report(report)


@import_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False))
@pass_state
def import_stock(state: CliState, file: str) -> None:
    """Import lots: columns designation, location, quantity, condition, note. Each row sets
    that lot to the quantity given (a count, recorded in the ledger)."""
    from partsdb.services import exchange

    with state.database().session() as session:
        report = exchange.import_stock(session, file)
    _report(report)


@click.group("export")
def export_group() -> None:
    """Export CSV files (SI base units; spreadsheet formulas neutralised)."""


@export_group.command("devices")
@click.argument("file", type=click.Path(dir_okay=False, writable=True))
@pass_state
def export_devices(state: CliState, file: str) -> None:
    """Export every device record."""
    from partsdb.services import exchange

    with state.database().session() as session:
        n = exchange.export_devices(session, file)
    click.echo(f"exported {n} device(s) to {file}")


@export_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False, writable=True))
@pass_state
def export_stock(state: CliState, file: str) -> None:
    """Export every lot."""
    from partsdb.services import exchange

    with state.database().session() as session:
        n = exchange.export_stock(session, file)
    click.echo(f"exported {n} lot(s) to {file}")


COMMANDS = (import_group, export_group)
