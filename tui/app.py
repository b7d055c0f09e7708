"""The partsdb terminal UI: six views over one database, built by one factory.

``build_app(db)`` is what both ``partsdb tui`` (through :func:`run_app`) and the tests use, so
the app under test is the app people run. Views only call :mod:`partsdb.services` and the
pure domain modules; they never hold SQL, scoring or unit parsing of their own.
"""

from __future__ import annotations

import threading
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import on
from textual.app import App, ComposeResult, SystemCommand
from textual.binding import Binding, BindingType
from textual.screen import ModalScreen, Screen
from textual.widgets import ContentSwitcher, Footer, Static

from tui.bench import BenchView
from tui.catalog_data import SharedIndex
from tui.devices import DevicesView
from tui.drawers import DrawersView
from tui.help import HelpScreen
from tui.jobs import JobsView
from tui.ledger import LedgerView
from tui.substitute import SubstituteView
from tui.swaplog import SwapLogView

if TYPE_CHECKING:
    from collections.abc import Callable

    from partsdb.search import SearchIndex
    from partsdb.storage.database import Database

VIEWS: tuple[tuple[str, str, str], ...] = (
    ("drawers", "f2", "Drawers"),
    ("devices", "f3", "Devices"),
    ("substitute", "f4", "Substitute"),
    ("bench", "f5", "Bench"),
    ("ledger", "f6", "Ledger"),
    ("swaps", "f7", "Swaps"),
    ("jobs", "f8", "Jobs"),
)


class ViewBar(Static):
    """The line above the footer: every view with its key, the current one marked, and the
    database."""

    def show(self, current: str, database: str) -> None:
        text = Text()
        for ident, key, label in VIEWS:
            style = "reverse bold" if ident == current else "dim"
            text.append(f"{key.upper()}", style=style + " bold")
            text.append(f" {label}", style=style)
            text.append("  ")
        text.append(f" {database}", style="italic dim")
        self.update(text)


class PartsdbApp(App[None]):
    """Drawers, Devices, Substitute, Bench, Ledger and Swaps over one open database."""

    CSS_PATH = "partsdb.tcss"
    TITLE = "partsdb"
    HORIZONTAL_BREAKPOINTS: ClassVar[list[tuple[int, str]]] = [(0, "-narrow"), (110, "-wide")]
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("f1", "help", "Help"),
        Binding("question_mark", "help", "Help", show=False),
        # The view keys are drawn by the ViewBar just above the footer (one line for all six
        # at 80 columns); the Textual footer below it lists the current view's actions.
        # Priority: the app switches the view the moment F2-F7 arrives. Without it the key
        # first travels to the focused field and back, and a character typed right behind it
        # (tmux delivers both in one read) went to the old view's field and was lost.
        *[Binding(key, f"show('{ident}')", label, show=False, priority=True)
          for ident, key, label in VIEWS],
        # ctrl+l redraws a terminal in most programs; here it re-reads the database as well.
        Binding("ctrl+l", "refresh_data", "Refresh", priority=True),
        Binding("ctrl+q", "quit", "Quit", show=False),
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

    def compose(self) -> ComposeResult:
        with ContentSwitcher(initial=self.start, id="views"):
            yield DrawersView(self.db, id="drawers")
            yield DevicesView(self.db, id="devices")
            yield SubstituteView(self.db, id="substitute")
            yield BenchView(self.db, id="bench")
            yield LedgerView(self.db, id="ledger")
            yield SwapLogView(self.db, id="swaps")
            yield JobsView(self.db, id="jobs")
        yield ViewBar(id="view-bar")
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
        for ident, _key, _label in VIEWS:
            view = self.view(ident)
            if hasattr(view, "refresh_data"):
                view.refresh_data(visible=ident == self.current)
        self.notify(f"Data {why}: view re-read.", timeout=2)

    def _warm_up(self) -> None:
        # One thread, in order of need: the search index (typing in Devices), then the imports
        # of Bench and Substitute. Two threads at once fight the UI for the GIL.
        if self.catalog_index.index is None and not self.catalog_index.building:
            self.catalog_index.building = True
            self.run_worker(self._index_then_imports, thread=True, group="index")

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
        try:
            return self.db.describe()
        except Exception:  # a label must never stop the app
            return ""

    def view(self, ident: str) -> Any:
        return self.query_one(f"#{ident}")

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        # A form holds typed input: finish or cancel it before switching views.
        if action == "show" and isinstance(self.screen, ModalScreen):
            return isinstance(self.screen, HelpScreen)
        return True

    def action_show(self, ident: str) -> None:
        """Switch to a view, loading its data the first time it is shown."""
        if isinstance(self.screen, HelpScreen):
            self.screen.dismiss()
        self.current = ident
        self.query_one("#views", ContentSwitcher).current = ident
        self.query_one(ViewBar).show(ident, self._database_label())
        view = self.view(ident)
        if hasattr(view, "load"):
            view.load()
        focus = {"drawers": "#lots-table", "devices": "#dev-search", "substitute": "#sub-query",
                 "bench": "#bn-original", "ledger": "#lg-device",
                 "swaps": "#swaps-table", "jobs": ".jb-focus"}.get(ident)
        targets = view.query(focus) if focus else None
        # Focus now, not through focus() (which defers it to a later message): a key typed
        # right after F3/F4 may already be queued behind this one, and must reach the new
        # view's field, not the hidden field of the view just left.
        if targets:
            self.screen.set_focus(targets.first())
        else:
            self.screen.focus_next()
        self.refresh_bindings()

    def action_help(self) -> None:
        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    @on(DevicesView.DeviceChosen)
    def _substitute_for(self, event: DevicesView.DeviceChosen) -> None:
        self.action_show("substitute")
        self.view("substitute").search_for(event.designation)

    def get_system_commands(self, screen: Screen[Any]) -> Iterable[SystemCommand]:
        """The palette's main actions, after Textual's own (theme, keys, quit)."""
        yield from super().get_system_commands(screen)
        for ident, key, label in VIEWS:
            yield SystemCommand(f"Go to {label}", f"Show the {label} view ({key.upper()})",
                                lambda i=ident: self.action_show(i))
        for action in ("receive", "take", "return", "move", "count"):
            yield SystemCommand(f"Stock: {action}", f"{action.capitalize()} parts of the selected "
                                "lot (Drawers)", lambda a=action: self._drawer_action(a))
        yield SystemCommand("Device: add", "Add a device to the catalog",
                            lambda: self._devices_action("add"))
        yield SystemCommand("Device: edit", "Edit the selected device",
                            lambda: self._devices_action("edit"))
        yield SystemCommand("Help and safety cautions", "Keys and cautions (F1)", self.action_help)

    def _drawer_action(self, action: str) -> None:
        self.action_show("drawers")
        self.view("drawers").action_stock(action)

    def _devices_action(self, action: str) -> None:
        self.action_show("devices")
        getattr(self.view("devices"), f"action_{action}")()


def _import_heavy_modules() -> None:
    """Import what the Bench and Substitute views need (scipy among it: about 1 s) in the
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
