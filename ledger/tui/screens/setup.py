"""No ledger yet: create one here from a craft file, or from a bundled scenario (with its history)."""
from __future__ import annotations

import os
import tempfile

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Button, Input, Label, OptionList, Static

from ...errors import LedgerError
from ...services import craftfile, scenario
from ...services.ledger import create
from ..widgets.keybar import KeyBar
from .main import SHORT_CAUTION


class SetupScreen(Screen):
    BINDINGS = [Binding("ctrl+s", "create_from_craft", "Create from craft file"),
                Binding("q", "quit", "Quit", show=False), Binding("ctrl+q", "quit", "Quit")]

    def __init__(self, path: str) -> None:
        super().__init__(id="setup")
        self.path = path

    def compose(self) -> ComposeResult:
        yield Static(" ◆ propledger  no ledger yet", id="masthead")
        with Vertical(id="setup-body"):
            yield Static(f"There is no ledger at\n  {self.path}\nCreate it from a craft file (YAML), or from a "
                         "bundled demo scenario (opened as DEMO DATA from a temporary folder, removed on exit; "
                         "nothing is written here).", id="setup-intro")
            with Horizontal(classes="field-row"):
                yield Label("craft file", classes="field-label")
                yield Input(placeholder="path/to/craft.yaml, then Enter", id="craft-path", compact=True)
            yield Static("", id="setup-msg", classes="field-msg")
            yield Label("or a bundled scenario (Enter creates):")
            names = list(scenario.bundled())
            yield OptionList(*(names or ["(no bundled scenarios found)"]), id="scenarios",
                             disabled=not names)
            yield Button("Create from craft file  ctrl+s", id="create", compact=True)
        yield KeyBar([("^s", "Create from craft file", "screen.create_from_craft"), ("tab", "Next field", "app.focus_next"),
                      ("^q", "Quit", "screen.quit")], id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.query_one("#craft-path", Input).focus()

    def _fail(self, exc: Exception) -> None:
        box = self.query_one("#setup-msg", Static)
        box.update(f"✗ {exc}")
        box.add_class("shown")

    def _prepare(self) -> None:
        from ...store.seam import is_url  # noqa: PLC0415

        if is_url(self.path):  # a database craft: the server holds it, no folder to make
            return
        folder = os.path.dirname(os.path.abspath(self.path))
        os.makedirs(folder, exist_ok=True)

    def action_create_from_craft(self) -> None:
        text = self.query_one("#craft-path", Input).value.strip()
        if not text:
            self._fail("give the path of a craft file")
            return
        try:
            craft = craftfile.load_craft(os.path.expanduser(text))
            self._prepare()
            create(self.path, craft)
        except (LedgerError, OSError) as exc:
            self._fail(exc)
            return
        self.app.ledger_created()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.action_create_from_craft()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        self.action_create_from_craft()

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        name = str(event.option.prompt)
        found = scenario.bundled()
        if name not in found:
            return
        folder = tempfile.mkdtemp(prefix="propledger-demo-")  # never the real ledger's path
        path = os.path.join(folder, f"{name}.ledger.json")
        try:
            scenario.build(found[name], path)
        except (LedgerError, OSError) as exc:
            self._fail(exc)
            return
        self.app.demo_created(path, folder)

    def action_quit(self) -> None:
        self.app.exit()
