"""LedgerGrid: a page of ledger rows drawn as one line of text each, with a row cursor.

Textual's DataTable renders every cell through rich's padding and cropping; for a 44-row page of a dozen
columns that was about half a second of the first paint on a loaded 2-core machine. The window only ever
shows one page, so a grid that joins each row into a single line does the same job in milliseconds:
fixed column widths from the page's contents, a header, a highlighted cursor row, zebra stripes,
horizontal scrolling by whole columns (‹ › in the header say more are off screen; the last column that
does not fit whole is shown cut with '…' when there is room for a part of it), keys and mouse.
"""
from __future__ import annotations

from typing import Any, Sequence

from rich.style import Style
from rich.text import Text
from textual.binding import Binding
from textual.events import Click, Resize
from textual.message import Message
from textual.widget import Widget

PAGE, END = 10**6, 10**9
MAX_WIDTH = 40
MIN_PART = 8
"""A column that does not fit whole is still shown, cut with '…', when this many cells are left for it."""


class LedgerGrid(Widget, can_focus=True):
    COMPONENT_CLASSES = {"grid--header", "grid--cursor", "grid--stripe"}
    BINDINGS = [
        Binding("up", "move(-1)", show=False), Binding("down", "move(1)", show=False),
        Binding("pageup", "move(-1000000)", show=False), Binding("pagedown", "move(1000000)", show=False),
        Binding("home", "move(-1000000000)", show=False), Binding("end", "move(1000000000)", show=False),
        Binding("left", "shift(-1)", show=False), Binding("right", "shift(1)", show=False),
        Binding("enter", "select", show=False),
    ]

    class Edge(Message):
        """Ask for another page: ``step`` rows (PAGE a page, END an end); 0 means 'I was resized'."""

        def __init__(self, step: int) -> None:
            super().__init__()
            self.step = step

    class Highlighted(Message):
        def __init__(self, key: str) -> None:
            super().__init__()
            self.key = key

    class Selected(Message):
        def __init__(self, key: str) -> None:
            super().__init__()
            self.key = key

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.columns: list[str] = []
        self.rows: list[tuple[str, list[Any]]] = []
        self.cursor = 0
        self.first_col = 0

    # --- data --------------------------------------------------------------------------------------
    def set_page(self, columns: Sequence[str], rows: Sequence[tuple[str, list[Any]]], cursor: int) -> None:
        self.columns, self.rows = list(columns), list(rows)
        self.cursor = max(0, min(cursor, len(self.rows) - 1))
        self.refresh()

    @property
    def row_count(self) -> int:
        return len(self.rows)

    @property
    def cursor_key(self) -> str | None:
        return self.rows[self.cursor][0] if self.rows else None

    @property
    def page_rows(self) -> int:
        return max(1, self.size.height - 1)

    # --- keys and mouse ------------------------------------------------------------------------------
    def action_move(self, step: int) -> None:
        if abs(step) == 1 and 0 <= self.cursor + step < len(self.rows):
            self.cursor += step
            self.refresh()
            self.post_message(self.Highlighted(self.rows[self.cursor][0]))
        else:
            self.post_message(self.Edge(step))

    def action_shift(self, step: int) -> None:
        self.first_col = max(0, min(len(self.columns) - 1, self.first_col + step))
        self.refresh()

    def action_select(self) -> None:
        if self.rows:
            self.post_message(self.Selected(self.rows[self.cursor][0]))

    def on_click(self, event: Click) -> None:
        i = event.y - 1
        if 0 <= i < len(self.rows):
            again = i == self.cursor
            self.cursor = i
            self.refresh()
            self.post_message(self.Highlighted(self.rows[i][0]))
            if again or event.chain >= 2:
                self.post_message(self.Selected(self.rows[i][0]))

    def on_resize(self, event: Resize) -> None:
        self.post_message(self.Edge(0))

    # --- drawing -------------------------------------------------------------------------------------
    def _widths(self) -> list[int]:
        widths = [len(c) for c in self.columns]
        for _, cells in self.rows:
            for j, cell in enumerate(cells):
                n = cell.cell_len if isinstance(cell, Text) else len(str(cell))
                if n > widths[j]:
                    widths[j] = min(n, MAX_WIDTH)
        return widths

    def _shown(self, widths: list[int]) -> range:
        """Columns that fit whole from ``first_col`` on (a column is never cut mid-label)."""
        used, last = 0, self.first_col
        for j in range(self.first_col, len(widths)):
            if used + widths[j] + 2 > self.size.width - 1 and j > self.first_col:
                break
            used += widths[j] + 2
            last = j + 1
        return range(self.first_col, last)

    def _line(self, cells: Sequence[Any], widths: list[int], style: Style | None, shown: range,
              more: str = "") -> Text:
        line = Text(no_wrap=True, overflow="crop", end="")
        for j in shown:
            cell = cells[j]
            text = cell.copy() if isinstance(cell, Text) else Text(str(cell))
            text.truncate(widths[j], overflow="ellipsis")
            pad = widths[j] - text.cell_len
            line.append(" ")
            if text.justify == "right":
                line.append(" " * pad)
                line.append_text(text)
            else:
                line.append_text(text)
                line.append(" " * pad)
            line.append(" ")
        line.truncate(self.size.width - len(more), pad=True)
        line.append(more)
        if style is not None:
            line.stylize(style, 0, len(line))
        return line

    def render(self) -> Text:
        if not self.columns:
            return Text("")
        widths = self._widths()
        header = self.get_component_rich_style("grid--header")
        # backgrounds only, so each cell keeps its own colour (the kind labels)
        cursor = Style(bgcolor=self.get_component_rich_style("grid--cursor").bgcolor, bold=self.has_focus)
        stripe = Style(bgcolor=self.get_component_rich_style("grid--stripe").bgcolor)
        shown = self._shown(widths)
        cut = False
        room = self.size.width - 2 - sum(widths[j] + 2 for j in shown)  # less the '›' and the edge
        if shown.stop < len(widths) and room >= MIN_PART + 2:  # the next column, shortened with '…'
            widths = list(widths)
            cut = widths[shown.stop] > room - 2
            widths[shown.stop] = min(widths[shown.stop], room - 2)
            shown = range(shown.start, shown.stop + 1)
        more = ("‹" if self.first_col else "") + ("›" if shown.stop < len(widths) or cut else "")
        lines = [self._line(self.columns, widths, header, shown, more)]
        for i, (_, cells) in enumerate(self.rows[: self.page_rows]):
            style = cursor if i == self.cursor else (stripe if i % 2 else None)
            lines.append(self._line(cells, widths, style, shown))
        return Text("\n").join(lines)

    def on_focus(self) -> None:
        self.refresh()

    def on_blur(self) -> None:
        self.refresh()
