"""The watch list: chain integrity, pending plans with their approval state, and warnings."""
from __future__ import annotations

import textwrap
from datetime import datetime, timezone
from typing import Any, Mapping, Sequence

from rich.text import Text
from textual.widget import Widget

from .. import fmt


def approval_text(state: str | None, wide: bool) -> Text:
    """Glyph and word(s) for a plan's approval state (the glyph alone never carries it)."""
    sym, words, style = fmt.approval_tag(state or "none")
    if not wide:
        words = {"approval stale": "stale", "approved, re-checking": "approved…",
                 "approved, not re-checked": "approved?"}.get(
            words, words)
    return Text(f"{sym} {words}", style=style)


VERDICT_WORD = {"feasible": ("✓ go", "green"), "marginal": ("◐ MARGINAL", f"bold {fmt.COLOUR['attention']}"),
                "infeasible": ("✗ INFEASIBLE", "bold red")}
"""A plan's check now, as a glyph and a word (never colour alone)."""


def plan_lines(plans: Sequence[Mapping[str, Any]], approvals: Mapping[int, str], width: int, now: str,
               verdicts: Mapping[str, Mapping[str, Any]] | None = None) -> list[Text]:
    """Pending plans in the richest wording that fits ``width`` for all of them (one wording for the list):
    time, lateness, approval state, and the plan's check now (or '… checking' until the samples are in)."""
    verdicts = verdicts or {}
    def wordings(p: Mapping[str, Any]) -> list[Text]:
        late = p["at"][:16] < now
        when = fmt.when(p["at"])
        tries = [
            (f"◇ #{p['id']} PLAN {p['engine']} {p['dv_m_s']:,.2f} m/s at {when}", " overdue", True),
            (f"◇ #{p['id']} {p['engine']} {p['dv_m_s']:,.2f} m/s {when}", " overdue", True),
            (f"◇ #{p['id']} {p['engine']} {p['dv_m_s']:,.2f} m/s {when[5:10]}", " late", False),
            (f"◇ #{p['id']} {p['engine']} {p['dv_m_s']:,.1f} m/s {when[5:10]}", " late", False),
            (f"#{p['id']} {p['engine']} {p['dv_m_s']:,.1f} m/s {when[5:10]}", " late", False),
            (f"#{p['id']} {p['engine']} {p['dv_m_s']:,.1f} m/s", " late", False),  # narrow: the verdict first
            (f"#{p['id']} {p['engine']} {p['dv_m_s']:,.1f}", " late", False),
        ]
        out = []
        for text, late_word, wide in tries:
            line = Text(text + (late_word if late else ""), style="yellow")
            line.append(" ")
            line.append_text(approval_text(approvals.get(p["id"]), wide))
            v = verdicts.get(str(p["id"]))
            word, style = VERDICT_WORD.get(v["verdict"], ("?", "")) if v else ("… checking" if wide else "…", "#9e9e9e")
            line.append(" · " if wide else " ")
            line.append(word, style=style)
            out.append(line)
        return out

    options = [wordings(p) for p in plans]
    for i in range(len(options[0]) if options else 0):
        if all(o[i].cell_len <= width for o in options):
            return [o[i] for o in options]
    return [o[-1] for o in options]


class WatchList(Widget):
    """Chain integrity, pending plans and warnings: what needs a look."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.chain = ("…", "checking the chain", "yellow")
        self.pending: Sequence[dict[str, Any]] = ()
        self.approvals: Mapping[int, str] = {}
        self.warnings: Sequence[str] = ()
        self.verdicts: Mapping[str, Mapping[str, Any]] = {}

    def show(self, chain: tuple[str, str, str], pending, warnings, approvals: Mapping[int, str] | None = None,
             verdicts: Mapping[str, Mapping[str, Any]] | None = None) -> None:
        """``approvals``: plan id -> approved | rejected | stale | none | approved? (not yet re-checked);
        ``verdicts``: plan id (text) -> its check now."""
        self.chain, self.pending, self.warnings = chain, pending, warnings
        self.approvals = approvals or {}
        self.verdicts = verdicts or {}
        self.refresh(layout=True)

    def _warning_lines(self, width: int) -> list[str]:
        """Wide panels wrap each warning (they carry figures); narrow ones keep one line each."""
        if width < 50:
            return [f"⚠ {w}" for w in self.warnings]
        out = []
        for w in self.warnings:
            out += textwrap.wrap(f"⚠ {w}", width=max(10, width), subsequent_indent="  ")
        return out

    def get_content_height(self, container, viewport, width: int) -> int:
        return 1 + max(1, len(self.pending)) + max(1, len(self._warning_lines(width)))

    def all_lines(self, w: int) -> list[Text]:
        lines = []
        sym, text, style = self.chain
        lines.append(Text(f"{sym} chain {text}", style=style))
        if not self.pending:
            lines.append(Text("◇ no pending plans", style="#9e9e9e"))
        now = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M")
        lines += plan_lines(self.pending, self.approvals, w, now, self.verdicts)
        if not self.warnings:
            lines.append(Text("✓ no warnings", style="green"))
        for line in self._warning_lines(w):
            lines.append(Text(line, style=fmt.COLOUR["attention"]))
        return lines

    def render(self) -> Text:
        """Every line that fits; when some do not, the last visible line says how many are hidden and that
        the alerts key shows them all (a hidden warning must never look like no warning)."""
        w = max(10, self.size.width)
        lines = self.all_lines(w)
        room = self.size.height
        if room and len(lines) > room:
            hidden = len(lines) - (room - 1)
            lines = lines[:room - 1] + [Text(f"▼ {hidden} more line{'s' if hidden > 1 else ''}: press a for all",
                                             style="bold #ff8700")]
        return Text("\n").join(fmt.fit(line, w) for line in lines)
