"""The Devices view: the catalog with search-as-you-type, filters and a detail panel.

The list pages its rows from the database (``catalog.list_devices`` with limit/offset) through
a :class:`~tui.table.VirtualTable`, so 200,000 devices open as fast as 200. The fuzzy search
index is built once in a worker thread when the view first opens and rebuilt only after an add
or edit; each keystroke asks the index, never the database scan.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, ClassVar

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.message import Message
from textual.widgets import Input, Select, Static

from partsdb.device import FIELDS, Device
from tui.inputs import TextField
from tui.table import Cell, Column, VirtualTable

if TYPE_CHECKING:
    from partsdb.search import SearchIndex
    from partsdb.services.catalog import DeviceFilter
    from partsdb.storage.database import Database

PAGE = 200
SEARCH_LIMIT = 50

COLUMNS = [
    Column("Designation", 12), Column("Pol", 3), Column("Mat", 3), Column("Vceo", 6, True),
    Column("Ic max", 7, True), Column("Ptot", 7, True), Column("hFE", 8, True),
    Column("Package", 7), Column("Stock", 5, True), Column("Status", 9),
]


def status_cell(device: Device) -> Cell:
    """Flags as words (colour only repeats what the word says)."""
    if device.warnings and device.obsolete:
        return ("obs+susp", "bold yellow")
    if device.warnings:
        return ("suspect", "bold yellow")
    if device.obsolete:
        return ("obsolete", "magenta")
    return ("", "")


def hfe_text(device: Device) -> str:
    lo, hi = device.hfe_min, device.hfe_max
    if lo is None and hi is None:
        return "—"
    if hi is None:
        return f"{lo:g}+"
    if lo is None:
        return f"≤{hi:g}"
    return f"{lo:g}-{hi:g}"


def device_cells(device: Device, stock: int | None) -> list[Cell]:
    return [device.designation, device.polarity.upper(), device.material,
            device.display("vceo").replace(" ", ""), device.display("ic_max").replace(" ", ""),
            device.display("ptot").replace(" ", ""), hfe_text(device), device.package or "—",
            ("—", "dim") if not stock else (str(stock), "green"), status_cell(device)]


class CatalogRows:
    """The filtered catalog in key order, fetched a page at a time and kept."""

    def __init__(self, db: Database, filters: DeviceFilter | None,
                 stock: dict[str, int]) -> None:
        from partsdb.services import catalog

        self.db = db
        self.filters = filters
        self.stock = stock
        self._pages: dict[int, list[Device]] = {}
        with db.session() as session:
            self._count = catalog.count_devices(session, filters)

    def __len__(self) -> int:
        return self._count

    def device(self, index: int) -> Device | None:
        if not 0 <= index < self._count:
            return None
        page = index // PAGE
        if page not in self._pages:
            from partsdb.services import catalog

            with self.db.session() as session:
                self._pages[page] = catalog.list_devices(session, self.filters, limit=PAGE,
                                                         offset=page * PAGE)
        rows = self._pages[page]
        offset = index - page * PAGE
        return rows[offset] if offset < len(rows) else None

    def row(self, index: int) -> list[Cell]:
        device = self.device(index)
        if device is None:
            return ["…"]
        return device_cells(device, self.stock.get(device.key))


class HitRows:
    """Search hits, best first; each device is fetched when its row is first drawn.

    With a filter set, every hit is fetched at once (at most SEARCH_LIMIT) to drop the misses.
    """

    def __init__(self, db: Database, hits: list[Any], filters: DeviceFilter | None,
                 stock: dict[str, int]) -> None:
        self.db = db
        self.stock = stock
        self.hits = list(hits)
        self._devices: dict[int, Device | None] = {}
        if filters is not None:
            kept = [h for i, h in enumerate(self.hits) if _passes(self.device(i), filters)]
            self.hits, self._devices = kept, {}

    def __len__(self) -> int:
        return len(self.hits)

    def device(self, index: int) -> Device | None:
        if not 0 <= index < len(self.hits):
            return None
        if index not in self._devices:
            from partsdb.services import catalog

            with self.db.session() as session:
                self._devices[index] = catalog.get_device(session, self.hits[index].designation)
        return self._devices[index]

    def row(self, index: int) -> list[Cell]:
        device = self.device(index)
        if device is None:
            return ["…"]
        return device_cells(device, self.stock.get(device.key))


def _passes(device: Device | None, f: DeviceFilter | None) -> bool:
    """The same filter as the catalog query, applied to the few devices a search returned."""
    if device is None:
        return False
    if f is None:
        return True
    return ((not f.polarity or device.polarity == f.polarity)
            and (not f.material or device.material == f.material)
            and (not f.package or (device.package or "").upper() == f.package.upper())
            and (f.obsolete is None or device.obsolete == f.obsolete)
            and (f.suspect is None or bool(device.warnings) == f.suspect))


def detail_renderable(device: Device, stock_total: int, places: list[str]) -> Group:
    """Every parameter in engineering notation, the decoded designation, and the warnings."""
    from partsdb.designations import decode

    title = Text(device.designation, style="bold")
    title.append(f"  {device.polarity.upper()} {device.material} {device.kind}", style="")
    if device.obsolete:
        title.append("  OBSOLETE", style="magenta")
    grid = Table.grid(padding=(0, 1))
    grid.add_column(style="dim", no_wrap=True)
    grid.add_column()
    for spec in FIELDS:
        if spec.name in ("designation", "kind", "polarity", "material", "notes"):
            continue
        grid.add_row(spec.label, device.display(spec.name))
    parts: list[Any] = [title]
    stock_line = Text("Stock: ", style="dim")
    stock_line.append(f"{stock_total}" if stock_total else "none", style="green" if stock_total
                      else "")
    if places:
        stock_line.append("  in " + ", ".join(places[:4]) + (" …" if len(places) > 4 else ""))
    parts.append(stock_line)
    for warning in device.warnings:
        parts.append(Text("WARNING ", style="bold yellow") + Text(warning))
    parts.append(grid)
    if device.notes:
        parts.append(Text("Notes: ", style="dim") + Text(device.notes))
    decoded = decode(device.designation)
    d = Text("Designation: ", style="dim")
    d.append(decoded.standard)
    if decoded.registered_as and decoded.registered_as != decoded.normalized:
        d.append(f", registered as {decoded.registered_as}")
    implied = [x for x in (decoded.material_text, decoded.device_type, decoded.application,
                           decoded.power_class) if x]
    if decoded.gain_group:
        implied.append(f"gain group {decoded.gain_group}")
    if implied:
        d.append(": " + "; ".join(implied))
    parts.append(d)
    for line in [*decoded.inferred, *decoded.notes]:
        parts.append(Text("  · " + line, style="dim"))
    return Group(*parts)


class FilterBar(Horizontal):
    """Polarity, material, package, obsolete and suspect filters on one line."""

    class Changed(Message):
        """Any filter changed; ``filters`` is the new DeviceFilter (None: no filter)."""

        def __init__(self, filters: DeviceFilter | None) -> None:
            super().__init__()
            self.filters = filters

    def compose(self) -> ComposeResult:
        yield Select([("NPN", "npn"), ("PNP", "pnp")], prompt="polarity", id="f-polarity",
                     compact=True)
        yield Select([("Si", "si"), ("Ge", "ge"), ("other", "other")], prompt="material",
                     id="f-material", compact=True)
        yield TextField(placeholder="package", id="f-package", compact=True)
        yield Select([("obsolete", True), ("current", False)], prompt="obsolete?",
                     id="f-obsolete", compact=True)
        yield Select([("suspect", True), ("clean", False)], prompt="suspect?", id="f-suspect",
                     compact=True)

    def current(self) -> DeviceFilter | None:
        from partsdb.services.catalog import DeviceFilter

        def value(widget_id: str) -> Any:
            v = self.query_one(widget_id, Select).value
            return None if v is Select.NULL else v

        package = self.query_one("#f-package", Input).value.strip() or None
        f = DeviceFilter(polarity=value("#f-polarity"), material=value("#f-material"),
                         package=package, obsolete=value("#f-obsolete"),
                         suspect=value("#f-suspect"))
        return None if f == DeviceFilter() else f

    @on(Select.Changed)
    @on(Input.Changed, "#f-package")
    def _changed(self, event: Message) -> None:
        event.stop()
        self.post_message(self.Changed(self.current()))


class DevicesView(Vertical):
    """Catalog list, search, filters and the selected device's detail."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("slash", "focus_search", "Search", key_display="/"),
        Binding("a", "add", "Add"),
        Binding("e", "edit", "Edit"),
        Binding("s", "substitute", "Substitutes"),
        Binding("down", "focus_list", "List", show=False),
    ]

    class DeviceChosen(Message):
        """The user asked to find substitutes for ``designation``."""

        def __init__(self, designation: str) -> None:
            super().__init__()
            self.designation = designation

    def __init__(self, db: Database, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.db = db
        self.index: SearchIndex | None = None
        self.filters: DeviceFilter | None = None
        self.stock: dict[str, int] = {}
        self.places: dict[str, list[str]] = {}
        self._loaded = False

    def compose(self) -> ComposeResult:
        with Horizontal(id="dev-top"):
            yield TextField(placeholder="search designation or notes (fuzzy); ↓ to the list",
                        id="dev-search", compact=True)
            yield Static("", id="dev-count")
        yield FilterBar(id="dev-filters")
        with Horizontal(id="dev-body"):
            yield VirtualTable(COLUMNS, _Empty(), id="dev-table")
            with VerticalScroll(id="dev-detail-box"):
                yield Static("", id="dev-detail")

    @property
    def table(self) -> VirtualTable:
        return self.query_one("#dev-table", VirtualTable)

    def load(self) -> None:
        """Fill the list the first time the view is shown; build the search index meanwhile."""
        if self._loaded:
            return
        self._loaded = True
        self._load_stock()
        self._show_catalog()
        # Build the index after the list is painted, so the catalog shows at once.
        self.call_after_refresh(self.build_index)

    def _load_stock(self) -> None:
        from partsdb.services import stock

        with self.db.session() as session:
            summary = stock.stock_summary(session)
        self.stock = {k: s.quantity for k, s in summary.items()}
        self.places = {k: s.locations for k, s in summary.items()}

    @work(thread=True, exclusive=True, group="index")
    def build_index(self) -> None:
        from partsdb.search import SearchIndex
        from partsdb.services import catalog

        with self.db.session() as session:
            designations, notes = catalog.designations_and_notes(session)
        index = SearchIndex(designations, notes)
        self.app.call_from_thread(self._index_ready, index)

    def _index_ready(self, index: SearchIndex) -> None:
        self.index = index
        query = self.query_one("#dev-search", Input).value
        if query.strip():
            self._search(query)

    def _show_catalog(self) -> None:
        rows = CatalogRows(self.db, self.filters, self.stock)
        self.table.set_source(rows)
        self._count_text(f"{len(rows):,} devices" + (" (filtered)" if self.filters else ""))
        if not len(rows):
            self.query_one("#dev-detail", Static).update("No device matches.")

    def _count_text(self, text: str) -> None:
        self.query_one("#dev-count", Static).update(text)

    def _search(self, query: str) -> None:
        if not query.strip():
            self._show_catalog()
            return
        if self.index is None:
            self._count_text("indexing…")
            return
        hits = self.index.find(query, limit=SEARCH_LIMIT)
        rows = HitRows(self.db, hits, self.filters, self.stock)
        self.table.set_source(rows)
        self._count_text(f"{len(rows)} match" + ("" if len(rows) == 1 else "es"))
        if not len(rows):
            self.query_one("#dev-detail", Static).update(f"Nothing like {query!r}.")

    @on(Input.Changed, "#dev-search")
    def _query_changed(self, event: Input.Changed) -> None:
        self._search(event.value)

    @on(Input.Submitted, "#dev-search")
    def _query_submitted(self) -> None:
        self.table.focus()

    @on(FilterBar.Changed)
    def _filters_changed(self, event: FilterBar.Changed) -> None:
        self.filters = event.filters
        self._search(self.query_one("#dev-search", Input).value)

    @on(VirtualTable.Highlighted, "#dev-table")
    def _highlighted(self, event: VirtualTable.Highlighted) -> None:
        device = self.selected_device()
        if device is not None:
            self.query_one("#dev-detail", Static).update(detail_renderable(
                device, self.stock.get(device.key, 0), self.places.get(device.key, [])))

    @on(VirtualTable.Selected, "#dev-table")
    def _selected(self, event: VirtualTable.Selected) -> None:
        self.query_one("#dev-detail-box").focus()

    def selected_device(self) -> Device | None:
        source = self.table.source
        getter = getattr(source, "device", None)
        return getter(self.table.cursor) if getter else None

    # ------------------------------------------------------------------ actions

    def action_focus_list(self) -> None:
        self.table.focus()

    def action_focus_search(self) -> None:
        self.query_one("#dev-search", Input).focus()

    def action_add(self) -> None:
        from tui.device_form import DeviceForm

        self.app.push_screen(DeviceForm(self.db, None), self._after_form)

    def action_edit(self) -> None:
        from tui.device_form import DeviceForm

        device = self.selected_device()
        if device is None:
            self.notify("Select a device to edit first.", severity="warning")
            return
        self.app.push_screen(DeviceForm(self.db, device), self._after_form)

    def action_substitute(self) -> None:
        device = self.selected_device()
        if device is not None:
            self.post_message(self.DeviceChosen(device.designation))

    def _after_form(self, device: Device | None) -> None:
        if device is None:
            return
        self.notify(f"Saved {device.designation}.")
        self._load_stock()
        self.index = None
        self.build_index()  # the only rebuild: the catalog changed
        # Show the saved record: the search runs again once the new index is ready.
        self.query_one("#dev-search", Input).value = device.designation


class _Empty:
    def __len__(self) -> int:
        return 0

    def row(self, index: int) -> list[Cell]:
        return []
