"""The words of the stock ledger: lot conditions and movement reasons (pure domain, no I/O).

One list for the CLI's choices, the TUI's form, the CSV importer and the database's CHECK
constraint (``storage.models``; a test compares them).
"""

from __future__ import annotations

CONDITIONS: tuple[str, ...] = ("new", "nos", "used", "pulled", "tested")
"""Lot conditions (common practice of the trade):

* ``new``: bought new from current stock;
* ``nos``: new old stock, never used but long stored (old date codes; check leads for
  solderability and hFE before relying on it);
* ``used``: came back from a job unused, or bought second-hand;
* ``pulled``: desoldered from a board, not measured;
* ``tested``: pulled and measured good.
"""

REASONS: tuple[str, ...] = ("receive", "take", "return", "move", "count", "undo", "edit", "merge",
                            "import")
"""Why a ledger entry was written: the five stock operations, ``undo`` (compensates the
movement it names in ``undoes``), ``edit`` (a lot's condition or note changed, no parts moved)
and ``merge`` (a place merged into another; its lots moved with it)."""
