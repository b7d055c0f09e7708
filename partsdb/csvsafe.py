"""The formula guard of every CSV partsdb writes, and its exact inverse for import.

A spreadsheet runs a cell that starts with ``= + - @`` (or TAB / CR / LF before one) as a
formula; the guard prefixes such a text cell with an apostrophe (OWASP, "CSV Injection"). So that
the guard can be undone exactly, a cell that already starts with an apostrophe gets one too:
``unguard(guard(text)) == text`` for every text, and ``unguard`` removes only an apostrophe
that ``guard`` could have added (``'-' marks the emitter`` round-trips unchanged).
"""

from __future__ import annotations

from typing import Any

INJECTION_START = ("=", "+", "-", "@", "\t", "\r", "\n")
_GUARDED_START = (*INJECTION_START, "'")


def guard(cell: Any) -> Any:
    """A text cell made safe to open in a spreadsheet; anything else unchanged."""
    if isinstance(cell, str) and cell.startswith(_GUARDED_START):
        return "'" + cell
    return cell


def unguard(cell: str) -> str:
    """The text :func:`guard` was given: one leading apostrophe removed when guard added it."""
    if len(cell) > 1 and cell[0] == "'" and cell[1] in _GUARDED_START:
        return cell[1:]
    return cell


GUARDED_PATTERN = r"^'[=+\-@\t\r\n']"
"""A regular expression matching exactly the cells :func:`unguard` changes."""
