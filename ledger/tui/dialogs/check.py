"""Manoeuvre check: engine and delta-v, or a pending plan; the answer updates as you type. Writes nothing.

The nominal answer is immediate. The verdict at the confidence level (feasible, marginal, infeasible, with
the probability that every reserve survives) needs the Monte Carlo: it runs in a worker once per ledger
state, with its progress shown, and each check after that is a cheap pass over the same samples
(``uncertainty.check_from``, what ``confidence_check`` computes after its own run)."""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Select, Static

from ...services.probtext import prob_text
from ...errors import LedgerError
from ...services import browse, uncertainty
from ...services.views import CAUTION
from .. import fmt
from ..lows import CONFIDENCE, SAMPLES, SEED, LowBounds
from . import fields
from .entries import engine_options, plan_options
from .work import WorkMixin

VERDICT_TAG = {"feasible": (" ✓ FEASIBLE ", "bold black on #00d700"),
               "marginal": (" ◐ MARGINAL ", f"bold black on {fmt.COLOUR['attention']}"),
               "infeasible": (" ✗ INFEASIBLE ", "bold white on red3")}
WAIT_S = 0.3
"""Typing pause before the confidence check starts (the nominal answer needs no pause)."""


def confidence_text(res: dict[str, Any]) -> Text:
    """'at 99% confidence: ◐ MARGINAL  reserves intact with p 0.981 ± 0.001', then dv free after and its low."""
    label, style = VERDICT_TAG[res["verdict"]]
    out = Text()
    out.append(f"at {res['confidence']:.0%} confidence: ", style="bold")
    out.append(label, style=style)
    out.append(f"  reserves intact with {prob_text(res['probability'], res.get('samples'))}\n")
    out.append(f"dv free after {res['dv_free_after_m_s']:,.2f} m/s, low {res['dv_free_after_low_m_s']:,.2f} · "
               f"{res['samples']:,} samples, seed {res['seed']}", style="grey70")
    return out


def verdict_text(res: dict[str, Any]) -> Text:
    ok = res["verdict"] == "feasible"
    out = Text("nominal values: ")
    out.append(" ✓ FEASIBLE " if ok else " ✗ NOT FEASIBLE ", style="bold black on #00d700" if ok else "bold white on red3")
    out.append(f"  {res['engine']} {res['dv_m_s']:,.3f} m/s\n", style="bold")
    out.append(f"{res['reason']}\n\n")
    out.append(f"propellant needed   {res['propellant_kg']:,.3f} kg\n")
    for t, x in res["propellant_by_tank_kg"].items():
        out.append(f"  from {t:<10}    {x:,.3f} kg\n")
    out.append(f"dv free after       {res['dv_free_after_m_s']:,.2f} m/s ({res['engine']})\n")
    out.append(f"limiting tank       {res['limiting_tank'] or '-'} (runs out first)\n")
    out.append(f"least margin tank   {res['least_margin_tank']} (least margin after reserves)\n")
    out.append("margin after burn and reserves:\n")
    for t, x in res["margin_after_reserves_kg"].items():
        out.append(f"  {t:<10} {x:>12,.3f} kg\n", style="" if x >= 0 else "bold red")
    n = len(res["commitments"])
    out.append(f"flown first: {n} pending plan{'s' if n != 1 else ''}" +
               (": " + ", ".join(f"{c['engine']} {c['dv_m_s']:g} m/s" for c in res["commitments"]) if n else ""),
               style="grey70")
    return out


