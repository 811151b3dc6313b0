"""State panels: tank gauges, engine capability, and the watch list (chain, pending plans, warnings).

They only draw what the screen hands them (plain dicts from the services); they never read the ledger.
"""
from __future__ import annotations

import textwrap
from datetime import datetime, timezone
from typing import Any, Sequence

from rich.text import Text
from textual.widget import Widget

from .. import fmt


class TankGauges(Widget):
    """Each tank: name and usable figure, then a bar of residual / reserve share / free / used."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.tanks: list[dict[str, Any]] = []

    def show(self, tanks: list[dict[str, Any]]) -> None:
        self.tanks = tanks
        self.refresh(layout=True)

    def get_content_height(self, container, viewport, width: int) -> int:
        per = 3 if width >= 56 else 2
        return max(1, per * len(self.tanks))

    def render(self) -> Text:
        w = max(20, self.size.width)
        wide = w >= 56
        out = Text(no_wrap=True, overflow="ellipsis")
        for t in self.tanks:
            load_usable = max(t["load_kg"] - t["residual_kg"], 1e-12)
            pct = 100.0 * t["usable_kg"] / load_usable
            head = Text(f"{t['id']}", style="bold")
            if wide:
                head.append(f"  ({t['fluid']})", style="grey70")
            fig = f"usable {t['usable_kg']:,.1f} kg {pct:4.0f}%"
            head.append(" " * max(1, w - len(head.plain) - len(fig)))
            head.append(fig)
            out.append_text(fmt.fit(head, w))
            out.append("\n")
            tail = f" {t['remaining_kg']:,.1f}/{t['load_kg']:,.0f}"
            out.append_text(fmt.gauge(t, w - len(tail)))
            out.append(tail, style="grey70")
            out.append("\n")
            if wide:
                out.append(f"  free {t['free_kg']:,.1f} · reserve {t['reserve_kg']:,.1f} · "
                           f"residual {t['residual_kg']:,.1f} kg\n", style="grey70")
        out.rstrip()
        return out


class EngineTable(Widget):
    """dv available and dv free per engine, the tank that limits, and whether reserves are met."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.engines: list[dict[str, Any]] = []
        self.reserves: list[dict[str, Any]] = []

    def show(self, engines: list[dict[str, Any]], reserves: list[dict[str, Any]]) -> None:
        self.engines, self.reserves = engines, reserves
        self.refresh(layout=True)

    def get_content_height(self, container, viewport, width: int) -> int:
        extra = 1 if width >= 56 and self.reserves else 0
        return 1 + len(self.engines) + extra

    def render(self) -> Text:
        w = self.size.width
        wide = w >= 56
        out = Text(no_wrap=True, overflow="ellipsis")
        a, b = (10, 6) if wide else (9, 5)
        head = f"{'engine':<{b + 1}}{'dv avail':>{a}}{'dv free':>{a}} {'limit':<{b}} " + ("reserves" if wide else "rsv")
        out.append_text(fmt.fit(Text(head, style="bold underline"), w))
        out.append("\n")
        for e in self.engines:
            line = Text(f"{e['engine']:<{b + 1}}{e['dv_available_m_s']:>{a},.1f}{e['dv_free_m_s']:>{a},.1f} "
                        f"{(e['limiting_tank'] or '-'):<{b}} ")
            line.append(("met" if wide else "ok") if e["reserves_met"] else ("NOT MET" if wide else "NO"),
                        style="green" if e["reserves_met"] else "bold red")
            out.append_text(fmt.fit(line, w))
            out.append("\n")
        if wide and self.reserves:
            out.append("held back: ", style="grey70")
            out.append(", ".join(f"{r['id']} {r['dv_m_s']:,.1f} m/s ({r['engine']})" for r in self.reserves),
                       style="grey70")
        return out


class WatchList(Widget):
    """Chain integrity, pending plans and warnings: what needs a look."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.chain = ("…", "checking the chain", "yellow")
        self.pending: Sequence[dict[str, Any]] = ()
        self.warnings: Sequence[str] = ()

    def show(self, chain: tuple[str, str, str], pending, warnings) -> None:
        self.chain, self.pending, self.warnings = chain, pending, warnings
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

    def render(self) -> Text:
        w = max(10, self.size.width)
        lines = []
        sym, text, style = self.chain
        lines.append(Text(f"{sym} chain {text}", style=style))
        if not self.pending:
            lines.append(Text("◇ no pending plans", style="grey62"))
        now = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M")
        for p in self.pending:
            late = " overdue" if p["at"][:16] < now else ""
            if w >= 50:
                text = f"◇ #{p['id']} PLAN {p['engine']} {p['dv_m_s']:,.2f} m/s at {fmt.when(p['at'])}{late}"
            else:  # narrow: the date is enough
                text = f"◇ #{p['id']} {p['engine']} {p['dv_m_s']:,.2f} m/s {fmt.when(p['at'])[5:10]}{late}"
            lines.append(Text(text, style="yellow"))
        if not self.warnings:
            lines.append(Text("✓ no warnings", style="green"))
        for line in self._warning_lines(w):
            lines.append(Text(line, style="dark_orange"))
        return Text("\n").join(fmt.fit(line, w) for line in lines)
