"""The one text input used by every form and filter: Textual's Input, blinking as the app says.

Tests build the app with ``cursor_blink=False`` (STYLE.md) so snapshots are the same on every
run; the flag lives on the app and each field reads it when mounted.
"""

from __future__ import annotations

from textual.widgets import Input


class TextField(Input):
    """An Input whose cursor blinks only when the app allows it."""

    def on_mount(self) -> None:
        self.cursor_blink = bool(getattr(self.app, "cursor_blink", True))