class CheckDialog(WorkMixin, ModalScreen):
    """Pick a pending plan, or give engine and delta-v; see propellant per tank, dv free after, verdict."""

    BINDINGS = [Binding("escape", "close", "Close")]
    VERTICAL_BREAKPOINTS = [(0, "-short"), (30, "-tall")]

    def __init__(self, plan: int | None = None) -> None:
        super().__init__(classes="form-dialog")
        self.start_plan = plan
        self.result: dict[str, Any] | None = None
        self.confidence: dict[str, Any] | None = None
        self._samples: tuple[tuple, Any] | None = None   # (ledger state, Monte Carlo samples)
        self._timer = None
        self._ask: tuple | None = None

    def compose(self) -> ComposeResult:
        snap = self.app.snap
        with Vertical(id="form"):
            yield Static("◎ Check a manoeuvre  (nothing is recorded)", id="form-title")
            with Horizontal(classes="field-row"):
                yield Label("pending plan", classes="field-label")
                yield Select(plan_options(snap), id="c-plan", prompt="(none: use engine and delta-v)",
                             value=self.start_plan if self.start_plan else Select.NULL, compact=True)
            with Horizontal(classes="field-row"):
                yield Label("engine", classes="field-label")
                yield Select(engine_options(snap), id="c-engine", allow_blank=False,
                             value=snap.craft.engine_ids[0], compact=True)
            with Horizontal(classes="field-row"):
                yield Label("delta-v", classes="field-label")
                yield Input(placeholder="e.g. 12 m/s", id="c-dv", compact=True)
            yield Static("", id="c-msg", classes="field-msg")
            yield Static("", id="conf-result")
            yield Static("", id="work")
            with VerticalScroll(id="check-scroll"):
                yield Static("Give a delta-v, or pick a pending plan.", id="check-result")
            yield Static(CAUTION, id="form-caution")
            yield Static("esc close", id="form-keys")

    def on_mount(self) -> None:
        self.query_one("#work").display = False
        self.query_one("#c-dv" if not self.start_plan else "#c-plan").focus()
        self.recompute()

    def on_input_changed(self, event: Input.Changed) -> None:
        self.recompute()

    def on_select_changed(self, event: Select.Changed) -> None:
        self.recompute()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.recompute()

    def recompute(self) -> None:
        """Run the check service on what is in the fields and show the answer (or why not)."""
        snap = self.app.snap
        plan = self.query_one("#c-plan", Select).value
        msg_box = self.query_one("#c-msg", Static)
        out = self.query_one("#check-result", Static)
        try:
            if plan not in (Select.NULL, Select.BLANK, None):
                self.result = browse.check_plan(snap, int(plan))
                msg_box.update("")
            else:
                dv, msg = fields.amount(self.query_one("#c-dv", Input).value, ("dv",))
                msg_box.update(f"✗ {msg}" if msg and self.query_one("#c-dv", Input).value.strip() else "")
                msg_box.set_class(bool(msg and self.query_one("#c-dv", Input).value.strip()), "shown")
                if msg:
                    self.result = None
                    out.update("Give a delta-v, or pick a pending plan.")
                    self.confidence_for(None)  # no verdict may outlive the input it was for
                    return
                self.result = browse.check(snap, self.query_one("#c-engine", Select).value, dv[1])
        except LedgerError as exc:
            self.result = None
            out.update(f"✗ {exc}")
            self.confidence_for(None)
            return
        out.update(verdict_text(self.result))
        self.confidence_for(None if plan in (Select.NULL, Select.BLANK, None) else int(plan))

    # --- the check at the confidence level ---------------------------------------------------------
    def confidence_for(self, plan: int | None) -> None:
        """Drop the verdict on screen (it was for other inputs) and start the new one after a pause."""
        self.confidence = None
        self.query_one("#conf-result", Static).update("")
        if self._timer is not None:
            self._timer.stop()
        if self.result is None:
            self.stop_work()
            return
        self._ask = ask = (plan, self.result["engine"], self.result["dv_m_s"])
        self._timer = self.set_timer(WAIT_S, lambda: self._start(ask))

    def _start(self, ask: tuple) -> None:
        snap = self.app.snap
        key = LowBounds.key_of(snap)
        cached = self._samples[1] if self._samples and self._samples[0] == key else None
        plan, engine, dv = ask

        def work(progress):
            s = cached if cached is not None else uncertainty.run(snap, SAMPLES, SEED, progress)
            if plan is not None:
                res = uncertainty.plan_check(snap, s, plan, CONFIDENCE)
            else:
                res = uncertainty.check_from(snap, s, engine, dv, CONFIDENCE, uncertainty.commitments(snap))
            return key, s, ask, res
        label = f"checking at {CONFIDENCE:.0%} confidence" + ("" if cached is not None else " (sampling the ledger)")
        self.start_work(work, self._confidence_done, label, failed=self._confidence_failed)

    def _confidence_done(self, value) -> None:
        key, s, ask, res = value
        self._samples = (key, s)
        if self.result is not None and ask == self._ask:
            self.confidence = res
            self.query_one("#conf-result", Static).update(confidence_text(res))

    def _confidence_failed(self, message: str) -> None:
        if self.result is None:
            return
        self.query_one("#conf-result", Static).update(Text(f"✗ no verdict at {CONFIDENCE:.0%}: {message}",
                                                           style="bold red"))

    def action_close(self) -> None:
        self.stop_work()
        self.dismiss(self.result)
