"""Shift handover: two names, the text report previewed in a scrollable view, export, record.

The report is the handover service's (``handover.assemble``) rendered by the reports package, exactly what
``propledger handover`` prints; it is assembled in a worker whenever the names or the window change.
Recording appends the handover entry and writes a backup (``handover.record``), also in a worker; the
preview then shows the report with its record section, and an export after that carries it too.
"""
from __future__ import annotations

import os
import re
from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.screen import Screen
from textual.widgets import Input, Label, Static

from ...services import handover
from ..dialogs.work import WorkMixin
from ..widgets.keybar import KeyBar
from .main import SHORT_CAUTION

WAIT_S = 0.4


def render(report: dict[str, Any], fmt: str) -> str:
    from ...reports import render as render_report  # noqa: PLC0415 - the renderers load when asked for

    return render_report(report, fmt)


def render_preview(report: dict[str, Any], width: int) -> str:
    """The text report wrapped to the preview's width (the exported file keeps its 80 columns)."""
    from ...reports import text  # noqa: PLC0415

    return text.render(report, width=min(text.WIDTH, width))


def default_file(ledger_path: str, report: dict[str, Any], fmt: str) -> str:
    """'<ledger folder>/handover-<from>-<YYYYmmddTHHMM>.<ext>' (the name made safe for any file system)."""
    who = re.sub(r"[^A-Za-z0-9]+", "-", report["from"]).strip("-").lower() or "shift"
    stamp = report["generated"][:16].replace("-", "").replace(":", "")
    ext = {"text": "txt", "md": "md", "html": "html"}[fmt]
    return os.path.join(os.path.dirname(ledger_path), f"handover-{who}-{stamp}.{ext}")


class HandoverScreen(WorkMixin, Screen):
    BINDINGS = [Binding("escape", "back", "Back"), Binding("ctrl+s", "record", "Record", priority=True),
                Binding("ctrl+o", "export", "Export", priority=True),
                Binding("pageup", "page(-1)", show=False), Binding("pagedown", "page(1)", show=False),
                Binding("ctrl+home", "page(-1000)", show=False), Binding("ctrl+end", "page(1000)", show=False)]

    def __init__(self) -> None:
        super().__init__(id="handover")
        self.report: dict[str, Any] | None = None
        self._timer = None

    def compose(self) -> ComposeResult:
        snap = self.app.snap
        prev = handover.previous_handover(snap)
        yield Static(f" ◆ propledger  {snap.craft.name} │ shift handover │ esc back", id="masthead")
        with Horizontal(id="handover-names"):
            yield Label("from", classes="field-label-short")
            yield Input(value=str(prev.get("to") or "") if prev else "", placeholder="outgoing engineer",
                        id="h-from", compact=True)
            yield Label("to", classes="field-label-short")
            yield Input(placeholder="incoming engineer", id="h-to", compact=True)
            yield Label("since", classes="field-label-short")
            yield Input(placeholder="last, or an ISO time", id="h-since", compact=True)
        yield Static("", id="handover-msg")
        yield Static("", id="work")
        with VerticalScroll(id="handover-body"):
            yield Static("Give both names to see the report.", id="handover-text")
        yield KeyBar([("ctrl+s", "Record", "screen.record"), ("ctrl+o", "Export", "screen.export"),
                      ("pgdn", "Scroll", "screen.page(1)"), ("esc", "Back", "screen.back"),
                      ("^p", "Commands", "app.command_palette")], id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.query_one("#work").display = False
        self.query_one("#h-to" if self.query_one("#h-from", Input).value else "#h-from").focus()
        self.query_one("#handover-body").border_title = "Report preview (text; export keeps 80 columns)"

    # --- the preview -----------------------------------------------------------------------------------
    def names(self) -> tuple[str, str, str | None]:
        get = lambda i: self.query_one(i, Input).value.strip()  # noqa: E731
        return get("#h-from"), get("#h-to"), get("#h-since") or None

    def on_input_changed(self, event: Input.Changed) -> None:
        self.report = None
        if self._timer is not None:
            self._timer.stop()
        self._timer = self.set_timer(WAIT_S, self.refresh_report)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.refresh_report()

    def refresh_report(self) -> None:
        """Assemble the report for the names now in the fields (nothing is written)."""
        src, dst, since = self.names()
        if not src or not dst:
            self.message("Give both names: the outgoing (from) and the incoming (to) engineer.")
            return
        live = self.app.live
        self.start_work(lambda progress: handover.assemble(live, from_name=src, to_name=dst, since=since),
                        self._assembled, "assembling the handover", failed=self._failed)

    def _assembled(self, report: dict[str, Any]) -> None:
        self.report = report
        self.show_report()
        self.message(f"preview generated {report['generated'][:16].replace('T', ' ')} UTC · not recorded yet")

    def preview_width(self) -> int:
        """Cells the preview has for a line: the body less its padding and the vertical scrollbar."""
        body = self.query_one("#handover-body", VerticalScroll)
        return max(40, body.size.width - body.styles.scrollbar_size_vertical)

    def show_report(self) -> None:
        if self.report is None:
            return
        text = render_preview(self.report, self.preview_width())
        self.query_one("#handover-text", Static).update(Text(text, no_wrap=True))

    def on_resize(self, event) -> None:
        self.call_after_refresh(self.show_report)

    def _failed(self, message: str) -> None:
        self.report = None
        self.message(f"✗ {message}", error=True)

    def message(self, text: str, error: bool = False) -> None:
        self.query_one("#handover-msg", Static).update(Text(text, style="bold red" if error else ""))

    # --- record and export ------------------------------------------------------------------------------
    def action_record(self) -> None:
        if self.busy_writes:
            return
        if self.report is None:
            self.message("Nothing to record yet: give both names and wait for the preview.", error=True)
            return
        rec = self.report["record"]
        if rec.get("recorded"):
            self.message(f"Already recorded as entry #{rec['entry']}.", error=True)
            return
        report, live = self.report, self.app.live
        self.start_work(lambda progress: handover.record(live, report), self._recorded,
                        "recording the handover and writing a backup", writes=True, failed=self._failed)

    def _recorded(self, report: dict[str, Any]) -> None:
        self.report = report
        rec = report["record"]
        self.show_report()
        backup = handover.backup_text(rec, self.app.live.path)
        self.message(f"recorded handover entry #{rec['entry']}; backup: {backup}",
                     error=bool(rec.get("backup_failed")))
        warnings = [w for w in report["warnings"] if w.startswith("BACKUP FAILED")]
        self.app.recorded(rec["entry"], "handover", warnings)

    def action_export(self) -> None:
        if self.report is None:
            self.message("Nothing to export yet: give both names and wait for the preview.", error=True)
            return
        from ..dialogs.export import ExportDialog  # noqa: PLC0415

        self.app.push_screen(ExportDialog(self.report, self.app.path), callback=self._exported)

    def _exported(self, path: str | None) -> None:
        if path:
            self.message(f"wrote {path}")

    def action_page(self, pages: int) -> None:
        body = self.query_one("#handover-body", VerticalScroll)
        body.scroll_to(y=body.scroll_y + pages * max(1, body.size.height - 1), animate=False)

    def action_back(self) -> None:
        if self.stop_work():
            self.app.pop_screen()
