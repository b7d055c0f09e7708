"""CLI: ``kit`` (a repair kit for a unit's parts list: pick list, and taking it)."""

from __future__ import annotations

from pathlib import Path

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
@format_option("table", "csv", "json", "md")
@click.option("--take", is_flag=True,
              help="Take every picked part (one transaction: all or nothing) and record each "
                   "substitution in the swap log; needs --job.")
@click.option("--job", default=None, help="Job reference for --take, e.g. J-2611.")
@pass_state
def kit(state: CliState, file: Path, fmt: str, take: bool, job: str | None) -> None:
    """A repair kit for the parts list in FILE (CSV): per line, the drawers to take it from, or
    the best in-stock substitute, or "buy"; then the pick list sorted by drawer.

    FILE columns: reference, designation, quantity, and optionally vce_peak, ic_peak, power,
    heatsink, ambient, freq and policy. Lines that need the same part are counted together.
    """
    from partsdb.services import kit as service

    if take and not job:
        fail("--job: missing; --take records the parts against a job reference (such as J-2611)")
    if job and not take:
        fail("--job: only with --take")
    plan = service.plan_kit(state.database(), service.read_kit(file))
    taken = service.take_kit(state.database(), plan, job or "") if take else None
    data = plan.to_json()
    if fmt == "json":
        emit_json(data)
    elif fmt == "csv":
        emit_csv(("location", "part", "quantity"),
                 [(p["location"], p["part"], p["quantity"]) for p in data["pick_list"]])
    elif fmt == "md":
        click.echo(_markdown(data), nl=False)
    else:
        print_table("Kit", ("Ref.", "Designation", "Qty", "Action", "Part", "Verdict", "From"),
                    [(ln["reference"], ln["designation"], ln["quantity"], ln["action"],
                      ln["part"], ln["verdict"] or "—",
                      ", ".join(f"{p['location']} x{p['quantity']}" for p in ln["picks"]) or "—")
                     for ln in data["lines"]])
        print_table("Pick list (by drawer)", ("Drawer", "Part", "Qty"),
                    [(p["location"], p["part"], p["quantity"]) for p in data["pick_list"]])
    if taken is not None:
        click.echo(f"took {taken} part(s) for job {job}", err=True)


def _markdown(data: dict) -> str:  # type: ignore[type-arg]
    out = ["# Repair kit", "", "| Ref. | Designation | Qty | Action | Part | Verdict |",
           "|---|---|---|---|---|---|"]
    out += [f"| {ln['reference']} | {ln['designation']} | {ln['quantity']} | {ln['action']} | "
            f"{ln['part']} | {ln['verdict'] or '—'} |" for ln in data["lines"]]
    out += ["", "## Pick list (by drawer)", "", "| Drawer | Part | Qty |", "|---|---|---|"]
    out += [f"| {p['location']} | {p['part']} | {p['quantity']} |" for p in data["pick_list"]]
    return "\n".join(out) + "\n"


COMMANDS = (kit,)
