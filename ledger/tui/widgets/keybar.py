"""The key bar at the foot of a screen: every action's key, wrapping onto a second line on narrow
terminals instead of cutting keys off (Textual's one-line Footer loses the last keys at 80 columns).
Each key is also a link: clicking it runs the action."""
from __future__ import annotations

from typing import Sequence

from textual.content import Content
from textual.widget import Widget

GAP = 2


class KeyBar(Widget):
    DEFAULT_CSS = "KeyBar { height: auto; link-style: none; link-color: $text; link-style-hover: bold; }"

    def __init__(self, keys: Sequence[tuple[str, str, str]], **kw) -> None:
        """keys: (key as shown, label, action, e.g. 'screen.burn')."""
        super().__init__(**kw)
        self.keys = list(keys)

    def _lines(self, width: int) -> list[list[tuple[str, str, str]]]:
        lines: list[list[tuple[str, str, str]]] = [[]]
        used = 0
        for item in self.keys:
            n = len(item[0]) + 1 + len(item[1])
            if lines[-1] and used + GAP + n > width:
                lines.append([])
                used = 0
            used += (GAP if lines[-1] else 0) + n
            lines[-1].append(item)
        return lines

    def get_content_height(self, container, viewport, width: int) -> int:
        return len(self._lines(max(1, width)))

    def render(self) -> Content:
        rows = []
        for line in self._lines(max(1, self.size.width)):
            parts = [Content.from_markup(f"[@click={a}][b $accent]{k}[/] {label}[/]", ) for k, label, a in line]
            rows.append(Content(" " * GAP).join(parts))
        return Content("\n").join(rows)
