"""Export the handover report to a file as text, Markdown or HTML (whole file or nothing)."""
from __future__ import annotations

from typing import Any

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Select, Static

from ...services.handover import write_report as write_file
from ...services.views import CAUTION

FORMATS = [("text  (80 columns)", "text"), ("md  (Markdown)", "md"), ("html  (one file, prints on A4)", "html")]


class ExportDialog(ModalScreen[str | None]):
    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "write", "Write")]

    def __init__(self, report: dict[str, Any], ledger_path: str) -> None:
        super().__init__(classes="form-dialog")
        self.report, self.ledger_path = report, ledger_path

    def default(self, fmt: str) -> str:
        from ..screens.handover import default_file  # noqa: PLC0415

        return default_file(self.ledger_path, self.report, fmt)

    def compose(self) -> ComposeResult:
        with Vertical(id="form"):
            yield Static("⇄ Export the handover report", id="form-title")
            yield Static("The report as previewed" + (" (recorded)" if self.report["record"].get("recorded") else
                                                      " (not recorded: it says so in the file)"), id="form-hint")
            with Horizontal(classes="field-row"):
                yield Label("format", classes="field-label")
                yield Select(FORMATS, id="x-format", value="text", allow_blank=False, compact=True)
            with Horizontal(classes="field-row"):
                yield Label("file", classes="field-label")
                yield Input(value=self.default("text"), id="x-path", compact=True)
            yield Static("", id="form-error")
            with Horizontal(id="form-buttons"):
                yield Button("Write  ctrl+s", id="ok", variant="primary", compact=True)
                yield Button("Cancel  esc", id="cancel", compact=True)
            yield Static(CAUTION, id="form-caution")

    def on_mount(self) -> None:
        self.query_one("#x-path", Input).focus()
        self._fmt = "text"

    def on_select_changed(self, event: Select.Changed) -> None:
        box = self.query_one("#x-path", Input)
        if box.value == self.default(self._fmt):  # still the suggested name: follow the format
            box.value = self.default(str(event.value))
        self._fmt = str(event.value)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.action_write()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        self.action_write() if event.button.id == "ok" else self.action_cancel()

    def action_write(self) -> None:
        from ..screens.handover import render  # noqa: PLC0415

        path = self.query_one("#x-path", Input).value.strip()
        if not path:
            self.query_one("#form-error", Static).update("Not written: give a file name.")
            return
        try:
            written = write_file(path, render(self.report, self._fmt), self.ledger_path)
        except OSError as exc:
            self.query_one("#form-error", Static).update(f"Not written: {exc.strerror or exc}")
            return
        self.app.notify(f"wrote {written}", timeout=6)
        self.dismiss(written)

    def action_cancel(self) -> None:
        self.dismiss(None)
