"""CLI: ``decode`` (what a designation's numbering scheme says) and ``find`` (fuzzy search).

``decode`` needs no database. ``find`` reads the catalog's designations and notes, builds a
:class:`partsdb.search.SearchIndex` for this one process, and shows each hit with its stock and
drawers. A body marking without ``2S`` finds the JIS name, and the match column says so.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import click

from partsdb.cli.common import (
    EXIT_NOT_FOUND,
    CliState,
    emit_json,
    fail,
    format_option,
    pass_state,
    print_table,
)
from partsdb.device import POLARITY_WORDS

if TYPE_CHECKING:
    from sqlalchemy.orm import Session


@click.command()
@click.argument("designation")
@format_option("table", "json")
def decode(designation: str, fmt: str) -> None:
    """Explain what DESIGNATION's numbering scheme says about the part.

    Reads Pro Electron (AC951), JIS C 7012 (2SC8150, or the marking C8150), JEDEC EIA-370
    (2N9106) and the older European O names (OC375); these examples are the demo's invented
    names. Inferences are listed as such; a name no scheme explains is reported as unknown.
    No database is needed.
    """
    from partsdb.designations import decode as decode_designation
    from partsdb.designations import normalize

    if not normalize(designation):
        fail(f"designation: {designation!r} is empty; expected a part number such as AC951")
    result = decode_designation(designation)
    if fmt == "json":
        emit_json(result.to_json())
        return
    rows: list[tuple[str, Any]] = [
        ("Designation", result.designation),
        ("Scheme", result.standard),
        ("Registered as", result.registered_as),
        ("Material", result.material_text or result.material),
        ("Polarity" if result.family != "fet" else "Channel",
         POLARITY_WORDS.get(result.polarity, result.polarity) if result.polarity else None),
        ("Device type", result.device_type),
        ("Application", result.application),
        ("Power class", result.power_class),
        ("Serial", f"{result.serial} ({result.serial_class})" if result.serial_class
         else result.serial),
        ("Gain group", result.gain_group),
        ("Suffix", result.suffix),
    ]
    print_table(None, ("Field", "Value"), rows)
    for note in result.notes:
        click.echo(f"note: {note}")
    for item in result.inferred:
        click.echo(f"inferred: {item}")


def _catalog(session: Session) -> tuple[list[str], list[str | None]]:
    """Designations and notes (one bulk read through the catalog service)."""
    from partsdb.services import catalog

    return catalog.designations_and_notes(session)


@click.command()
@click.argument("query")
@click.option("--limit", type=click.IntRange(1, 1000), default=10, show_default=True,
              help="How many hits to show.")
@click.option("--in-stock", is_flag=True, help="Only devices with parts in a drawer.")
@format_option("table", "json")
@pass_state
def find(state: CliState, query: str, limit: int, in_stock: bool, fmt: str) -> None:
    """Find devices whose designation is spelled like QUERY, or whose notes hold its words.

    Forgives case, spaces and dashes, a gain-group letter too many or too few, letter O for
    zero, two swapped characters and one wrong digit; a marking without 2S (C8150) finds the
    JIS name (2SC8150). Exit code 1 when nothing matches.
    """
    from partsdb.designations import normalize
    from partsdb.search import SearchIndex
    from partsdb.services import stock

    if not query.strip():
        fail("query: empty; expected a designation or words from the notes")
    with state.database().session() as session:
        designations, notes = _catalog(session)
        summary = stock.stock_summary(session)
    if in_stock:
        keep = [i for i, d in enumerate(designations)
                if (s := summary.get(normalize(d))) is not None and s.quantity > 0]
        designations = [designations[i] for i in keep]
        notes = [notes[i] for i in keep]
    hits = SearchIndex(designations, notes).find(query, limit=limit)
    results = []
    for hit in hits:
        s = summary.get(normalize(hit.designation))
        results.append({"designation": hit.designation, "score": hit.score, "reason": hit.reason,
                        "in_stock": s.quantity if s else 0,
                        "locations": list(s.locations) if s else []})
    if fmt == "json":
        emit_json(results)
    elif results:
        jis = any(h.reason.startswith("without 2S") for h in hits)
        caption = (f"{query.strip()} was read as 2S{normalize(query)}: JIS body markings usually "
                   "omit 2S (an inference)") if jis else None
        print_table(f"Matches for {query.strip()!r}", ("Designation", "Score", "Match",
                                                       "In stock", "Drawers"),
                    [(r["designation"], r["score"], r["reason"], r["in_stock"],
                      ", ".join(r["locations"]) or "—") for r in results], caption=caption)
    if not results:
        scope = "in-stock devices" if in_stock else "the catalog"
        fail(f"no designation or note in {scope} matches {query!r}", EXIT_NOT_FOUND)
