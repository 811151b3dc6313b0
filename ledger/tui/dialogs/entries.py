"""One form per entry kind. Each parses its fields, then makes exactly one service call through the app."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widgets import Input, Select, Static

from ...core.entries import BURN, MASS, PLAN, USE, WITHDRAW
from ...services.ledger import Snapshot
from .. import fmt
from . import fields
from ...errors import LedgerError
from .base import LATER, Field, FormDialog, text_field

WHEN_HINT = "blank = now; ISO 8601, UTC unless an offset is given"


def engine_options(snap: Snapshot) -> list[tuple[str, str]]:
    return [(f"{e.id}  Isp {e.isp_s:.0f} s, {e.thrust_n:g} N", e.id) for e in snap.craft.engines]


def engine_field(snap: Snapshot, default: str) -> Field:
    """The engine picker every burn-like form starts with, set to ``default``."""
    return Field("engine", "engine", options=engine_options(snap), required=True, value=default)


def plan_options(snap: Snapshot) -> list[tuple[str, int]]:
    return [(f"#{p.seq} {p.get('engine')} {p.get('dv'):,.2f} m/s at {fmt.when_t(p.at)}", p.seq)
            for p in snap.resolved.pending]


def common_tail() -> list[Field]:
    return [text_field("by", "by", "blank = your login name"), text_field("note", "note", "free text")]


class EntryForm(FormDialog):
    KIND = ""

    @property
    def snap(self) -> Snapshot:
        return self.app.snap

    def write(self, data: dict[str, Any], values: dict[str, Any]) -> Any:
        return self.app.write(self.KIND, data, at=values.get("at"), by=values.get("by") or None,
                              note=values.get("note") or None)


class BurnForm(EntryForm):
    KIND = BURN
    TITLE = "▲ Log an executed burn"
    HINT = ("Amount as delta-v ('1.8 m/s'), duration ('95 s', '3 min'), propellant ('2.4 kg') or pulses "
            "('1200 x 50 ms').")
    FOCUS = "amount"

    def __init__(self) -> None:
        super().__init__()
        self.shown_warnings: list[str] = []

    def make_fields(self) -> list[Field]:
        snap = self.snap
        return [
            Field("plan", "executes plan", options=plan_options(snap)),
            engine_field(snap, snap.craft.engine_ids[0]),
            Field("amount", "amount", fields.amount, "e.g. 1.8 m/s, 95 s, 2.4 kg", required=True),
            Field("at", "when", fields.when, WHEN_HINT),
            *common_tail(),
        ]

    def compose_extra(self):
        yield Static("", id="burn-warnings")

    def field_changed(self, name: str) -> None:
        if name == "plan":
            seq = self.raw("plan")
            plan = self.snap.resolved.effective.get(seq) if seq is not None else None
            if plan is not None:
                self.query_one("#f-engine", Select).value = plan.get("engine")
                box = self.query_one("#f-amount", Input)
                if not box.value.strip():
                    box.value = f"{plan.get('dv'):g} m/s"
        if name in ("plan", "engine", "amount", "at"):
            values, errors = self.parse_all()
            self.show_warnings([] if errors else self.plan_warnings(values))

    @staticmethod
    def _data(values: dict[str, Any]) -> dict[str, Any]:
        key, amount = values["amount"]
        return {"engine": values["engine"], **fields.amount_data(key, amount), "plan": values.get("plan")}

    def plan_warnings(self, values: dict[str, Any]) -> list[str]:
        """What recording this burn would store against its plan (services.execution), nothing written."""
        from ...services import execution  # noqa: PLC0415

        try:
            return execution.preview(self.snap, self._data(values), values.get("at"))
        except LedgerError:
            return []  # the record call says what is wrong

    def show_warnings(self, warnings: list[str], confirm: bool = False) -> None:
        """The plan's execution warnings above the buttons; the record button says it records anyway."""
        self.shown_warnings = list(warnings)
        box = self.query_one("#burn-warnings", Static)
        if not warnings:
            box.update("")
            self.relabel(self.OK_LABEL)
            return
        head = ("Confirm: this burn contradicts its plan. Press ctrl+s again to record it with these warnings "
                "(an executed burn is never refused):" if confirm else
                "Recording this burn will store these warnings (it is recorded all the same):")
        text = Text(head + "\n", style=f"bold {fmt.COLOUR['attention']}")
        for w in warnings:
            text.append(f"⚠ {w}\n", style=fmt.COLOUR["attention"])
        box.update(text)
        self.relabel("Record anyway  ctrl+s")

    def relabel(self, label: str) -> None:
        """The record button's words (its width follows them: a longer label was cut at the old width)."""
        ok = self.query_one("#ok")
        if str(ok.label) != label:
            ok.label = label
            ok.styles.width = len(label) + 2

    def commit(self, values: dict[str, Any]) -> Any:
        warnings = self.plan_warnings(values)
        if warnings and warnings != self.shown_warnings:  # not yet on screen: show them, record next time
            self.show_warnings(warnings, confirm=True)
            return LATER
        return self.write(self._data(values), values)


class PlanForm(EntryForm):
    KIND = PLAN
    TITLE = "◇ Log a planned burn"
    HINT = "A plan stays pending until a burn executes it or it is withdrawn; checks fly it first."
    FOCUS = "amount"

    def make_fields(self) -> list[Field]:
        return [
            engine_field(self.snap, self.snap.craft.engine_ids[0]),
            Field("amount", "delta-v", lambda s: fields.amount(s, ("dv",)), "e.g. 12 m/s", required=True),
            Field("at", "planned for", lambda s: fields.when(s, required=True), "e.g. 2026-05-04T13:20Z",
                  required=True),
            *common_tail(),
        ]

    def commit(self, values: dict[str, Any]) -> Any:
        return self.write({"engine": values["engine"], "dv": values["amount"][1]}, values)


