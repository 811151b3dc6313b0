"""Approving and rejecting pending plans from the console: one entry on valid input, nothing otherwise; the
plan's approval state (approved, rejected, stale, no decision) in the watch list, the plan's row and its
detail view, as ``uncertainty.confidence_status`` reports it for the same ledger."""
from __future__ import annotations

from textual.widgets import Input, Select, Static

from ledger.services import uncertainty
from ledger.services.ledger import Ledger
from ledger.tui import lows
from ledger.tui.app import make_app
from ledger.tui.dialogs.decide import DecideForm
from ledger.tui.dialogs.detail import DetailDialog
from ledger.tui.screens.main import MainScreen
from ledger.tui.widgets.grid import LedgerGrid
from ledger.tui.widgets.watch import WatchList
from tui_support import count, lows_done, ready, run, type_text, until


async def decide(app, pilot, plan: int, kind: str, by: str, note: str = ""):
    await ready(app, pilot)
    app.main.window.cursor_seq = plan
    await pilot.press("d")
    await pilot.pause(0.1)
    form = app.screen
    assert isinstance(form, DecideForm) and form.raw("plan") == plan
    form.query_one("#f-decision", Select).value = kind
    form.query_one("#f-note", Input).value = note
    form.query_one("#f-by", Input).focus()
    await type_text(pilot, by)
    await pilot.press("ctrl+s")
    await until(pilot, lambda: not form.busy, what="decision")
    return form


def watch_text(app) -> str:
    return str(app.main.query_one(WatchList).render())


def test_approval_is_recorded_with_its_check_and_shows_in_the_plan_state(ledger_path):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(120, 40)) as pilot:
            await lows_done(app, pilot)
            assert "· undecided" in watch_text(app)
            await decide(app, pilot, 13, "approve", "F. Lead")
            assert isinstance(app.screen, MainScreen)
            await lows_done(app, pilot)  # the approval re-checked on the new ledger
            state = app.lows.result["approvals"]["13"]["approval"]
            assert state == "approved" == app.main.approvals[13]
            assert "✓ approved" in watch_text(app)
            row = next(r for k, r in app.main.query_one(LedgerGrid).rows if k == "13")
            assert any("✓ approved" in str(c) for c in row)  # the plan's row says it too
            app.open_detail(count(ledger_path))  # the approval entry in full
            await pilot.pause(0.1)
            body = str(app.screen.query_one("#detail", Static).render())
            assert isinstance(app.screen, DetailDialog)
            assert "check then" in body and "FEASIBLE" in body and "probability" in body and "#13" in body

    run(go())
    assert count(ledger_path) == before + 1
    snap = Ledger(ledger_path).snapshot()
    e = snap.entries[-1]
    assert e.kind == "approve" and e.by == "F. Lead" and e.data["plan"] == 13
    # the stored check is the service's plan check at the console's confidence on the ledger it saw
    s = uncertainty.run(Ledger(ledger_path).snapshot(), lows.SAMPLES, lows.SEED)
    ref = uncertainty.plan_check(snap, s, 13, lows.CONFIDENCE)
    assert e.data["check"]["probability"] == ref["probability"] and e.data["check"]["verdict"] == ref["verdict"]
    assert e.data["head"]["seq"] == before


def test_reject_needs_a_reason_and_a_name_then_shows_rejected(ledger_path):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(120, 40)) as pilot:
            form = await decide(app, pilot, 14, "reject", "F. Lead", note="")
            assert "required to reject" in str(form.query_one("#m-note", Static).render())
            assert isinstance(app.screen, DecideForm) and count(ledger_path) == before
            form.query_one("#f-by", Input).value = ""
            form.query_one("#f-note", Input).value = "phasing no longer needed"
            await pilot.press("ctrl+s")
            await pilot.pause(0.1)
            assert "required" in str(form.query_one("#m-by", Static).render())
            assert count(ledger_path) == before
            form.query_one("#f-by", Input).value = "F. Lead"
            await pilot.press("ctrl+s")
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="rejection")
            await lows_done(app, pilot)
            assert app.main.approvals[14] == "rejected" and "⊘ rejected" in watch_text(app)

    run(go())
    assert count(ledger_path) == before + 1
    e = Ledger(ledger_path).snapshot().entries[-1]
    assert e.kind == "reject" and e.note == "phasing no longer needed"


def test_an_approval_goes_stale_when_the_ledger_moves_under_it(ledger_path):
    """After approving plan 13 (lae 8 m/s), a 150 m/s lae burn is logged: the plan's dv free after moves by
    far more than max(0.1 m/s, 1 %), so its approval shows stale (uncertainty.STALE_DV_*)."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(120, 40)) as pilot:
            await decide(app, pilot, 13, "approve", "F. Lead")
            await lows_done(app, pilot)
            assert app.main.approvals[13] == "approved"
            app.write("burn", {"engine": "lae", "dv": 150.0}, by="ops")
            assert app.main.approvals[13] == "approved?"  # until the new run has re-checked it
            await lows_done(app, pilot)
            assert app.lows.result["approvals"]["13"]["approval"] == "stale" == app.main.approvals[13]
            assert "⚠ approval stale" in watch_text(app) or "⚠ stale" in watch_text(app)

    run(go())
