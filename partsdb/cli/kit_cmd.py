"""CLI: ``kit`` (a repair kit for a unit's parts list: pick list, and taking it)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from partsdb.cli.common import (
    CliState,
    emit_csv,
    emit_json,
    fail,
    format_option,
    pass_state,
    print_table,
)


@click.command()
@click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@format_option("table", "csv", "json", "md", "pdf")
@click.option("--output", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Write the kit sheet (md or pdf; the format follows --format, else the "
                   "file name) to this file instead of the screen.")
@click.option("--take", is_flag=True,
              help="Take every picked part (one transaction: all or nothing) and record each "
                   "substitution in the swap log; needs --job.")
@click.option("--job", default=None,
              help="Job reference, e.g. J-2611: needed by --take, printed on the kit sheet.")
@click.option("--force", is_flag=True, help="Replace the --output file if it exists.")
@pass_state
def kit(state: CliState, file: Path, fmt: str, output: Path | None, take: bool,
        job: str | None, force: bool) -> None:
    """A repair kit for the parts list in FILE (CSV): per line, the drawers to take it from, or
    the best in-stock substitute, or "buy"; then the pick list sorted by drawer.

    FILE columns: reference, designation, quantity, and optionally vce_peak, ic_peak, power,
    heatsink, ambient, freq and policy. Lines that need the same part are counted together.
    --format md or pdf gives the printable kit sheet (job and date, lines, pick list,
    cautions, sign-off fields); pdf needs --output.
    """
    from partsdb.services import kit as service

    if take and not job:
        fail("--job: missing; --take records the parts against a job reference (such as J-2611)")
    sheet_fmt = fmt if fmt in ("md", "pdf") else None
    if output is not None and sheet_fmt is None:
        if fmt != "table":
            fail(f"--output: writes the md or pdf kit sheet; use --format md or --format pdf "
                 f"(got {fmt})")
        from partsdb.services.kitsheet import sheet_format

        sheet_fmt = sheet_format(output)
    if job and not take and sheet_fmt is None:
        fail("--job: only with --take or a kit sheet (--format md or pdf)")
    if fmt == "pdf" and output is None:
        fail("--output: a pdf kit sheet needs a file name, e.g. --output kit.pdf")
    db = state.database()
    plan = service.plan_kit(db, service.read_kit(file))
    if sheet_fmt is not None:
        _sheet(state, plan, sheet_fmt, output, job, take, force)
        return
    taken = service.take_kit(db, plan, job or "") if take else None
    data = plan.to_json()
    if fmt == "json":
        emit_json(data)
    elif fmt == "csv":
        emit_csv(("location", "part", "quantity"),
                 [(p["location"], p["part"], p["quantity"]) for p in data["pick_list"]])
    else:
        print_table("Kit", ("Ref.", "Designation", "Qty", "Action", "Part", "Verdict", "From"),
                    [(ln["reference"], ln["designation"], ln["quantity"], ln["action"],
                      ln["part"], ln["verdict"] or "—",
                      ", ".join(f"{p['location']} x{p['quantity']}" for p in ln["picks"]) or "—")
                     for ln in data["lines"]])
        print_table("Pick list (by drawer)", ("Drawer", "Part", "Qty"),
                    [(p["location"], p["part"], p["quantity"]) for p in data["pick_list"]])
        from partsdb.cautions import SHORT_CAUTION

        click.echo(SHORT_CAUTION)
    if taken is not None:
        click.echo(f"took {taken} part(s) for job {job}", err=True)


def _sheet(state: CliState, plan: Any, fmt: str, output: Path | None, job: str | None,
           take: bool, force: bool) -> None:
    """The kit sheet, printed or written; with --take the file is put in place only once the
    take has gone through (a refused take leaves no sheet)."""
    from partsdb.services import kit as service
    from partsdb.services import kitsheet

    sheet = kitsheet.make_kit_sheet(plan, job=job)
    taken: list[int] = []

    def take_it() -> None:
        taken.append(service.take_kit(state.database(), plan, job or ""))

    if output is None:
        if take:
            take_it()
        click.echo(kitsheet.render(sheet, fmt).decode("utf-8"), nl=False)
    else:
        from partsdb.services.files import protected_files

        written = kitsheet.write_kit_sheet(sheet, output, fmt, force=force,
                                           protect=protected_files(state.database()),
                                           then=take_it if take else None)
        click.echo(f"kit sheet written to {written}")
    if taken:
        click.echo(f"took {taken[0]} part(s) for job {job}", err=True)


COMMANDS = (kit,)
