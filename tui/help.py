"""The help screen: every key of every view, and the safety cautions in full."""

from __future__ import annotations

from typing import ClassVar

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from partsdb.cautions import SAFETY_CAUTIONS

KEYS: tuple[tuple[str, str, str], ...] = (
    ("Anywhere", "F1 or ?", "this help (Esc closes it)"),
    ("Anywhere", "ctrl+p", "commands: every main action by name"),
    ("Anywhere", "esc", "leave a text field for the view's list"),
    ("Anywhere", "tab / shift+tab", "next / previous field"),
    ("Anywhere", "ctrl+l", "refresh: re-read the database (changes made elsewhere also show "
                          "by themselves within about a second)"),
    ("Anywhere", "ctrl+q", "close partsdb"),
    ("Drawers", "r t u m c", "receive, take (with a job ref.), return, move, count the selected lot"),
    ("Drawers", "e", "edit the selected lot's condition or note (written to the ledger)"),
    ("Drawers", "z", "undo the last movement (asks first, naming what it reverses)"),
    ("Drawers", "o", "reorder list: what to buy; substitutes for obsolete parts"),
    ("Devices", "/", "search (fuzzy: designation, or words in the notes)"),
    ("Devices", "a / e", "add a device / edit the selected one (units such as 40V, 200mA, 2k2)"),
    ("Devices", "s", "find substitutes for the selected device"),
    ("Substitute", "enter", "rank substitutes for the original typed in the search field"),
    ("Substitute", "t / w / o", "take one of the selected candidate / record the swap / save the report"),
    ("Substitute", "j", "write the job sheet of the original and the selected candidate"),
    ("Substitute", "b", "open the selected pair in the Stage view"),
    ("Stage", "enter or ctrl+r", "solve the stage for both transistors"),
    ("Stage", "ctrl+s", "write the job sheet of the solved pair with this stage (.pdf/.html/.md)"),
    ("Ledger", "type in a filter", "device, place, job, from/to date (YYYY-MM-DD)"),
    ("Swaps", "type in a filter", "original, substitute, job, outcome, from/to date"),
    ("Swaps", "o", "set the outcome and note of the highlighted swap (! = audit finding)"),
    ("Jobs", "enter", "open the kit file typed (CSV, as partsdb kit reads it)"),
    ("Jobs", "c", "switch the highlighted line to another part (drawers counted across lines)"),
    ("Jobs", "t / s", "take the whole kit for a job (all or nothing) / write the kit sheet"),
    ("Forms", "enter or ctrl+s / esc", "save / cancel; nothing is written until every field is valid"),
)


def view_keys() -> list[tuple[str, str, str]]:
    """The view keys, from the app's table of views (a new view shows here by itself)."""
    from tui.app import VIEWS

    first, last = VIEWS[0], VIEWS[-1]
    return [
        ("Anywhere", f"{first.number}…{last.number}",
         ", ".join(f"{spec.number} {spec.title}" for spec in VIEWS)
         + "; or click a tab (in a text field digits are typed: Esc first)"),
        ("Anywhere", f"{first.fkey.upper()}…{last.fkey.upper()}",
         "the same views, from inside a text field too"),
    ]


def help_renderable() -> Group:
    keys = Table(show_header=True, header_style="bold", box=None, padding=(0, 1), expand=True)
    keys.add_column("Where", style="cyan", no_wrap=True)
    keys.add_column("Key", style="bold", max_width=16)
    keys.add_column("Does")
    for where, key, does in [*view_keys(), *KEYS]:
        keys.add_row(where, key, does)
    parts: list[Text | Table] = [Text("Keys", style="bold underline"), keys, Text(""),
                                 Text("Safety", style="bold underline")]
    for caution in SAFETY_CAUTIONS:
        parts.append(Text("CAUTION ", style="bold red") + Text(caution))
    parts.append(Text(""))
    parts.append(Text("Colours repeat what the words say: ok, marginal, UNDER-RATED, unknown, LOW, "
                      "suspect, obsolete.", style="dim"))
    return Group(*parts)


class HelpScreen(ModalScreen[None]):
    """Keys and cautions; any of Esc, q, F1 or ? closes it."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape,q,f1,question_mark", "close", "Close")]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box"):
            yield Static(help_renderable(), id="help-text")

    def action_close(self) -> None:
        self.dismiss(None)
