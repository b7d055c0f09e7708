"""The partsdb terminal UI: its views over one database, built by one factory.

``build_app(db)`` is what both ``partsdb tui`` (through :func:`run_app`) and the tests use, so
the app under test is the app people run. Views only call :mod:`partsdb.services` and the
pure domain modules; they never hold SQL, scoring or unit parsing of their own.

The frame is the app's own: a one-line strip of named tabs at the top (number keys or a click
switch views), the view, and one line of the current view's keys at the bottom. Every view is
one row of :data:`VIEWS`; the strip, the number and function keys, the command list, the help
and the refresh all read that table, so a new view is one row.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import events, on
from textual.app import App, ComposeResult, SystemCommand
from textual.binding import Binding, BindingType
from textual.command import CommandPalette
from textual.containers import Horizontal
from textual.screen import ModalScreen, Screen
from textual.widget import Widget
from textual.widgets import ContentSwitcher, Footer, Input, Static

from tui.catalog_data import SharedIndex
from tui.devices import DevicesView
from tui.drawers import DrawersView
from tui.help import HelpScreen
from tui.jobs import JobsView
from tui.ledger import LedgerView
from tui.stage import StageView
from tui.substitute import SubstituteView
from tui.swaplog import SwapLogView

if TYPE_CHECKING:
    from partsdb.search import SearchIndex
    from partsdb.storage.database import Database


@dataclass(frozen=True)
class ViewSpec:
    """One view of the app: one row of :data:`VIEWS`."""

    ident: str
    """The view's widget id and the name ``action_show`` takes."""
    title: str
    """The tab's name, also used in the help and the command list."""
    number: str
    """The number key that shows it (outside a text field)."""
    fkey: str
    """The function key that shows it from anywhere (also inside a text field)."""
    factory: Callable[..., Widget]
    """Builds the view: ``factory(db, id=ident)``."""
    focus: str | None = None
    """Selector of the widget focused when the view is shown (None: the first focusable)."""


VIEWS: tuple[ViewSpec, ...] = (
    ViewSpec("drawers", "Drawers", "1", "f2", DrawersView, "#lots-table"),
    ViewSpec("devices", "Devices", "2", "f3", DevicesView, "#dev-search"),
    ViewSpec("substitute", "Substitute", "3", "f4", SubstituteView, "#sub-query"),
    ViewSpec("stage", "Stage", "4", "f5", StageView, "#sg-original"),
    ViewSpec("ledger", "Ledger", "5", "f6", LedgerView, "#lg-device"),
    ViewSpec("swaps", "Swaps", "6", "f7", SwapLogView, "#swaps-table"),
    ViewSpec("jobs", "Jobs", "7", "f8", JobsView, ".jb-focus"),
)


def view_spec(ident: str) -> ViewSpec:
    """The row of :data:`VIEWS` named ``ident`` (KeyError naming the known ones if none)."""
    for spec in VIEWS:
        if spec.ident == ident:
            return spec
    raise KeyError(f"view: {ident!r} is not known; expected one of "
                   + ", ".join(s.ident for s in VIEWS))


class ViewTab(Static):
    """One named tab of the strip; a click shows its view."""

    def __init__(self, spec: ViewSpec) -> None:
        super().__init__(f"{spec.number} {spec.title}", id=f"tab-{spec.ident}",
                         classes="view-tab")
        self.ident = spec.ident
        self.tooltip = f"{spec.title} ({spec.number} or {spec.fkey.upper()})"

    def on_click(self, event: events.Click) -> None:
        event.stop()
        app: Any = self.app
        app.action_show(self.ident)


class PlaceLabel(Static):
    """The open database, right-aligned in what the tabs leave; cut from the left (the file
    name matters more than the folder)."""

    def __init__(self, **kwargs: Any) -> None:
        super().__init__("", **kwargs)
        self.label = ""

    def show(self, label: str) -> None:
        self.label = label
        self.update(self._fit())

    def on_resize(self) -> None:
        self.update(self._fit())

    def _fit(self) -> Text:
        width = max(0, self.size.width - 1)
        text = self.label
        if len(text) > width:
            text = ("…" + text[len(text) - width + 1:]) if width > 1 else ""
        return Text(text, style="italic", justify="right")


class TabStrip(Horizontal):
    """The top line: every view as a named tab, the shown one marked, and the database."""

    def compose(self) -> ComposeResult:
        for spec in VIEWS:
            yield ViewTab(spec)
        yield PlaceLabel(id="db-label")

    def mark(self, current: str) -> None:
        for tab in self.query(ViewTab):
            tab.set_class(tab.ident == current, "-current")


