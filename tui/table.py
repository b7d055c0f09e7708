"""A table that draws only the rows on screen, for catalogs of hundreds of thousands of devices.

Textual's DataTable measures every cell up front (RECIPES.md: 37 s to first paint for 200,000
rows), so the catalog uses this ScrollView instead: the virtual height is the row count, and
``render_line`` asks a :class:`RowSource` for just the visible rows. The source may page them
from the database; the table owns the cursor and the header line.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar, Protocol

from rich.segment import Segment
from rich.style import Style
from textual import events
from textual.binding import Binding, BindingType
from textual.geometry import Size
from textual.message import Message
from textual.reactive import reactive
from textual.scroll_view import ScrollView
from textual.strip import Strip


@dataclass(frozen=True)
class Column:
    """One column: header label, width in cells, and whether numbers align right."""

    label: str
    width: int
    right: bool = False


Cell = str | tuple[str, str]
"""A cell is text, or (text, style) where style is a Rich style string."""


class RowSource(Protocol):
    """Rows for a :class:`VirtualTable`; ``row`` is called only for visible rows."""

    def __len__(self) -> int: ...

    def row(self, index: int) -> list[Cell]: ...


class _RowMessage(Message):
    """A message about one row of a :class:`VirtualTable`."""

    def __init__(self, table: VirtualTable, index: int) -> None:
        super().__init__()
        self.table = table
        self.index = index

    @property
    def control(self) -> VirtualTable:
        return self.table


class VirtualTable(ScrollView, can_focus=True):
    """A scrolling table over a :class:`RowSource` with a fixed header and a row cursor."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("up", "cursor(-1)", "Up", show=False),
        Binding("down", "cursor(1)", "Down", show=False),
        Binding("pageup", "page(-1)", "Page up", show=False),
        Binding("pagedown", "page(1)", "Page down", show=False),
        Binding("home", "jump(0)", "First", show=False),
        Binding("end", "jump(-1)", "Last", show=False),
        Binding("enter", "select", "Select", show=False),
    ]

    DEFAULT_CSS = """
    VirtualTable { height: 1fr; }
    VirtualTable > .virtual-table--cursor { background: $accent; color: $text; text-style: bold; }
    VirtualTable > .virtual-table--cursor-blur { background: $accent 35%; }
    """

    cursor = reactive(0, always_update=True)

    class Highlighted(_RowMessage):
        """The cursor moved to ``index`` (posted after every move)."""

    class Selected(_RowMessage):
        """Enter (or a click) on row ``index``."""

    def __init__(self, columns: list[Column], source: RowSource, *, id: str | None = None,
                 classes: str | None = None) -> None:
        super().__init__(id=id, classes=classes)
        self.columns = columns
        self.source = source
        self._header_style = Style(bold=True, underline=True)

    # ------------------------------------------------------------------ data

    def set_source(self, source: RowSource) -> None:
        """Show another set of rows; the cursor goes back to the first."""
        self.source = source
        self._resize()
        self.scroll_to(y=0, animate=False)
        self.cursor = 0

    def refresh_rows(self) -> None:
        """Redraw after the source's rows changed in place (same length or not)."""
        self._resize()
        if self.cursor >= len(self.source):
            self.cursor = max(0, len(self.source) - 1)
        self.refresh()

    def _resize(self) -> None:
        width = sum(c.width + 1 for c in self.columns)
        self.virtual_size = Size(width, len(self.source) + 1)

    def on_mount(self) -> None:
        self._resize()

    @property
    def row_count(self) -> int:
        return len(self.source)

    # ------------------------------------------------------------------ cursor

    def watch_cursor(self, value: int) -> None:
        self._scroll_cursor_into_view()
        self.refresh()
        if len(self.source):
            self.post_message(self.Highlighted(self, value))

    def _visible_rows(self) -> int:
        return max(1, self.scrollable_content_region.height - 1)

    def _scroll_cursor_into_view(self) -> None:
        top = int(self.scroll_offset.y)
        rows = self._visible_rows()
        if self.cursor < top:
            self.scroll_to(y=self.cursor, animate=False, immediate=True)
        elif self.cursor >= top + rows:
            self.scroll_to(y=self.cursor - rows + 1, animate=False, immediate=True)

    def move_to(self, index: int) -> None:
        n = len(self.source)
        if n:
            self.cursor = min(max(index, 0), n - 1)

    def action_cursor(self, step: int) -> None:
        self.move_to(self.cursor + step)

    def action_page(self, direction: int) -> None:
        self.move_to(self.cursor + direction * self._visible_rows())

    def action_jump(self, where: int) -> None:
        self.move_to(len(self.source) - 1 if where < 0 else 0)

    def action_select(self) -> None:
        if len(self.source):
            self.post_message(self.Selected(self, self.cursor))

    def on_focus(self) -> None:
        self.refresh()

    def on_blur(self) -> None:
        self.refresh()

    def on_click(self, event: events.Click) -> None:
        if event.y >= 1:
            index = int(self.scroll_offset.y) + event.y - 1
            if 0 <= index < len(self.source):
                self.cursor = index
                if event.chain > 1:
                    self.post_message(self.Selected(self, index))

    # ------------------------------------------------------------------ drawing

    def _cells(self, cells: list[Cell], base: Style) -> list[Segment]:
        segments: list[Segment] = []
        for column, cell in zip(self.columns, cells, strict=False):
            text, style = (cell, "") if isinstance(cell, str) else cell
            text = text if len(text) <= column.width else text[: column.width - 1] + "…"
            text = text.rjust(column.width) if column.right else text.ljust(column.width)
            segments.append(Segment(text, base + Style.parse(style) if style else base))
            segments.append(Segment(" ", base))
        return segments

    def render_line(self, y: int) -> Strip:
        scroll_x, scroll_y = self.scroll_offset
        width = self.scrollable_content_region.width
        base = self.rich_style
        if y == 0:
            strip = Strip(self._cells([c.label for c in self.columns], base + self._header_style))
            return strip.crop(scroll_x, scroll_x + width).extend_cell_length(width, base)
        index = int(scroll_y) + y - 1
        if index >= len(self.source):
            return Strip.blank(width, base)
        row_style = base
        if index == self.cursor:
            row_style = base + self.get_component_rich_style(
                "virtual-table--cursor" if self.has_focus else "virtual-table--cursor-blur")
        strip = Strip(self._cells(self.source.row(index), row_style))
        return strip.crop(scroll_x, scroll_x + width).extend_cell_length(width, row_style)

    COMPONENT_CLASSES: ClassVar[set[str]] = {"virtual-table--cursor", "virtual-table--cursor-blur"}
