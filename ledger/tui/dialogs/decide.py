"""Approve or reject a pending plan: a named person decides, and the check it rests on is recorded with it.

The nominal check of the plan shows at once; the check at the confidence level (a Monte Carlo) runs in a
worker when the decision is recorded (``approvals.decide``), with its progress in the form.
"""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.widgets import Static

from ...services.probtext import prob_text
from ...core.entries import APPROVE, REJECT
from ...errors import LedgerError
from ...services import approvals, browse
from .. import fmt
from ..lows import CONFIDENCE
from .base import LATER, Field, FormDialog, text_field
from .entries import plan_options

DECISIONS = [("approve  ✓ the plan may be flown", APPROVE), ("reject  ⊘ it must not be flown as it is", REJECT)]


def _required(what: str):
    return lambda s: ((s or "").strip(), None if (s or "").strip() else f"required: {what}")


class DecideForm(FormDialog):
    LONG = True
    TITLE = "✓ Approve or ⊘ reject a pending plan"
    HINT = (f"Recorded with the plan's check at {CONFIDENCE:.0%} confidence (a Monte Carlo run when you "
            "record) and the ledger head it saw; a later change to the ledger can make an approval stale.")
    FOCUS = "by"

    def __init__(self, plan: int | None = None) -> None:
        self.start_plan = plan
        super().__init__()

    @property
    def snap(self):
        return self.app.snap

    def make_fields(self) -> list[Field]:
        pending = {p.seq for p in self.snap.resolved.pending}
        start = self.start_plan if self.start_plan in pending else self.snap.resolved.pending[0].seq
        return [
            Field("plan", "plan", options=plan_options(self.snap), required=True, value=start),
            Field("decision", "decision", options=DECISIONS, required=True, value=APPROVE),
            Field("by", "decided by", _required("the name of the person who decides"), "a name", required=True),
            text_field("note", "note", "why (required to reject)"),
        ]

    def compose_extra(self) -> ComposeResult:
        yield Static("", id="check-result")

    def on_mount(self) -> None:
        super().on_mount()
        self.field_changed("plan")

    def field_changed(self, name: str) -> None:
        if name in ("plan", "decision"):
            self.query_one("#check-result", Static).update(self.preview())
            self.query_one("#ok").label = "Reject  ctrl+s" if self.raw("decision") == REJECT else "Approve  ctrl+s"

    def preview(self) -> Text:
        """The plan's nominal check now (other pending plans flown first) and its approval state."""
        seq = self.raw("plan")
        out = Text()
        if seq is None:
            return out
        try:
            res = browse.check_plan(self.snap, int(seq))
        except LedgerError as exc:
            return Text(f"✗ {exc}", style="bold red")
        ok = res["verdict"] == "feasible"
        out.append(" ✓ nominal FEASIBLE " if ok else " ✗ nominal NOT FEASIBLE ",
                   style="bold black on #00d700" if ok else "bold white on red3")
        out.append(f"  {res['engine']} {res['dv_m_s']:,.2f} m/s, dv free after {res['dv_free_after_m_s']:,.2f} m/s\n")
        state = self.screen_approval(int(seq))
        sym, words, style = fmt.approval_tag(state)
        out.append("approval now: ")
        out.append(f"{sym} {words}", style=style)
        return out

    def screen_approval(self, seq: int) -> str:
        main = getattr(self.app, "main", None)
        return (main.approvals if main is not None else {}).get(seq, "none")

    def cross_check(self, values: dict[str, Any]) -> dict[str, str]:
        if values.get("decision") == REJECT and not values.get("note"):
            return {"note": "required to reject: why the plan must not be flown"}
        return {}

    def commit(self, values: dict[str, Any]) -> Any:
        kind, plan = values["decision"], int(values["plan"])
        by, note = values["by"], values.get("note") or None
        live = self.app.live

        def work(progress):
            return approvals.decide(live, kind, plan, by, note, confidence=CONFIDENCE, progress=progress)

        self.start_work(work, self._decided, f"checking plan #{plan} at {CONFIDENCE:.0%} and recording", writes=True)
        return LATER

    def _decided(self, result) -> None:
        stored, check, warnings = result
        word = "approved" if stored["kind"] == APPROVE else "rejected"
        summary = (f"plan #{stored['data']['plan']} {word} by {stored['by']}: check {check['verdict']}, reserves "
                   f"intact with {prob_text(check['probability'], check.get('samples'))} at {check['confidence']:g}"
                   + (f"; {check['approvals_counted']} of {check['approvals_needed']} approvals"
                      if stored["kind"] == APPROVE and "approvals_needed" in check else ""))
        self.app.notify(summary, timeout=10)
        self.app.recorded(stored["seq"], stored["kind"], warnings)
        self.dismiss(stored)
