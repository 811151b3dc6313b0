"""A modal entry form: labelled fields with a message line each, nothing written until all are valid.

Subclasses list their fields and turn the parsed values into one service call. Every keystroke re-checks
its field (after the user first touches it); Enter or ctrl+s submits; Escape cancels and writes nothing.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Select, Static

from ...errors import LedgerError
from ...services.records import default_user
from ...services.views import CAUTION
from . import fields
from .work import WorkMixin

LATER = object()
"""What ``commit`` returns when a worker finishes the job (the form stays open until then)."""


@dataclass
class Field:
    name: str
    label: str
    parse: Callable[[Any], fields.Parsed] | None = None   # for inputs: text -> (value, message)
    placeholder: str = ""
    options: list[tuple[str, Any]] | None = None           # a Select instead of an Input
    value: Any = None
    required: bool = False


def text_field(name: str, label: str, placeholder: str = "", value: str = "") -> Field:
    return Field(name, label, lambda s: ((s or "").strip(), None), placeholder, value=value)


class FormDialog(WorkMixin, ModalScreen):
    """Base for every entry form. ``submit`` calls ``commit(values)``; a LedgerError lands in the form."""

    VERTICAL_BREAKPOINTS = [(0, "-short"), (30, "-tall")]
    TITLE = "Entry"
    HINT = ""
    FOCUS = ""  # field to start in (default: the first)
    OK_LABEL = "Record  ctrl+s"
    LONG = False  # many fields and a preview: on short terminals the hint gives way
    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "submit", "Record")]

    def __init__(self) -> None:
        super().__init__(classes="form-dialog long-form" if self.LONG else "form-dialog")
        self.fields: list[Field] = self.make_fields()
        self.touched: set[str] = set()

    # --- to override ------------------------------------------------------------------------------
    def make_fields(self) -> list[Field]:
        raise NotImplementedError

    def commit(self, values: dict[str, Any]) -> Any:
        """Write the entry through the app's ledger; return what to dismiss with."""
        raise NotImplementedError

    def cross_check(self, values: dict[str, Any]) -> dict[str, str]:
        """Messages that depend on several fields (name -> message)."""
        return {}

    # --- layout ---------------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        with Vertical(id="form"):
            yield Static(self.TITLE, id="form-title")
            if self.HINT:
                yield Static(self.HINT, id="form-hint")
            with VerticalScroll(id="form-fields"):
                for f in self.fields:
                    with Horizontal(classes="field-row"):
                        yield Label(f.label + (" *" if f.required else ""), classes="field-label")
                        if f.options is not None:
                            yield Select(f.options, id=f"f-{f.name}", allow_blank=not (f.required and f.value is not None),
                                         value=f.value if f.value is not None else Select.NULL,
                                         prompt="(pick one)" if f.required else "(none)", compact=True)
                        else:
                            yield Input(value=f.value or "", placeholder=f.placeholder, id=f"f-{f.name}",
                                        compact=True)
                    yield Static("", id=f"m-{f.name}", classes="field-msg")
            yield from self.compose_extra()
            yield Static("", id="form-error")
            yield Static("", id="work")
            with Horizontal(id="form-buttons"):
                yield Button(self.OK_LABEL, id="ok", variant="primary", compact=True)
                yield Button("Cancel  esc", id="cancel", compact=True)
            yield Static(CAUTION, id="form-caution")

    def compose_extra(self) -> ComposeResult:
        """Hook: widgets between the fields and the error line (a preview)."""
        yield from ()

    def on_mount(self) -> None:
        self.query_one("#work").display = False
        start = self.query(f"#f-{self.FOCUS}") if self.FOCUS else None
        (start.first() if start else self.query("#form-fields Input, #form-fields Select").first()).focus()

    # --- values and messages -------------------------------------------------------------------
    def raw(self, name: str) -> Any:
        w = self.query_one(f"#f-{name}")
        if isinstance(w, Select):
            return None if w.value is Select.NULL or w.value == Select.BLANK else w.value
        return w.value

    def parse_one(self, f: Field) -> fields.Parsed:
        raw = self.raw(f.name)
        if f.options is not None:
            return raw, ("required: pick one" if f.required and raw is None else None)
        return f.parse(raw) if f.parse else (raw, None)

    def parse_all(self) -> tuple[dict[str, Any], dict[str, str]]:
        values, errors = {}, {}
        for f in self.fields:
            value, msg = self.parse_one(f)
            values[f.name] = value
            if msg:
                errors[f.name] = msg
        if not errors:
            errors.update(self.cross_check(values))
        return values, errors

    def show_message(self, name: str, msg: str | None) -> None:
        box = self.query_one(f"#m-{name}", Static)
        box.update(f"✗ {msg}" if msg else "")
        box.set_class(bool(msg), "shown")

    def on_input_changed(self, event: Input.Changed) -> None:
        name = (event.input.id or "")[2:]
        f = next((f for f in self.fields if f.name == name), None)
        if f is None:
            return
        self.touched.add(name)
        self.show_message(name, self.parse_one(f)[1])
        self.query_one("#form-error", Static).update("")
        self.field_changed(name)

    def on_select_changed(self, event: Select.Changed) -> None:
        name = (event.select.id or "")[2:]
        if any(f.name == name for f in self.fields):
            self.show_message(name, None)
            self.field_changed(name)

    def field_changed(self, name: str) -> None:
        """Hook: react to a field (prefill another, update a summary)."""

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.action_submit()

    def on_button_pressed(self, event: Button.Pressed) -> None:
        event.stop()
        if event.button.id == "ok":
            self.action_submit()
        else:
            self.action_cancel()

    def action_cancel(self) -> None:
        if self.stop_work():
            self.dismiss(None)

    def action_submit(self) -> None:
        if self.busy_writes:
            return
        values, errors = self.parse_all()
        for f in self.fields:
            self.show_message(f.name, errors.get(f.name))
        if errors:
            self.query_one("#form-error", Static).update(
                f"Not recorded: {len(errors)} field{'s' if len(errors) > 1 else ''} to fix.")
            self.query_one(f"#f-{next(iter(errors))}").focus()
            return
        try:
            result = self.commit(values)
        except LedgerError as exc:
            self.query_one("#form-error", Static).update(f"Not recorded: {exc}")
            return
        if result is not LATER:
            self.dismiss(result)

    def work_failed(self, message: str) -> None:
        self.query_one("#form-error", Static).update(f"Not recorded: {message}")

    @staticmethod
    def who(values: dict[str, Any]) -> str:
        return values.get("by") or default_user()
