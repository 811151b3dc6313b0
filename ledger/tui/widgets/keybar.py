"""The key bar at the foot of a screen: every action's key, wrapping onto a second line on narrow
terminals instead of cutting keys off (Textual's one-line Footer loses the last keys at 80 columns).
When the full labels would take more than two lines, the keys move closer together, then short labels
(whole words only) are used. Each key is also a link:
clicking it runs the action."""
from __future__ import annotations

from typing import Sequence

from textual.content import Content
from textual.widget import Widget

GAP = 2


class KeyBar(Widget):
    DEFAULT_CSS = "KeyBar { height: auto; link-style: none; link-color: $text; link-style-hover: bold; }"

    def __init__(self, keys: Sequence[tuple], **kw) -> None:
        """keys: (key as shown, label, action such as 'screen.burn'[, short label])."""
        super().__init__(**kw)
        self.keys = [(k[0], k[1], k[2]) for k in keys]
        self.short = [(k[0], k[3] if len(k) > 3 else k[1], k[2]) for k in keys]

    def _lines(self, width: int) -> list[list[tuple[str, str, str]]]:
        """Full labels if they fit on two lines; else shorten the longest savings first until they do."""
        keys = list(self.keys)
        self.gap = GAP
        lines = self._wrap(keys, width, GAP)
        if len(lines) > 2:
            self.gap = 1
            lines = self._wrap(keys, width, 1)
        order = sorted(range(len(keys)), key=lambda i: len(self.short[i][1]) - len(keys[i][1]))
        for i in order:
            if len(lines) <= 2 or self.short[i][1] == keys[i][1]:
                break
            keys[i] = self.short[i]
            lines = self._wrap(keys, width, self.gap)
        return lines

    @staticmethod
    def _wrap(keys, width: int, gap: int = GAP) -> list[list[tuple[str, str, str]]]:
        lines: list[list[tuple[str, str, str]]] = [[]]
        used = 0
        for item in keys:
            n = len(item[0]) + 1 + len(item[1])
            if lines[-1] and used + gap + n > width:
                lines.append([])
                used = 0
            used += (gap if lines[-1] else 0) + n
            lines[-1].append(item)
        return lines

    def get_content_height(self, container, viewport, width: int) -> int:
        return len(self._lines(max(1, width)))

    def render(self) -> Content:
        rows = []
        lines = self._lines(max(1, self.size.width))
        for line in lines:
            parts = [Content.from_markup(f"[@click={a}][b $accent]{k}[/] {label}[/]", ) for k, label, a in line]
            rows.append(Content(" " * self.gap).join(parts))
        return Content("\n").join(rows)
