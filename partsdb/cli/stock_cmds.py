"""CLI: the ``stock`` group: receive, take, return, move, count, where, low, ledger."""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import TYPE_CHECKING, TypeVar

import click

from partsdb.cli.common import (
    CliState,
    emit_csv,
    emit_json,
    format_option,
    pass_state,
    print_table,
)
from partsdb.lots import CONDITIONS

if TYPE_CHECKING:
    from sqlalchemy.orm import Session

T = TypeVar("T")

QTY = click.STRING
"""Quantities are read by limits.check_quantity (one refusal line, exit 2, for any text)."""
CONDITION = click.Choice(list(CONDITIONS), case_sensitive=False)


@click.group()
def stock() -> None:
    """Stock by place: every change is written to the ledger in the same transaction.

    Changes run through Database.transact, so a shared server's serialization failure or
    deadlock is retried rather than reported.
    """


_NUMBERS_AS_ARGUMENTS = {"ignore_unknown_options": True}
""""-3" reaches the quantity check (one line naming the limit) instead of click's "no such
option"; an unknown real option is then an unexpected argument, still exit 2."""


def _quantity(text: str | int, allow_zero: bool = False) -> int:
    from partsdb.limits import check_quantity

    return check_quantity(text, allow_zero=allow_zero)


def _to_place(work: Callable[[Session], T], state: CliState) -> T:
    """Run a receive, move or return; an unknown place says how to make it."""
    from partsdb.services.stock import UnknownPlace

    try:
        return state.database().transact(work)
    except UnknownPlace as err:
        raise UnknownPlace(err.path, err.suggestions, " (pass --create to make it)") from None


def _said(verb: str, view: object) -> None:
    from partsdb.services.stock import LotView

    assert isinstance(view, LotView)
    low = "  (below low-stock mark)" if view.low else ""
    click.echo(f"{verb}: {view.designation} at {view.location} ({view.condition}) now "
               f"{view.quantity}{low}")


@stock.command("receive", context_settings=_NUMBERS_AS_ARGUMENTS)
@click.argument("designation")
@click.argument("qty", type=QTY)
@click.option("--to", "to", required=True, metavar="LOC", help="Place, such as C2/D14.")
@click.option("--condition", type=CONDITION, default="new", show_default=True)
@click.option("--job", metavar="REF", help="Job or order reference.")
@click.option("--note")
@click.option("--create", is_flag=True, help="Make the place if it does not exist (else refused, "
              "with the closest existing places named).")
@pass_state
def receive(state: CliState, designation: str, qty: str | int, to: str, condition: str,
            job: str | None, note: str | None, create: bool) -> None:
    """Parts arrive (bought, salvaged) into a drawer."""
    qty = _quantity(qty)
    from partsdb.services import stock as svc

    view = _to_place(
        lambda session: svc.receive(session, designation, qty, to, condition.lower(), job, note,
                                    create), state)
    _said("received", view)


@stock.command("take", context_settings=_NUMBERS_AS_ARGUMENTS)
@click.argument("designation")
@click.argument("qty", type=QTY)
@click.option("--from", "from_", required=True, metavar="LOC", help="Place, such as C2/D14.")
@click.option("--condition", type=CONDITION, help="Which lot, when the place holds several.")
@click.option("--job", metavar="REF", help="Job the parts go to.")
@click.option("--note")
@pass_state
def take(state: CliState, designation: str, qty: str | int, from_: str, condition: str | None,
         job: str | None, note: str | None) -> None:
    """Take parts out of a drawer (refused, changing nothing, if fewer are there)."""
    qty = _quantity(qty)
    from partsdb.services import stock as svc
    from partsdb.services.config import check_job

    check_job(job)  # before any database work: a refused take opens nothing
    view = state.database().transact(
        lambda session: svc.take(session, designation, qty, from_, condition, job, note))
    _said("took", view)


@stock.command("return", context_settings=_NUMBERS_AS_ARGUMENTS)
@click.argument("designation")
@click.argument("qty", type=QTY)
@click.option("--to", "to", required=True, metavar="LOC")
@click.option("--condition", type=CONDITION,
              help="Lot to return into (default: the one there, else a new 'used' lot).")
@click.option("--job", metavar="REF")
@click.option("--note")
@click.option("--create", is_flag=True, help="Make the place if it does not exist (else refused, "
              "with the closest existing places named).")
@pass_state
def return_(state: CliState, designation: str, qty: str | int, to: str, condition: str | None,
            job: str | None, note: str | None, create: bool) -> None:
    """Put unused parts back from a job."""
    qty = _quantity(qty)
    from partsdb.services import stock as svc

    view = _to_place(
        lambda session: svc.return_parts(session, designation, qty, to, condition, job, note,
                                         create), state)
    _said("returned", view)


