"""CLI: ``init``, ``demo`` and the ``device`` group (add, show, edit, list, remove)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import click

from partsdb.cli.common import (
    CliState,
    emit_csv,
    emit_json,
    fail,
    format_option,
    load_device,
    pass_state,
    print_table,
)
from partsdb.device import FIELD_BY_NAME, FIELDS, Device


@click.command()
@pass_state
def init(state: CliState) -> None:
    """Create the database (or bring an existing one to the newest schema) and say where it is."""
    db = state.database()
    click.echo(f"database ready: {db.describe()}")


@click.command()
@click.option("--no-ui", is_flag=True, help="Build the demo and print a summary instead of "
                                           "opening the terminal UI.")
@click.option("--db", "--path", "path", type=click.Path(dir_okay=False), default=None,
              metavar="PATH",
              help="Where to build the demo database, a SQLite file (default: the global --db "
                   "when given, else partsdb-demo.sqlite in your user data directory). An "
                   "earlier demo there is replaced; any other file is refused unless --force.")
@click.option("--force", is_flag=True,
              help="Replace an existing file that is not a demo database (never your working "
                   "database).")
@click.pass_context
def demo(ctx: click.Context, no_ui: bool, path: str | None, force: bool) -> None:
    """Build a fresh demo workshop database (invented parts and drawers) and open it.

    The demo database is separate from your own: it never replaces the default database,
    and is refused under --read-only. `partsdb --db X demo` and `partsdb demo --db X` both
    build it in X (an existing X that is not a demo only with --force).
    """
    import shlex

    from partsdb.services.demo import (
        build_demo,
        check_demo_target,
        demo_summary,
        demo_target,
    )

    state: CliState = ctx.obj
    parent = ctx.parent
    # Only a --db typed on the command line names the demo's file: $PARTSDB_DB usually points
    # at the user's own database, which the demo must never replace.
    given = (state.db_url if parent is not None and
             parent.get_parameter_source("db_url") is click.core.ParameterSource.COMMANDLINE
             else None)
    target = demo_target(path or given)
    # The working database (global --db or $PARTSDB_DB) is protected whenever the demo's file is
    # named on `demo` itself; `partsdb --db X demo` names X as the demo's file on purpose.
    named_here = path is not None or given is None
    working = (state.db_url if named_here and state.db_url and "://" not in state.db_url
               else None)
    check_demo_target(target, force=force, read_only=state.read_only, protect=(working,))
    db = build_demo(target)
    click.echo(f"demo database: {target}", err=no_ui is False)
    if no_ui:
        click.echo(demo_summary(db, command=f"partsdb --db {shlex.quote(str(target))}"))
        return
    state.db_url = str(target)
    state._db = db
    from partsdb.cli.common import launch_tui

    launch_tui(state)


def _field_options(for_edit: bool) -> Callable[[Callable[..., Any]], Callable[..., Any]]:
    """One ``--name`` option per device field, taking text with units (e.g. --vceo 40V)."""

    def decorate(func: Callable[..., Any]) -> Callable[..., Any]:
        for spec in reversed(FIELDS):
            if spec.name == "designation" and not for_edit:
                continue
            flag = "--" + ("new-designation" if spec.name == "designation" else
                           spec.name.replace("_", "-"))
            unit = f" [{spec.unit}]" if spec.unit and spec.unit != "°C" else (
                " [°C]" if spec.unit == "°C" else "")
            choices = f" ({'/'.join(spec.choices)})" if spec.choices else ""
            help_text = f"{spec.label}{unit}{choices}" + (f": {spec.help}" if spec.help else "")
            if spec.kind == "bool":
                help_text += " (yes/no)"
            if spec.kind == "flag":
                help_text += " (yes/no; blank: unknown)"
            if spec.kinds is not None:
                help_text += f" [{'/'.join(sorted(spec.kinds))} only]"
            # The new designation gets a parameter name of its own: sharing "designation" with
            # the argument made click warn and let the argument's value win.
            param = "new_designation" if spec.name == "designation" else spec.name
            func = click.option(flag, param, default=None, metavar="TEXT",
                                help=help_text)(func)
        return func

    return decorate


@click.group()
def device() -> None:
    """Device records: one per transistor type, values with units ("40V", "200mA")."""


@device.command("add")
@click.argument("designation")
@_field_options(for_edit=False)
@pass_state
def device_add(state: CliState, designation: str, **fields: str | None) -> None:
    """Add a device type. Kind, polarity and material are required.

    Example: partsdb device add XK101 --kind bjt --polarity pnp --material ge --vceo 32V
    --ic-max 150mA --ptot 200mW --ptot-ref ambient --hfe-min 40 --hfe-max 120
    """
    from partsdb.services import catalog

    raw = {k: v for k, v in fields.items() if v is not None}
    raw["designation"] = designation
    with state.database().session() as session:
        stored = catalog.add_device(session, raw)
    click.echo(f"added {stored.designation}")
    _print_warnings(stored)


@device.command("edit")
@click.argument("designation")
@_field_options(for_edit=True)
@pass_state
def device_edit(state: CliState, designation: str, **fields: str | None) -> None:
    """Change fields of a device; the whole record is checked again. Give "" to clear a field."""
    from partsdb.services import catalog

    changes = {("designation" if k == "new_designation" else k): v
               for k, v in fields.items() if v is not None}
    if not changes:
        fail("nothing to change: give at least one field option (see --help)")
    with state.database().session() as session:
        stored = catalog.edit_device(session, designation, changes)
    click.echo(f"updated {stored.designation}")
    _print_warnings(stored)


def _print_warnings(device: Device) -> None:
    for warning in device.warnings:
        click.echo(f"warning: {warning}", err=True)


def device_json(device: Device) -> dict[str, Any]:
    data = device.to_dict()
    data["warnings"] = list(device.warnings)
    return data


@device.command("show")
@click.argument("designation")
@format_option("table", "json", "csv", "tsv")
@pass_state
def device_show(state: CliState, designation: str, fmt: str) -> None:
    """Show one device: every parameter, its stock and any consistency warning."""
    from partsdb.services import stock

    found = load_device(state, designation)
    with state.database().session() as session:
        lots = stock.where(session, found.designation)
    if fmt == "json":
        data = device_json(found)
        data["in_stock"] = sum(v.quantity for v in lots)
        data["locations"] = [v.location for v in lots if v.quantity > 0]
        if found.is_fet:
            from partsdb.cautions import FET_CAUTIONS

            data["cautions"] = list(FET_CAUTIONS)
        emit_json(data)
        return
    if fmt in ("csv", "tsv"):
        emit_csv([f.name for f in FIELDS], [[found.to_dict()[f.name] for f in FIELDS]])
        return
    rows = [(spec.label, found.display(spec.name)) for spec in FIELDS
            if getattr(found, spec.name) not in (None, "")]
    tj, assumed = found.tj_max_or_default()
    if assumed:
        rows.append(("Tj max (assumed)", f"{tj:g} °C from material {found.material}"))
    stock_text = ", ".join(f"{v.location} {v.quantity} {v.condition}" for v in lots) or "none"
    rows.append(("In stock", f"{sum(v.quantity for v in lots)} ({stock_text})"))
    print_table(found.designation, ["Field", "Value"], rows)
    _print_warnings(found)
    if found.is_fet:  # handling a FET: static, and the supplies FETs sit in
        from partsdb.cautions import FET_CAUTIONS

        for text in FET_CAUTIONS:
            click.echo(f"caution: {text}")


@device.command("list")
@click.option("--polarity", type=click.Choice(list(FIELD_BY_NAME["polarity"].choices)),
              help="npn or pnp; n or p for the channel of a FET.")
@click.option("--material", type=click.Choice(["si", "ge", "other"]))
@click.option("--kind", type=click.Choice(list(FIELD_BY_NAME["kind"].choices)))
@click.option("--package", help="Package outline, such as TO-92.")
@click.option("--obsolete/--current", default=None, help="Only obsolete / only current parts.")
@click.option("--suspect", is_flag=True, help="Only records whose fields contradict their "
                                               "designation.")
@click.option("--limit", default=None, metavar="N", help="At most this many (1 to 1,000,000).")
@format_option("table", "json", "csv", "tsv")
@pass_state
def device_list(state: CliState, polarity: str | None, material: str | None, kind: str | None,
                package: str | None, obsolete: bool | None, suspect: bool, limit: str | None,
                fmt: str) -> None:
    """List devices, with filters."""
    from partsdb.limits import MAX_ROWS_SHOWN, check_whole
    from partsdb.services import catalog, stock

    wanted = None if limit is None else check_whole(limit, "--limit", 1, MAX_ROWS_SHOWN)
    filters = catalog.DeviceFilter(polarity=polarity, material=material, kind=kind,
                                   package=package, obsolete=obsolete,
                                   suspect=True if suspect else None)
    with state.database().session() as session:
        devices = catalog.list_devices(session, filters, limit=wanted)
        summary = stock.stock_summary(session)
    if fmt == "json":
        emit_json([device_json(d) for d in devices])
        return
    if fmt in ("csv", "tsv"):
        emit_csv([f.name for f in FIELDS], [[d.to_dict()[f.name] for f in FIELDS] for d in devices])
        return
    from partsdb.device import rating_cells, speed_cell, type_word

    columns = ["Designation", "Type", "Vceo", "Ic max", "Ptot", "hFE", "fT", "Package", "Stock"]
    if any(d.is_fet for d in devices):  # the kind-dependent columns say what they hold
        columns[2:7] = ["Vceo/Vds", "Ic/Id max", "Ptot", "hFE/Rds(on)/Idss", "fT/Qg/yfs"]
    rows = []
    for d in devices:
        if d.is_fet:
            volts, amps, figure = rating_cells(d)
        else:  # as the list always showed a bipolar part
            volts, amps = d.display("vceo"), d.display("ic_max")
            figure = (f"{d.hfe_min:g}..{d.hfe_max:g}" if d.hfe_max and d.hfe_min
                      else d.display("hfe_min"))
        s = summary.get(d.key)
        kind = d.kind if not d.is_fet else ("depletion" if d.mode == "depletion" else "")
        rows.append([d.designation + (" (obsolete)" if d.obsolete else "")
                     + (" (suspect)" if d.warnings else ""),
                     f"{type_word(d)} {d.material} {kind}".strip(), volts, amps,
                     d.display("ptot"), figure,
                     speed_cell(d) if d.is_fet else d.display("ft"), d.package or "—",
                     s.quantity if s else 0])
    print_table(f"{len(devices)} device(s)", columns, rows)
    if suspect:
        for d in devices:
            for w in d.warnings:
                click.echo(f"{d.designation}: {w}")


@device.command("remove")
@click.argument("designation")
@click.option("--force", is_flag=True, help="Also delete its lots and their ledger.")
@pass_state
def device_remove(state: CliState, designation: str, force: bool) -> None:
    """Remove a device record (refused while it has stock, unless --force)."""
    from partsdb.services import catalog

    with state.database().session() as session:
        removed = catalog.remove_device(session, designation, force=force)
    click.echo(f"removed {removed.designation}")


COMMANDS = (init, demo, device)
