"""CLI: ``import`` and ``export`` of devices and stock as CSV (all-or-nothing imports)."""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, busy, pass_state


def _report(report: object) -> None:
    from partsdb.services.exchange import ImportReport

    assert isinstance(report, ImportReport)
    for line, message in report.warnings:
        click.echo(f"warning: line {line}: {message}", err=True)
    click.echo(f"imported: {report.summary()}")


class _ImportGroup(click.Group):
    """`partsdb import FILE` is `partsdb import sheet FILE`; `import devices`/`import stock`
    stay subcommands (a file called "devices" is given as ./devices)."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        first = next((a for a in args if not a.startswith("-") or a == "-"), None)
        if first is not None and first not in self.commands and not any(
                a in ("--help", "-h") for a in args[:1]):
            args = ["sheet", *args]
        return super().parse_args(ctx, args)


@click.group("import", cls=_ImportGroup)
def import_group() -> None:
    """Import files; a file with any bad row writes nothing and lists every bad line.
    `partsdb import FILE` reads your own parts sheet (devices and, when present, drawers and
    counts); `import devices` and `import stock` read the exact export columns."""


def _pairs(values: tuple[str, ...], option: str) -> dict[str, str]:
    from partsdb.services.sheet import parse_pairs

    return parse_pairs(list(values), option)


def _sheet_output(report: object, fmt: str, quiet: bool) -> None:
    from partsdb.cli.common import emit_json
    from partsdb.services.sheet import SheetReport

    assert isinstance(report, SheetReport)
    if fmt == "json":
        emit_json(report.to_json())
        return
    for notice in report.notices:
        click.echo(f"note: {notice}", err=True)
    if not quiet:
        mapped = [f"{c.header} -> {c.field}" + (f" [{c.unit}]" if c.unit else "")
                  if c.field else f"{c.header} (ignored)" for c in report.columns]
        click.echo("columns: " + ", ".join(mapped), err=True)
    for row in report.assumed:
        click.echo(f"assumed: line {row['line']}: {row['designation']}: "
                   + ", ".join(row["assumed"]), err=True)
    for row in report.warnings:
        click.echo(f"warning: line {row['line']}: {row['designation']}: {row['message']}",
                   err=True)
    if report.dry_run:
        for label, rows in (("add", report.added), ("update", report.updated),
                            ("unchanged", report.unchanged)):
            for row in rows:
                where = f" at {row['location']} ({row['condition']})" if row["what"] == "lot" else ""
                text = f"{label}: line {row['line']}: {row['what']} {row['designation']}{where}"
                if "changes" in row:
                    text += ": " + ", ".join(f"{k} {old!r} -> {new!r}"
                                             for k, (old, new) in row["changes"].items())
                elif "quantity" in row:
                    text += f": {row['quantity']} pcs"
                click.echo(text)
    click.echo(("would import: " if report.dry_run else "imported: ") + report.summary())


@import_group.command("sheet")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--map", "maps", multiple=True, metavar='"HEADER=FIELD"',
              help="Read the column HEADER as FIELD (repeatable).")
@click.option("--unit", "units", multiple=True, metavar="FIELD=UNIT",
              help="Unit of the bare numbers in FIELD's column, e.g. ic_max=mA (repeatable); a "
                   "cell's own unit still wins.")
@click.option("--ignore", "ignores", multiple=True, metavar="COLUMN",
              help="Leave this column out (repeatable).")
@click.option("--ignore-unknown", is_flag=True, help="Leave out every column that maps to no field.")
@click.option("--profile", default=None,
              help="Use [import.profiles.NAME] of the config file (map, unit, ignore); options "
                   "given here add to it.")
@click.option("--sheet", "sheet_name", default=None, help="Sheet of an .xlsx/.ods (default: the first).")
@click.option("--strict", is_flag=True,
              help="Refuse rows with warnings (implausible values, contradictions).")
@click.option("--dry-run", is_flag=True,
              help="Show what would be added, updated and left alone; write nothing.")
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text",
              help="json: added, updated, unchanged, warnings, errors (rows with line numbers).")
@pass_state
def import_sheet(state: CliState, file: str, maps: tuple[str, ...], units: tuple[str, ...],
                 ignores: tuple[str, ...], ignore_unknown: bool, profile: str | None,
                 sheet_name: str | None, strict: bool, dry_run: bool, fmt: str) -> None:
    """Import your own parts sheet (CSV with any usual delimiter and encoding, .xlsx or .ods):
    headers such as "Type", "Vce (V)", "Ic (mA)", "hFE", "Case", "Drawer", "Qty" are
    recognised; rows with a drawer and a count become lots; all or nothing. `partsdb import
    FILE` is short for this. FILE `-` reads standard input (CSV)."""
    from partsdb.errors import InvalidInput
    from partsdb.services import sheet
    from partsdb.services.exchange import ImportRejected
    from partsdb.services.files import input_path

    options = sheet.SheetOptions(strict=strict, sheet=sheet_name)
    if profile is not None:
        from partsdb.services.config import load_import_profile

        table = load_import_profile(profile)
        options.map.update(table.get("map", {}))
        options.units.update(table.get("unit", {}))
        options.ignore.extend(table.get("ignore", []))
        options.ignore_unknown = bool(table.get("ignore_unknown", False))
    options.map.update(_pairs(maps, "--map"))
    options.units.update(_pairs(units, "--unit"))
    options.ignore.extend(ignores)
    options.ignore_unknown = options.ignore_unknown or ignore_unknown
    try:
        with busy(state, "importing", fmt == "json"), input_path(file) as path, \
                state.database().session() as session:
            report = sheet.import_sheet(session, path, options, dry_run=dry_run)
            if dry_run:
                session.rollback()
    except InvalidInput as err:
        if fmt != "json":
            raise
        from partsdb.cli.common import emit_json
        from partsdb.services.sheet import error_rows

        problems = err.problems if isinstance(err, ImportRejected) else \
            [(1, line) for line in str(err).splitlines()]
        emit_json({"added": [], "updated": [], "unchanged": [], "warnings": [], "assumed": [],
                   "errors": error_rows(problems)})
        raise SystemExit(err.exit_code) from None
    _sheet_output(report, fmt, state.quiet)


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

    with busy(state, "importing devices"), input_path(file) as path, \
            state.database().session() as session:
        report = exchange.import_devices(session, path, strict=strict)
    _report(report)


@import_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False))
@pass_state
def import_stock(state: CliState, file: str) -> None:
    """Import lots: columns designation, location, quantity, condition, note. Each row sets
    that lot to the quantity given: a new lot enters the ledger as a receipt, a changed one as
    a count (both noted "import"). FILE `-` reads standard input."""
    from partsdb.services import exchange
    from partsdb.services.files import input_path

    with busy(state, "importing lots"), input_path(file) as path, \
            state.database().session() as session:
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
    from partsdb.services import export
    from partsdb.services.files import atomic_open, protected_files

    db = state.database()
    with busy(state, "exporting devices"), atomic_open(
            file, force=force, protect=protected_files(db), what="export devices") as handle, \
            db.session() as session:
        n = export.export_devices(session, handle)
    click.echo(f"exported {n} device(s) to {'standard output' if file == '-' else file}",
               err=file == "-")


@export_group.command("stock")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--force", is_flag=True, help="Replace FILE if it exists.")
@pass_state
def export_stock(state: CliState, file: str, force: bool) -> None:
    """Export every lot to FILE (`-`: standard output); written like `export devices`."""
    from partsdb.services import export
    from partsdb.services.files import atomic_open, protected_files

    db = state.database()
    with busy(state, "exporting lots"), atomic_open(
            file, force=force, protect=protected_files(db), what="export stock") as handle, \
            db.session() as session:
        n = export.export_stock(session, handle)
    click.echo(f"exported {n} lot(s) to {'standard output' if file == '-' else file}",
               err=file == "-")


COMMANDS = (import_group, export_group)