@stock.command("move", context_settings=_NUMBERS_AS_ARGUMENTS)
@click.argument("designation")
@click.argument("qty", type=QTY)
@click.option("--from", "from_", required=True, metavar="LOC")
@click.option("--to", "to", required=True, metavar="LOC")
@click.option("--condition", type=CONDITION, help="Which lot, when the place holds several.")
@click.option("--note")
@click.option("--create", is_flag=True, help="Make the place if it does not exist (else refused, "
              "with the closest existing places named).")
@pass_state
def move(state: CliState, designation: str, qty: str | int, from_: str, to: str,
         condition: str | None, note: str | None, create: bool) -> None:
    """Move parts from one place to another."""
    qty = _quantity(qty)
    from partsdb.services import stock as svc

    source, target = _to_place(
        lambda session: svc.move(session, designation, qty, from_, to, condition, None, note, create), state)
    _said("moved from", source)
    _said("moved to", target)


@stock.command("count", context_settings=_NUMBERS_AS_ARGUMENTS)
@click.argument("designation")
@click.argument("qty", type=QTY)
@click.option("--at", "at", required=True, metavar="LOC")
@click.option("--condition", type=CONDITION)
@click.option("--note")
@pass_state
def count(state: CliState, designation: str, qty: str | int, at: str, condition: str | None,
          note: str | None) -> None:
    """Record a stock-take: set the counted quantity; the ledger keeps the difference."""
    qty = _quantity(qty, allow_zero=True)
    from partsdb.services import stock as svc

    view, diff = state.database().transact(
        lambda session: svc.count(session, designation, qty, at, condition, None, note))
    _said(f"counted ({diff:+d})", view)


@stock.command("where")
@click.argument("designation")
@format_option("table", "json", "csv", "tsv")
@pass_state
def where(state: CliState, designation: str, fmt: str) -> None:
    """Where a device is kept and how many are in each place."""
    from partsdb.services import stock as svc

    with state.database().session() as session:
        lots = svc.where(session, designation)
    if fmt == "json":
        emit_json([v.to_json() for v in lots])
    elif fmt in ("csv", "tsv"):
        emit_csv(["designation", "location", "quantity", "condition", "note"],
                 [[v.designation, v.location, v.quantity, v.condition, v.note] for v in lots])
    else:
        total = sum(v.quantity for v in lots)
        print_table(f"{designation}: {total} in stock",
                    ["Location", "Label", "Qty", "Condition", "Note"],
                    [[v.location, v.label, v.quantity, v.condition, v.note] for v in lots])


@stock.command("low")
@format_option("table", "json", "csv", "tsv")
@pass_state
def low(state: CliState, fmt: str) -> None:
    """Devices whose stock is below their low-stock mark (devices, not lots: each device's
    stock summed over every place and condition; the TUI counts the same)."""
    from partsdb.services import stock as svc

    with state.database().session() as session:
        items = svc.low_stock(session)
    rows = [[i.designation, i.quantity, i.threshold, ", ".join(i.locations)] for i in items]
    if fmt == "json":
        emit_json([{"designation": i.designation, "quantity": i.quantity,
                    "low_stock": i.threshold, "locations": i.locations} for i in items])
    elif fmt in ("csv", "tsv"):
        emit_csv(["designation", "quantity", "low_stock", "locations"], rows)
    else:
        print_table(f"Below the low-stock mark: {len(items)} device"
                    + ("" if len(items) == 1 else "s"), ["Designation", "Qty", "Mark", "Where"],
                    rows, caption="Devices, not lots: a device's stock is summed over every "
                                  "place and condition.")


def _date(text: str | None, name: str) -> datetime | None:
    if text is None:
        return None
    from partsdb.clock import local_to_utc

    try:
        return local_to_utc(datetime.fromisoformat(text))
    except ValueError:
        from partsdb.cli.common import fail

        fail(f"{name}: {text!r} is not a date; expected YYYY-MM-DD or YYYY-MM-DDTHH:MM")


@stock.command("ledger")
@click.argument("designation", required=False)
@click.option("--at", "location", metavar="LOC", help="Only this place and the places in it.")
@click.option("--job", metavar="REF",
              help="Only jobs whose reference starts with REF, in any case (j-26 finds J-2611).")
@click.option("--since", metavar="DATE", help="From this local date or time (YYYY-MM-DD[THH:MM]).")
@click.option("--until", metavar="DATE", help="Up to this local date or time.")
@click.option("--limit", default="50", show_default=True, metavar="N",
              help="At most this many entries (1 to 1,000,000).")
