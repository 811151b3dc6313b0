"""Plain-text handover for a terminal, e-mail or a printer: every line fits 80 columns.

Tables too wide for 80 columns (long names) fall back to one wrapped line per row rather than being cut.
User text is made inert: control and other non-printing characters (terminal escapes, bidirectional
overrides) are dropped, line breaks become spaces.
"""
from __future__ import annotations

import textwrap
from typing import Any, Mapping, Sequence

from .layout import Block, blocks

WIDTH = 80
GAP = "  "


def clean(text: Any) -> str:
    """One line of printable text."""
    s = str(text)
    return "".join(ch if ch.isprintable() else (" " if ch in "\n\r\t" else "") for ch in s)


def _wrap(text: str, first: str = "", rest: str | None = None, width: int = WIDTH) -> list[str]:
    rest = first if rest is None else rest
    return textwrap.wrap(clean(text), width, initial_indent=first, subsequent_indent=rest,
                         break_long_words=True, break_on_hyphens=False) or [first.rstrip()]


def _table(headers: Sequence[str], rows: Sequence[Sequence[Any]], align: str, width: int = WIDTH) -> list[str]:
    cells = [[clean(c) for c in row] for row in rows]
    heads = [clean(h) for h in headers]
    widths = [max([len(h)] + [len(r[k]) for r in cells]) for k, h in enumerate(heads)]
    if sum(widths) + len(GAP) * (len(widths) - 1) > width:
        out = []
        for row in cells:
            out += _wrap("; ".join(f"{h} {c}" for h, c in zip(heads, row)), "- ", "  ", width)
        return out

    def line(values: Sequence[str]) -> str:
        return GAP.join(v.rjust(w) if a == "r" else v.ljust(w) for v, w, a in zip(values, widths, align)).rstrip()

    return [line(heads), line(["-" * w for w in widths])] + [line(r) for r in cells]


def _kv(rows: Sequence[tuple[str, str]], width_all: int = WIDTH) -> list[str]:
    width = min(14, max(len(k) for k, _ in rows))
    out = []
    for key, value in rows:
        label = f"{clean(key)}:".ljust(width + 2)
        out += _wrap(f"{label}{clean(value)}", "", " " * (width + 2), width_all)
    return out


def _block(b: Block, width: int = WIDTH) -> list[str]:
    if b.kind == "title":
        lines = _wrap(b.text, width=width)
        return lines + ["=" * max(len(x) for x in lines)]
    if b.kind == "heading":
        lines = _wrap(b.text, width=width)
        return lines + ["-" * max(len(x) for x in lines)]
    if b.kind == "para":
        return _wrap(("CAUTION: " if b.style == "caution" else "") + b.text, width=width)
    if b.kind == "kv":
        return _kv(b.rows, width)
    if b.kind == "table":
        return _table(b.headers, b.rows, b.align, width)
    if b.kind == "list":
        mark = "! " if b.style == "warn" else "- "
        return [line for item in b.rows for line in _wrap(item, mark, "  ", width)]
    if b.kind == "signoff":
        out = []
        for role, name in b.rows:
            out += _wrap(f"{role}: {name}", width=width)
            sign = "    signature ______________________   time (UTC) ________________"
            out += [sign] if len(sign) <= width else ["    signature ______________________",
                                                       "    time (UTC) ________________"]
        return out
    return []  # the chart has no text form; its figures are in the list above it


def render(report: Mapping[str, Any], width: int = WIDTH) -> str:
    """The report with every line at most ``width`` columns (80 for a file; the console's preview passes
    the room it has, so nothing is cut at 80x24)."""
    width = max(40, int(width))
    lines: list[str] = []
    previous = None
    for b in blocks(report):
        body = _block(b, width)
        if body and previous is not None and previous not in ("title", "heading"):
            lines.append("")
        lines += body
        previous = b.kind if body else previous
    return "\n".join(lines) + "\n"
