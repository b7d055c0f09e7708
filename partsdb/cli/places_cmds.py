"""CLI: the ``place`` group: add, list, rename, merge, remove, label."""

from __future__ import annotations

import click

from partsdb.cli.common import CliState, emit_json, format_option, pass_state


@click.group()
def place() -> None:
    """Places (cabinets, drawers, bins) as records: a tree with labels.

    Places are matched case-insensitively and numbers by value within a segment (C3/D2 is
    C3/D02); a path is kept as first written.
    """


@place.command("add")
@click.argument("path")
@click.option("--label", metavar="TEXT", help='What it holds, such as "Si PNP audio, TO-92".')
@format_option("table", "json")
@pass_state
def add(state: CliState, path: str, label: str | None, fmt: str) -> None:
    """Add a place (and any missing parents); refused if it exists in any spelling."""
    from partsdb.services import places

    info = state.database().transact(lambda session: places.add_place(session, path, label))
    if fmt == "json":
        emit_json(info.to_json())
    else:
        click.echo(f"added place {info.path}" + (f" ({info.label})" if info.label else ""))


@place.command("list")
@click.argument("under", required=False, metavar="[PATH]")
@format_option("table", "json")
@pass_state
def list_(state: CliState, under: str | None, fmt: str) -> None:
    """The place tree with labels, lots and parts held (here, and here plus below)."""
    from partsdb.services import places

    with state.database().session() as session:
        rows = places.list_places(session, under)
    if fmt == "json":
        emit_json([r.to_json() for r in rows])
        return
    from partsdb.cli.common import print_table

    print_table(f"Places: {len(rows)}", ["Place", "Label", "Lots", "Parts", "With below"],
                [["  " * r.depth + r.path.rsplit("/", 1)[-1], r.label, r.lots, r.quantity,
                  r.total] for r in rows])


@place.command("rename")
@click.argument("old")
@click.argument("new")
@pass_state
def rename(state: CliState, old: str, new: str) -> None:
    """Rename a place; the places in it follow. Refused if NEW is another place."""
    from partsdb.services import places

    path = state.database().transact(lambda session: places.rename_place(session, old, new))
    click.echo(f"renamed {old} to {path}")


@place.command("merge")
@click.argument("from_", metavar="FROM")
@click.argument("into")
@format_option("table", "json")
@pass_state
def merge(state: CliState, from_: str, into: str, fmt: str) -> None:
    """Put place FROM into INTO: its lots move (a 'merge' ledger entry each), its sub-places
    follow, and FROM is deleted."""
    from partsdb.services import places

    report = state.database().transact(
        lambda session: places.merge_places(session, from_, into))
    if fmt == "json":
        emit_json(report.to_json())
    else:
        click.echo(f"merged {from_} into {report.into}: {report.lots_moved} lots, "
                   f"{report.parts_moved} parts, {report.places_removed} places removed")


@place.command("remove")
@click.argument("path")
@pass_state
def remove(state: CliState, path: str) -> None:
    """Delete an empty place (no lots, no sub-places)."""
    from partsdb.services import places

    removed = state.database().transact(lambda session: places.remove_place(session, path))
    click.echo(f"removed place {removed}")


@place.command("label")
@click.argument("path")
@click.argument("text")
@pass_state
def label(state: CliState, path: str, text: str) -> None:
    """Set what a place's label says ("" clears it); shown in the Drawers tree, stock tables
    and printed labels."""
    from partsdb.services import places

    now = state.database().transact(lambda session: places.set_label(session, path, text))
    click.echo(f"label of {path}: {now}" if now else f"label of {path} cleared")


COMMANDS = (place,)
