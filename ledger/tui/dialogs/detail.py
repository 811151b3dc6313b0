"""One entry in full: every field, who and when it was logged, what it drew, its place in the chain."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from ...services.imports import source_line
from ...services.ledger import FIELDS_BY_KIND
from ...services.views import CAUTION
from .. import fmt
from .detail_fields import data_lines

UNITS = {"dv": "m/s", "duration": "s", "propellant": "kg", "delta": "kg", "on_time": "s per pulse"}


def detail_text(d: dict[str, Any]) -> Text:
    """Every field of one entry (``browse.detail`` plus ``approval_now`` for plans and decisions)."""
    out = Text()

    def line(label: str, value: Any, style: str = "") -> None:
        if value is None or value == "" or value == []:
            return
        out.append(f"{label:<17} ", style="grey70")
        out.append(f"{value}\n", style=style)

    out.append_text(fmt.kind_text(d["kind"], d.get("superseded", False)))
    out.append("\n\n")
    line("happened at", d.get("at"))
    line("logged at", d.get("recorded"))
    line("logged by", d.get("by"))
    line("from host", d.get("host"))
    line("program", d.get("program"))
    line("imported from", source_line((d.get("data") or {}).get("source")))
    special = data_lines(d["kind"], d.get("data", {}), d.get("approval_now"))
    for label, value, style in special or ():
        line(label, value, style)
    for k, v in ({} if special is not None else d.get("data", {})).items():
        if k == "source":  # shown above as one 'imported from' line
            continue
        if k == "changes":
            for ck, cv in v.items():
                line(f"  sets {ck}", f"{cv} {UNITS.get(ck, '')}".strip())
        else:
            line(k, f"{v:,.6g} {UNITS[k]}" if k in UNITS and isinstance(v, (int, float)) else v)
    line("status", d.get("state"))
    if d["kind"] == "plan" and d.get("state") == "pending" and d.get("approval_now"):
        sym, words, style = fmt.approval_tag(d["approval_now"])
        line("approval", f"{sym} {words}", style)
    line("superseded", "yes: a later correction replaces it" if d.get("superseded") else None, "bold red")
    line("corrected by", ", ".join(f"#{c}" for c in d.get("corrected_by", [])) or None)
    line("now counts as", d.get("now_counts_as"))
    line("executed by", f"#{d['executed_by']}" if d.get("executed_by") else None)
    line("adopted by", f"#{d['adopted_by']} (re-baseline)" if d.get("adopted_by") else None)
    line("executes plan", f"#{d['plan']}" if d.get("plan") else None)
    if d.get("mass_after_kg") is not None:
        out.append("\neffect in the replay\n", style="bold")
        line("propellant", f"{d['propellant_kg']:,.4f} kg")
        for t, x in (d.get("drawn_kg") or {}).items():
            line(f"  drawn from {t}", f"{x:,.4f} kg")
        line("delta-v", f"{d['dv_m_s']:,.4f} m/s" if d.get("dv_m_s") else None)
        line("mass after", f"{d['mass_after_kg']:,.3f} kg")
    line("note", d.get("note"))
    if d.get("hash"):
        out.append("\nchain\n", style="bold")
        line("hash", d["hash"][:32] + "…")
        line("previous", d.get("prev", "")[:32] + "…")
    return out


def fit_scroll(screen, body_id: str, content_id: str, spare: int) -> None:
    """Give a scrolling body the height of its content, at most the screen's height less ``spare`` rows."""
    body, content = screen.query_one(body_id), screen.query_one(content_id)
    width = max(10, body.size.width - 1)
    need = content.get_content_height(screen.size, screen.size, width)
    body.styles.height = max(3, min(need, screen.size.height - spare))


class DetailDialog(ModalScreen):
    BINDINGS = [Binding("escape", "close", "Close"), Binding("enter", "close", "Close", show=False),
                Binding("c", "correct", "Correct it"), Binding("k", "check", "Check it"),
                Binding("d", "decide", "Decide on it"), Binding("r", "rebaseline", "Re-baseline from it")]

    def __init__(self, detail: dict[str, Any]) -> None:
        super().__init__(classes="form-dialog")
        self.detail = detail

    def compose(self) -> ComposeResult:
        with Vertical(id="form"):
            yield Static(f"Entry #{self.detail['id']}", id="form-title")
            with VerticalScroll(id="detail-body"):
                yield Static(detail_text(self.detail), id="detail")
            yield Static(CAUTION, id="form-caution")
            keys = ["esc close"] + (["c correct"] if self._correctable() else [])
            if self._pending_plan():
                keys += ["k check this plan", "d approve or reject it"]
            if self._open_reading():
                keys.append("r re-baseline from this reading")
            yield Static(" · ".join(keys), id="form-keys")

    def on_mount(self) -> None:
        self.call_after_refresh(self.fit_body)

    def on_resize(self) -> None:
        self.call_after_refresh(self.fit_body)

    def fit_body(self) -> None:
        """As tall as the entry needs, but never pushing the caution off the screen (it scrolls instead)."""
        fit_scroll(self, "#detail-body", "#detail", spare=11)

    def _correctable(self) -> bool:
        return self.detail["kind"] in FIELDS_BY_KIND or self.detail["kind"] == "correct"

    def _pending_plan(self) -> bool:
        return self.detail["kind"] == "plan" and self.detail.get("state") == "pending"

    def _open_reading(self) -> bool:
        return self.detail["kind"] == "gauge" and not self.detail.get("adopted_by")

    def action_close(self) -> None:
        self.dismiss(None)

    def action_correct(self) -> None:
        if self._correctable():
            self.dismiss(("correct", self.detail["id"]))
        else:
            self.app.notify(f"a {self.detail['kind']} entry cannot be corrected; record a new one instead",
                            severity="warning")

    def action_check(self) -> None:
        if self._pending_plan():
            self.dismiss(("check", self.detail["id"]))

    def action_decide(self) -> None:
        if self._pending_plan():
            self.dismiss(("decide", self.detail["id"]))

    def action_rebaseline(self) -> None:
        if self._open_reading():
            self.dismiss(("rebaseline", self.detail["id"]))


class AlertsDialog(ModalScreen):
    """Every warning of the snapshot in full (the watch panel cuts them to one line on narrow screens)."""

    BINDINGS = [Binding("escape", "close", "Close"), Binding("enter", "close", "Close", show=False),
                Binding("a", "close", "Close", show=False)]

    def __init__(self, chain: str, warnings: list[str]) -> None:
        super().__init__(classes="form-dialog")
        self.chain, self.warnings = chain, warnings

    def compose(self) -> ComposeResult:
        body = Text()
        body.append(f"chain: {self.chain}\n\n", style="bold")
        for w in self.warnings or ["no warnings"]:
            body.append(("⚠ " if self.warnings else "✓ ") + w + "\n\n")
        with Vertical(id="form"):
            yield Static(f"Alerts ({len(self.warnings)})", id="form-title")
            with VerticalScroll(id="detail-body"):
                yield Static(body, id="alerts")
            yield Static(CAUTION, id="form-caution")
            yield Static("esc close", id="form-keys")

    def on_mount(self) -> None:
        self.call_after_refresh(fit_scroll, self, "#detail-body", "#alerts", 11)

    def on_resize(self) -> None:
        self.call_after_refresh(fit_scroll, self, "#detail-body", "#alerts", 11)

    def action_close(self) -> None:
        self.dismiss(None)