@format_option("table", "json", "csv", "tsv")
@pass_state
def ledger(state: CliState, designation: str | None, location: str | None, job: str | None,
           since: str | None, until: str | None, limit: str, fmt: str) -> None:
    """The movement ledger, newest first. Times are shown in local time with the zone named
    (stored in UTC; JSON, CSV and TSV give the stored UTC time with its offset)."""
    from partsdb.limits import MAX_ROWS_SHOWN, check_whole
    from partsdb.services import stock as svc

    rows_wanted = check_whole(limit, "--limit", 1, MAX_ROWS_SHOWN)
    with state.database().session() as session:
        entries = svc.ledger(session, designation, location, job, _date(since, "--since"),
                             _date(until, "--until"), rows_wanted)
    if fmt == "json":
        emit_json([e.to_json() for e in entries])
        return
    from partsdb.clock import show

    if fmt in ("csv", "tsv"):  # machine-readable: stored UTC time with offset, change a number
        emit_csv(["at", "designation", "location", "condition", "change", "reason", "job",
                  "note", "id", "undoes"],
                 [[e.at.isoformat(timespec="seconds") + "+00:00", e.designation, e.location,
                   e.condition, e.change, e.reason, e.job, e.note, e.id, e.undoes]
                  for e in entries])
        return
    rows = [[e.id, show(e.at), e.designation, e.location, e.condition, f"{e.change:+d}",
             e.reason, e.job, e.note] for e in entries]
    print_table("Ledger", ["#", "When (local)", "Device", "Place", "Cond.", "Change",
                           "Reason", "Job", "Note"], rows,
                caption="Local time (stored in UTC).")


@stock.command("undo")
@click.argument("movement_id", required=False, metavar="[MOVEMENT_ID]")
@format_option("table", "json")
@pass_state
def undo(state: CliState, movement_id: str | None, fmt: str) -> None:
    """Reverse a movement by writing its compensating ledger entry (history is kept).

    Without MOVEMENT_ID (the # of `stock ledger`): the last receive, take, return, move or
    count not yet undone, made from any bench. A move is reversed as a whole. Refused when the
    movement was undone already or the reversal would take a lot below zero.
    """
    from partsdb.limits import check_whole
    from partsdb.services import corrections

    wanted = None if movement_id is None else check_whole(movement_id, "MOVEMENT_ID", 1,
                                                          2**63 - 1)
    report = state.database().transact(lambda session: corrections.undo(session, wanted))
    if fmt == "json":
        emit_json(report.to_json())
        return
    for original, entry in zip(report.undone, report.written, strict=True):
        click.echo(f"undid {original.describe()}: wrote #{entry.id} ({entry.change:+d})")


def _edited(view: object) -> None:
    from partsdb.services.stock import LotView

    assert isinstance(view, LotView)
    click.echo(f"lot: {view.designation} at {view.location} ({view.condition}) "
               f"{view.quantity}, note: {view.note or '(none)'}")


@stock.command("set-condition")
@click.argument("designation")
@click.argument("new_condition", type=CONDITION, metavar="CONDITION")
@click.option("--at", "at", required=True, metavar="LOC", help="The place of the lot.")
@click.option("--condition", type=CONDITION, help="Which lot, when the place holds several.")
@click.option("--job", metavar="REF")
@format_option("table", "json")
@pass_state
def set_condition(state: CliState, designation: str, new_condition: str, at: str,
                  condition: str | None, job: str | None, fmt: str) -> None:
    """Change a lot's condition (an 'edit' ledger entry). Conditions: new, nos (new old
    stock), used, pulled, tested."""
    from partsdb.services import corrections

    view = state.database().transact(lambda session: corrections.set_condition(
        session, designation, at, new_condition.lower(), condition, job))
    if fmt == "json":
        emit_json(view.to_json())
    else:
        _edited(view)


@stock.command("note")
@click.argument("designation")
@click.argument("text")
@click.option("--at", "at", required=True, metavar="LOC", help="The place of the lot.")
@click.option("--condition", type=CONDITION, help="Which lot, when the place holds several.")
@format_option("table", "json")
@pass_state
def note(state: CliState, designation: str, text: str, at: str, condition: str | None,
         fmt: str) -> None:
    """Change a lot's note ("" clears it); the old and new text go to the ledger."""
    from partsdb.services import corrections

    view = state.database().transact(
        lambda session: corrections.set_note(session, designation, at, text, condition))
    if fmt == "json":
        emit_json(view.to_json())
    else:
        _edited(view)


@stock.command("reorder")
@format_option("table", "csv", "json", "md")
@pass_state
def reorder(state: CliState, fmt: str) -> None:
    """What to buy: every device at or below its low-stock count, with the quantity that
    brings it to its target (the device's reorder_to, default twice the low-stock count); for
    obsolete devices the best suitable substitute in the catalog and how many the drawers hold.
    """
    from partsdb.services import reorder as svc

    with state.database().session() as session:
        lines = svc.reorder_list(session)
    if fmt == "json":
        emit_json([line.to_json() for line in lines])
        return
    if fmt == "csv":
        emit_csv(svc.COLUMNS, [line.row() for line in lines])
        return
    headers = ["Designation", "Have", "Low", "Target", "Buy", "Obsolete", "Substitute",
               "Sub. held", "Sub. where"]
    if fmt == "md":
        from partsdb.reports import markdown_table

        click.echo(markdown_table(headers, [line.row() for line in lines]))
        return
    print_table(f"Reorder: {len(lines)} device" + ("" if len(lines) == 1 else "s"), headers,
                [line.row() for line in lines],
                caption="At or below the low-stock count; buy up to the target.")


COMMANDS = (stock,)