class MassForm(EntryForm):
    KIND = MASS
    TITLE = "± Log a mass change"
    HINT = "Signed: '-35 kg' for a separation or a deployment that leaves the craft, '+2 kg' added."

    def make_fields(self) -> list[Field]:
        return [
            Field("delta", "change", lambda s: fields.quantity(s, "mass", "change", signed=True),
                  "e.g. -35 kg", required=True),
            Field("at", "when", fields.when, WHEN_HINT),
            *common_tail(),
        ]

    def cross_check(self, values: dict[str, Any]) -> dict[str, str]:
        return {"delta": "a change of zero records nothing"} if values.get("delta") == 0 else {}

    def commit(self, values: dict[str, Any]) -> Any:
        return self.write({"delta": values["delta"]}, values)


class UseForm(EntryForm):
    KIND = USE
    TITLE = "• Log other propellant use"
    HINT = ("Propellant used without delta-v (attitude control, venting): a duration, a mass or pulses "
            "('1200 x 50 ms').")
    FOCUS = "amount"

    def make_fields(self) -> list[Field]:
        return [
            engine_field(self.snap, self.snap.craft.engine_ids[-1]),  # thrusters are usually listed last
            Field("amount", "amount", lambda s: fields.amount(s, ("duration", "propellant")),
                  "e.g. 40 s, 0.2 kg or 1200 x 50 ms", required=True),
            Field("at", "when", fields.when, WHEN_HINT),
            *common_tail(),
        ]

    def commit(self, values: dict[str, Any]) -> Any:
        key, amount = values["amount"]
        return self.write({"engine": values["engine"], **fields.amount_data(key, amount)}, values)


class WithdrawForm(EntryForm):
    KIND = WITHDRAW
    TITLE = "✕ Withdraw a pending plan"
    HINT = "The plan stays in the ledger, marked withdrawn; checks stop flying it."

    def make_fields(self) -> list[Field]:
        return [
            Field("plan", "plan", options=plan_options(self.snap), required=True),
            Field("at", "when", fields.when, WHEN_HINT),
            *common_tail(),
        ]

    def commit(self, values: dict[str, Any]) -> Any:
        return self.write({"plan": values["plan"]}, values)


class CorrectForm(EntryForm):
    TITLE = "✎ Correct an entry"
    HINT = "The original stays; a correction supersedes it. Leave a field blank to keep it."
    FOCUS = "reason"

    def __init__(self, entry: int | None = None) -> None:
        self.start_entry = entry
        super().__init__()

    def make_fields(self) -> list[Field]:
        return [
            Field("entry", "entry #", fields.entry_id, "id of the entry", required=True,
                  value=str(self.start_entry) if self.start_entry else None),
            Field("reason", "reason", lambda s: ((s or "").strip(), None if (s or "").strip() else
                                                 "required: why the entry was wrong"), "why", required=True),
            Field("engine", "engine", options=engine_options(self.snap)),
            Field("amount", "amount", self._amount, "blank = unchanged"),
            Field("at", "when", fields.when, "blank = unchanged"),
            text_field("note", "note", "blank = unchanged"),
            text_field("by", "by", "blank = your login name"),
        ]

    def on_mount(self) -> None:
        super().on_mount()
        self.mount(Static("", id="form-target"), after=self.query_one("#form-title"))
        self.call_after_refresh(self.field_changed, "entry")

    def _target(self):
        seq, msg = fields.entry_id(self.raw("entry") if self.is_mounted else "")
        return None if msg else self.snap.resolved.effective.get(seq) or next(
            (e for e in self.snap.entries if e.seq == seq), None)

    def _amount(self, text: str) -> fields.Parsed:
        target = self._target()
        if target is not None and target.kind == MASS:
            v, msg = fields.quantity(text, "mass", "change", signed=True, required=False)
            return (("delta", v) if v is not None else None), msg
        allowed = ("dv",) if target is not None and target.kind == PLAN else (
            ("duration", "propellant") if target is not None and target.kind == USE else ("dv", "duration", "propellant"))
        return fields.amount(text, allowed, required=False)

    def field_changed(self, name: str) -> None:
        if name != "entry":
            return
        seq, msg = fields.entry_id(self.raw("entry"))
        box = self.query("#form-target")
        if not box:
            return
        e = None if msg else next((x for x in self.snap.entries if x.seq == seq), None)
        if e is None:
            box.first().update("no such entry" if not msg else "")
            return
        cur = self.snap.resolved.effective.get(seq, e)
        from ...services.views import _amount  # noqa: PLC0415 - the log's own amount wording
        box.first().update(f"now: #{seq} {fmt.kind_label(cur.kind)} {cur.get('engine') or ''} "
                           f"{_amount(cur.data)} at {fmt.when_t(cur.at)}")

    def cross_check(self, values: dict[str, Any]) -> dict[str, str]:
        if not any(values.get(k) for k in ("engine", "amount", "at", "note")):
            return {"amount": "change at least one of engine, amount, when or note"}
        return {}

    def commit(self, values: dict[str, Any]) -> Any:
        changes: dict[str, Any] = {"at": values.get("at"), "note": values.get("note") or None,
                                   "engine": values.get("engine")}
        if values.get("amount"):
            key, amount = values["amount"]
            changes.update(fields.amount_data(key, amount))
        return self.app.write_correction(values["entry"], changes, reason=values["reason"],
                                         by=values.get("by") or None)