class PartsdbApp(App[None]):
    """The views of :data:`VIEWS` over one open database."""

    CSS_PATH = "partsdb.tcss"
    TITLE = "partsdb"
    HORIZONTAL_BREAKPOINTS: ClassVar[list[tuple[int, str]]] = [(0, "-narrow"), (110, "-wide")]
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("f1", "help", "Help"),
        Binding("question_mark", "help", "Help", show=False),
        # Number keys switch views when no text field has the focus (in a field a digit is
        # typed; Esc leaves the field). Function keys switch from anywhere. Priority for the
        # function keys: the app switches the moment one arrives. Without it the key first
        # travels to the focused field and back, and a character typed right behind it (tmux
        # delivers both in one read) went to the old view's field and was lost.
        *[Binding(spec.number, f"show('{spec.ident}')", spec.title, show=False)
          for spec in VIEWS],
        *[Binding(spec.fkey, f"show('{spec.ident}')", spec.title, show=False, priority=True)
          for spec in VIEWS],
        Binding("escape", "leave_field", "Leave field", show=False),
        # Tab at priority, like the function keys: a barcode scanner types a designation and a
        # Tab in one burst, and Textual routes each key to the field focused when the key is
        # read. As a plain binding the Tab moved the focus only after it had come back from the
        # field, when the rest of the burst had been queued to that same field already.
        Binding("tab", "focus_step(1)", "Next field", show=False, priority=True),
        Binding("shift+tab", "focus_step(-1)", "Previous field", show=False, priority=True),
        # ctrl+l redraws a terminal in most programs; here it re-reads the database as well.
        Binding("ctrl+l", "refresh_data", "Refresh", show=False, priority=True),
        Binding("ctrl+p", "command_palette", "Commands", show=False, priority=True),
        Binding("ctrl+q", "quit", "Close", show=False, priority=True),
    ]

    def __init__(self, db: Database, *, start: str = "drawers", cursor_blink: bool = True,
                 poll_seconds: float | None = None) -> None:
        super().__init__()
        self.db = db
        from partsdb.services.changes import POLL_SECONDS

        self.poll_seconds = POLL_SECONDS if poll_seconds is None else poll_seconds
        """How often other processes' changes are looked for (0: never, only ctrl+l)."""
        self._watch: Any = None
        self._catalog_mark: tuple[Any, ...] | None = None
        self.refreshes = 0
        """How many times the data was re-read after a change (tests read it)."""
        self.start = start
        self.cursor_blink = cursor_blink
        self.current = start
        self.catalog_index = SharedIndex(db)
        """The fuzzy index over the catalog, shared by Devices and Substitute."""
        self.built: set[str] = {start}
        """The views built so far (the start view, then each on its first show)."""
        self._typed_while_building: list[str] | None = None
        """Characters typed while a view shown for the first time is being built."""
        self._mounting: dict[str, Any] = {}
        """Views being built: their pending mounts, awaited before they are first shown."""
        self.first_screen_at: float | None = None
        """``perf_counter()`` once the first screen was painted (``partsdb bench --tui``)."""

    def compose(self) -> ComposeResult:
        yield TabStrip(id="tab-strip")
        # Only the first view is built at start (composing all of them was most of the first
        # screen's time); each other one is built the first time it is shown (show_then).
        with ContentSwitcher(initial=self.start, id="views"):
            yield view_spec(self.start).factory(self.db, id=self.start)
        # One line: the shown view's keys, then the app's own (Help, Refresh, Commands).
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.action_show(self.start)
        # Heavy work only after the first screen is on the terminal (see _warm_up).
        self.call_after_refresh(self._warm_up)
        if self.poll_seconds > 0:
            from partsdb.services.changes import ChangeWatch, catalog_fingerprint

            self._watch = ChangeWatch(self.db)
            self._watch.changed()  # the starting mark
            self._catalog_mark = catalog_fingerprint(self.db)
            self.set_interval(self.poll_seconds, self._poll_changes)

    def on_unmount(self) -> None:
        if self._watch is not None:
            self._watch.close()

    def _poll_changes(self) -> None:
        # In a thread: a server's round trip must not stall typing. One poll at a time.
        self.run_worker(self._poll_in_thread, thread=True, group="changes", exclusive=True,
                        exit_on_error=False)

    def _poll_in_thread(self) -> None:
        from partsdb.errors import PartsdbError
        from partsdb.storage.database import DatabaseError

        try:
            changed = self._watch.changed()
        except (DatabaseError, PartsdbError, OSError):
            return  # an unreachable server: the next poll tries again, the views stay usable
        except Exception as err:  # SQLAlchemy's own errors: same treatment
            if type(err).__module__.startswith("sqlalchemy"):
                return
            raise
        if changed:
            self.call_from_thread(self.refresh_data, "changed elsewhere")

    def absorb_own_change(self) -> None:
        """This app just wrote (a form was saved): take a new mark, so the next poll does not
        report the app's own change as one made elsewhere."""
        if self._watch is not None:
            self._watch.changed()

    def action_refresh_data(self) -> None:
        self.refresh_data("refreshed")

    def refresh_data(self, why: str = "refreshed") -> None:
        """Re-read the database into the open view, keeping its cursor and selection; the
        other views re-read when next shown. A form stays as typed (it re-reads on save)."""
        from partsdb.services.changes import catalog_fingerprint

        self.refreshes += 1
        catalog = catalog_fingerprint(self.db)
        if self._catalog_mark is not None and catalog != self._catalog_mark:
            self.catalog_changed()
        self._catalog_mark = catalog
        for spec in VIEWS:
            if spec.ident not in self.built:
                continue  # reads the database when first shown
            view = self.view(spec.ident)
            if hasattr(view, "refresh_data"):
                view.refresh_data(visible=spec.ident == self.current)
        self.notify(f"Data {why}: view re-read.", timeout=2)

    def _warm_up(self) -> None:
        if self.first_screen_at is None:  # called after the first screen's refresh
            self.first_screen_at = time.perf_counter()
            self._build_next_view()
        # One thread, in order of need: the search index (typing in Devices), then the imports
        # of Stage and Substitute. Two threads at once fight the UI for the GIL.
        if self.catalog_index.index is None and not self.catalog_index.building:
            self.catalog_index.building = True
            self.run_worker(self._index_then_imports, thread=True, group="index")

    def _build_next_view(self) -> None:
        """Build the views not shown yet, hidden, one per screen refresh after the first
        screen, so a view key pressed later finds its view ready (and the keys typed right
        after it land in its field)."""
        for spec in VIEWS:
            if spec.ident not in self.built:
                self.view(spec.ident)
                self.call_after_refresh(self._build_next_view)
                return

    def _index_then_imports(self) -> None:
        self.catalog_index.build()
        _import_heavy_modules()

    def build_index(self) -> None:
        """Build the shared search index in a worker thread unless one is being built."""
        if self.catalog_index.index is None and not self.catalog_index.building:
            self.catalog_index.building = True  # before the thread starts: no second worker
            self.run_worker(self.catalog_index.build, thread=True, group="index")

    def catalog_changed(self) -> None:
        """A device was added or edited: rebuild the search index."""
        self.catalog_index.invalidate()
        self.build_index()

    def with_index(self, callback: Callable[[SearchIndex], None]) -> None:
        """``callback(index)`` on the UI thread: now if the index is ready, else once built."""
        if self.catalog_index.index is not None:
            callback(self.catalog_index.index)
            return

        def deliver(index: SearchIndex) -> None:
            if threading.get_ident() == self._thread_id:  # became ready just now, on this thread
                callback(index)
            else:
                self.call_from_thread(callback, index)

        self.catalog_index.when_ready(deliver)
        self.build_index()

    def _database_label(self) -> str:
        """The database as the strip names it: a SQLite file by its name (the full path is the
        tooltip), a server by its masked URL; "read-only" when opened so."""
        try:
            full = self.db.describe()
        except Exception:  # a label must never stop the app
            return ""
        label = full.rsplit("/", 1)[-1] if full.startswith("sqlite") else full
        self.query_one("#db-label", PlaceLabel).tooltip = full
        return label + (" (read-only)" if getattr(self.db, "read_only", False) else "")

    def view(self, ident: str) -> Any:
        """The view ``ident``; one not built yet is built now, hidden (mounted at once, composed
        by the time the app is next idle; :meth:`show_then` waits for that)."""
        if ident in self.built:
            return self.query_one(f"#{ident}")
        self.built.add(ident)
        view = view_spec(ident).factory(self.db, id=ident)
        view.display = False  # the switcher shows it
        self._mounting[ident] = self.query_one("#views", ContentSwitcher).mount(view)
        return view

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        # A form holds typed input: finish or cancel it before switching views.
        if action == "show" and isinstance(self.screen, ModalScreen):
            return isinstance(self.screen, HelpScreen)
        return True

    def action_show(self, ident: str) -> None:
        """Switch to a view, building it and loading its data the first time it is shown."""
        self.show_then(ident)

    def show_then(self, ident: str, then: Callable[[Any], None] | None = None) -> None:
        """Switch to a view, then ``then(view)``: at once when the view is built, else once
        its first build (mounted and composed) is done."""
        if isinstance(self.screen, HelpScreen):
            self.screen.dismiss()
        view = self.view(ident)
        mounting = self._mounting.pop(ident, None)
        if mounting is None or view.is_mounted:  # built (at start or in the background)
            self._show_built(ident, then)
            return

        # Until it is built, characters typed are kept for its field, not the old view's.
        self._typed_while_building = []

        async def when_built() -> None:
            await mounting
            self._show_built(ident, then)

        self.call_later(when_built)

    async def on_event(self, event: events.Event) -> None:
        # Taken here, before the key is forwarded to the focused field of the view left.
        if (self._typed_while_building is not None and isinstance(event, events.Key)
                and event.is_printable and event.character):
            self._typed_while_building.append(event.character)
            return
        await super().on_event(event)

    def _show_built(self, ident: str, then: Callable[[Any], None] | None) -> None:
        self.current = ident
        self.query_one("#views", ContentSwitcher).current = ident
        self.query_one(TabStrip).mark(ident)
        self.query_one("#db-label", PlaceLabel).show(self._database_label())
        view = self.view(ident)
        if hasattr(view, "load"):
            view.load()
        focus = view_spec(ident).focus
        targets = view.query(focus) if focus else None
        # Focus now, not through focus() (which defers it to a later message): a key typed
        # right after F3/F4 may already be queued behind this one, and must reach the new
        # view's field, not the hidden field of the view just left.
        if targets:
            self.screen.set_focus(targets.first())
        else:
            self.screen.focus_next()
        self.refresh_bindings()
        typed, self._typed_while_building = self._typed_while_building, None
        if typed and isinstance(self.screen.focused, Input):
            self.screen.focused.insert_text_at_cursor("".join(typed))
        if then is not None:
            then(view)

    def action_focus_step(self, step: int) -> None:
        """Focus the next (1) or previous (-1) field now, so the keys after it go there."""
        if step > 0:
            self.screen.focus_next()
        else:
            self.screen.focus_previous()

    def action_leave_field(self) -> None:
        """Esc in a view's text field: focus leaves it for the view's list (or the next
        widget that is not a text field), so number keys and the view's letter keys work."""
        focused = self.screen.focused
        if not isinstance(focused, Input) or isinstance(self.screen, ModalScreen):
            return
        view = self.view(self.current)
        for widget in view.query("DataTable, VirtualTable, Tree"):
            if widget.focusable and widget.display:
                self.screen.set_focus(widget)
                return
        self.screen.set_focus(None)

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    @on(DevicesView.DeviceChosen)
    def _substitute_for(self, event: DevicesView.DeviceChosen) -> None:
        designation = event.designation
        self.show_then("substitute", lambda view: view.search_for(designation))

    def get_system_commands(self, screen: Screen[Any]) -> Iterable[SystemCommand]:
        """The command list (ctrl+p): partsdb's own commands only, in its own words."""
        for spec in VIEWS:
            yield SystemCommand(f"Show {spec.title}",
                                f"Switch to the {spec.title} view ({spec.number} or "
                                f"{spec.fkey.upper()})",
                                lambda i=spec.ident: self.action_show(i))
        for action in ("receive", "take", "return", "move", "count"):
            yield SystemCommand(f"Stock: {action}", f"{action.capitalize()} parts of the selected "
                                "lot (Drawers)", lambda a=action: self._drawer_action(a))
        yield SystemCommand("Device: add", "Add a device to the catalog",
                            lambda: self._devices_action("add"))
        yield SystemCommand("Device: edit", "Edit the selected device",
                            lambda: self._devices_action("edit"))
        yield SystemCommand("Refresh", "Re-read the database into the open view (ctrl+l)",
                            self.action_refresh_data)
        yield SystemCommand("Help and safety cautions", "Keys of every view and the cautions (F1)",
                            self.action_help)
        yield SystemCommand("Close partsdb", "Close the database and leave (ctrl+q)", self.exit)

    def action_command_palette(self) -> None:
        """The command list, asking in partsdb's words."""
        if self.use_command_palette and not CommandPalette.is_open(self):
            self.push_screen(CommandPalette(placeholder="Command: a view, stock, device, help…",
                                            id="--command-palette"))

    def action_help_quit(self) -> None:
        """ctrl+c does not close partsdb (it copies in a text field); say which key does."""
        self.notify("ctrl+q closes partsdb.", timeout=3)

    def _drawer_action(self, action: str) -> None:
        self.show_then("drawers", lambda view: view.action_stock(action))

    def _devices_action(self, action: str) -> None:
        self.show_then("devices", lambda view: getattr(view, f"action_{action}")())


def _import_heavy_modules() -> None:
    """Import what the Stage and Substitute views need (scipy among it: about 1 s) in the
    background, so their first use does not wait for it."""
    import partsdb.bias
    import partsdb.services.substitution  # noqa: F401


def build_app(db: Database, *, start: str = "drawers", cursor_blink: bool = True,
              poll_seconds: float | None = None) -> PartsdbApp:
    """The app on ``db``; tests pass ``cursor_blink=False`` for steady pictures and may set
    ``poll_seconds`` (0 turns the watch for outside changes off)."""
    return PartsdbApp(db, start=start, cursor_blink=cursor_blink, poll_seconds=poll_seconds)


def run_app(db: Database) -> None:
    """Run the UI in this terminal until the user quits."""
    build_app(db).run()
