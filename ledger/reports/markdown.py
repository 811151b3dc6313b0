"""Markdown handover (CommonMark with pipe tables), for a ticket, a wiki or a chat.

User text cannot become markup: control characters are dropped, &, < and > become entities (Markdown
passes raw HTML through), and the punctuation Markdown acts on is backslash-escaped, so a note holding
a link, an image, a table pipe or a heading marker shows as the characters typed.
"""
from __future__ import annotations

import html
import re
from typing import Any, Mapping, Sequence

from .layout import Block, blocks
from .text import clean

_ACTIVE = re.compile(r"([\\`*_\[\]|~])")
_LEADING_MARK = re.compile(r"^([-=+#])")
_LEADING_NUMBER = re.compile(r"^(\d+)([.)])")


def esc(text: Any, line_start: bool = False) -> str:
    """Inert Markdown for one piece of user text. Emphasis, code, links and images all need one of the
    escaped characters; ``line_start`` also stops a list, heading or rule where a block begins."""
    s = _ACTIVE.sub(r"\\\1", html.escape(clean(text).strip(), quote=False))
    if line_start:
        s = _LEADING_NUMBER.sub(r"\1\\\2", _LEADING_MARK.sub(r"\\\1", s))
    return s


def _table(headers: Sequence[str], rows: Sequence[Sequence[Any]], align: str) -> list[str]:
    rule = ["---:" if a == "r" else ":---" for a in align]
    out = ["| " + " | ".join(esc(h) for h in headers) + " |", "| " + " | ".join(rule) + " |"]
    return out + ["| " + " | ".join(esc(c) for c in row) + " |" for row in rows]


def _block(b: Block) -> list[str]:
    if b.kind == "title":
        return [f"# {esc(b.text)}"]
    if b.kind == "heading":
        return [f"## {esc(b.text)}"]
    if b.kind == "para":
        return [f"> **Caution:** {esc(b.text)}"] if b.style == "caution" else [esc(b.text, True)]
    if b.kind == "kv":
        return [f"- **{esc(k)}:** {esc(v)}" for k, v in b.rows]
    if b.kind == "table":
        return _table(b.headers, b.rows, b.align)
    if b.kind == "list":
        mark = "- **Warning:** " if b.style == "warn" else "- "
        return [mark + esc(item, mark == "- ") for item in b.rows]
    if b.kind == "signoff":
        return _table(("Role", "Name", "Signature", "Time (UTC)"), [(r, n, "", "") for r, n in b.rows], "llll")
    return []  # the chart has no Markdown form; its figures are in the list above it


def render(report: Mapping[str, Any]) -> str:
    parts = [_block(b) for b in blocks(report)]
    return "\n\n".join("\n".join(p) for p in parts if p) + "\n"
