"""Limits on input: quantities, text lengths and the characters a stored text may hold.

One table for every face (CLI, CSV import, TUI) and both backends, checked before anything is
written, so SQLite and PostgreSQL refuse the same input with the same message. The lengths are
the column widths of :mod:`partsdb.storage.models` (PostgreSQL enforces them, SQLite does not);
free text (notes) gets a limit of its own, since ``TEXT`` has none on either backend.
"""

from __future__ import annotations

import unicodedata

from partsdb.errors import InvalidInput
from partsdb.units import UnitError

MAX_MOVEMENT = 1_000_000
"""Most parts one movement (receive, take, return, move, count) may carry."""
MAX_LOT = 2_147_483_647
"""Most parts one lot may hold: a signed 32-bit INTEGER, PostgreSQL's ``integer`` type."""

MAX_LENGTH: dict[str, int] = {
    "designation": 64,
    "package": 32,
    "pinout": 8,
    "application": 64,
    "notes": 2000,
    "note": 2000,
    "job": 64,
    "location": 255,
    "label": 120,
}
"""Longest text, in characters, per field (the widths of the database columns)."""

MULTILINE = frozenset({"notes", "note"})
"""Fields where a line break or a tab is allowed (free text)."""


class LimitError(UnitError):
    """A value outside the limits of this module; the message names the field.

    A :class:`UnitError` (so every face that shows a field's refusal shows this one too), built
    from a finished message rather than (field, value, expected).
    """

    def __init__(self, message: str) -> None:
        InvalidInput.__init__(self, message)
        self.field = message.split(":", 1)[0]
        self.value = None
        self.expected = ""


def check_quantity(value: object, field: str = "quantity", *, allow_zero: bool = False) -> int:
    """A movement quantity as an int from 1 (0 when ``allow_zero``) to :data:`MAX_MOVEMENT`.

    Accepts an int or the text of one (digits only, so ``inf``, ``1e309`` and ``-3`` are
    refused); raises :class:`LimitError` naming the field, the value and the range.
    """
    return check_whole(value, field, 0 if allow_zero else 1, MAX_MOVEMENT)


MAX_ROWS_SHOWN = 1_000_000
"""Largest ``--limit`` of a listing."""


def check_whole(value: object, field: str, low: int, high: int) -> int:
    """A whole number from ``low`` to ``high``, given as an int or as its digits."""
    expected = f"a whole number from {low:,} to {high:,}"
    if isinstance(value, bool):
        raise LimitError(f"{field}: {value!r} is not valid; expected {expected}")
    if isinstance(value, str):
        text = value.strip()
        if not (text.isascii() and text.isdigit()):
            raise LimitError(f"{field}: {_show(value)} is not valid; expected {expected}")
        if len(text) > 12:
            raise LimitError(f"{field}: {_show(value)} is outside the limit; expected {expected}")
        value = int(text)
    if not isinstance(value, int):
        raise LimitError(f"{field}: {_show(value)} is not valid; expected {expected}")
    if not low <= value <= high:
        raise LimitError(f"{field}: {value} is outside the limit; expected {expected}")
    return value


def check_lot_total(total: int, field: str = "quantity") -> None:
    """Refuse a lot total above :data:`MAX_LOT` (it would overflow the column)."""
    if total > MAX_LOT:
        raise LimitError(f"{field}: the lot would hold {total:,} parts; expected at most "
                         f"{MAX_LOT:,} in one lot")


def _show(value: object, width: int = 40) -> str:
    text = repr(value)
    return text if len(text) <= width else text[:width] + "...'"


# Control characters have no name in the Unicode character database, only aliases (Unicode
# NameAliases.txt); these are the ones a message is likely to meet.
_CONTROL_NAMES = {0x00: "NULL", 0x09: "CHARACTER TABULATION", 0x0A: "LINE FEED",
                  0x0D: "CARRIAGE RETURN", 0x1B: "ESCAPE", 0x7F: "DELETE"}


def char_name(ch: str) -> str:
    """``U+202E RIGHT-TO-LEFT OVERRIDE``: a character named for a message."""
    name = unicodedata.name(ch, "") or _CONTROL_NAMES.get(ord(ch), "control character")
    return f"U+{ord(ch):04X} {name}"


def bad_character(text: str, multiline: bool = False) -> str | None:
    """The first control or format character in ``text`` (a line break and tab allowed when
    ``multiline``), described by its Unicode name; None when there is none."""
    if text.isascii() and text.isprintable():
        return None
    for ch in text:
        if multiline and ch in "\n\t":
            continue
        # Cc control, Cf format (bidi overrides, zero-width), Cs surrogate,
        # Zl/Zp line and paragraph separators (Unicode Standard, ch. 4 "General Category").
        if unicodedata.category(ch) in ("Cc", "Cf", "Cs", "Zl", "Zp"):
            return char_name(ch)
    return None


def text_problem(field: str, text: str) -> str | None:
    """Why ``text`` may not be stored in ``field`` (too long, a control character), or None."""
    limit = MAX_LENGTH.get(field)
    if limit is not None and len(text) > limit:
        return (f"{field}: {_show(text)} is {len(text):,} characters long; expected at most "
                f"{limit}")
    bad = bad_character(text, field in MULTILINE)
    if bad is not None:
        return (f"{field}: {_show(text)} holds the control or format character {bad}; "
                "expected printable text")
    return None


def check_text(field: str, text: str | None) -> str | None:
    """``text`` unchanged if it may be stored in ``field``; raises :class:`LimitError`."""
    if text is None:
        return None
    problem = text_problem(field, text)
    if problem is not None:
        raise LimitError(problem)
    return text
