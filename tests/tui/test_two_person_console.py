"""Two-person approval in the console (Textual Pilot): a plan above the craft's ``operations: approval``
threshold shows "1 of 2 approvals" in the watch list, its row and its detail after one name approves; the same
name again is refused in the form with nothing written; a second name makes it approved. The rule is common
practice; the threshold side and the other details are in tests/services/test_approval_rule.py."""
from __future__ import annotations

from textual.widgets import Static

from ledger.services import craftfile
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import parse_time
from ledger.tui.app import make_app
from ledger.tui.screens.main import MainScreen
from ledger.tui.widgets.grid import LedgerGrid
from test_decisions_console import decide, watch_text
from tui_support import CRAFT, count, lows_done, run


def rule_ledger(tmp_path) -> str:
    """The console tests' craft with a two-person rule above 5 m/s, and after one burn two pending plans (2: lae 8 m/s,
    under the rule; 3: rcs 1.2 m/s, one approval suffices)."""
    text = open(CRAFT, encoding="utf-8").read().replace(
        "  operations:\n", "  operations:\n    approval: {approvers: 2, above_dv: 5 m/s}\n")
    assert "approvers: 2" in text
    craft = tmp_path / "rule.yaml"
    craft.write_text(text)
    path = str(tmp_path / "rule.ledger.json")
    create(path, craftfile.load_craft(str(craft)), by="tester")
    led = Ledger(path)
    t = parse_time("2027-01-10T00:00Z")
    led.record("burn", {"engine": "rcs", "propellant": 0.8}, at=t - 86400, by="ops", note="trim")
    led.record("plan", {"engine": "lae", "dv": 8.0}, at=t, by="fd", note="inclination trim")
    led.record("plan", {"engine": "rcs", "dv": 1.2}, at=t + 86400, by="fd", note="phasing")
    return path


def test_console_shows_one_of_two_approvals_then_approved(tmp_path):
    path = rule_ledger(tmp_path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(120, 40)) as pilot:
            await lows_done(app, pilot)
            form = await decide(app, pilot, 2, "approve", "F. Lead")
            await pilot.pause(0.2)
            assert isinstance(app.screen, MainScreen), str(form.query_one("#form-error", Static).render())
            await lows_done(app, pilot)
            assert app.lows.result["approvals"]["2"]["approval"] == "partial"
            assert app.main.approvals[2] == "1 of 2 approvals"
            assert "◐ 1 of 2 approvals" in watch_text(app)
            row = next(r for k, r in app.main.query_one(LedgerGrid).rows if k == "2")
            assert any("1 of 2 approvals" in str(c) for c in row)  # the plan's row says it too
            app.open_detail(2)
            await pilot.pause(0.1)
            assert "1 of 2 approvals" in str(app.screen.query_one("#detail", Static).render())
            await pilot.press("escape")
            await pilot.pause(0.1)

            before = count(path)
            form = await decide(app, pilot, 2, "approve", "F. Lead")  # the same person again
            await pilot.pause(0.2)
            assert "already approved by F. Lead" in str(form.query_one("#form-error", Static).render())
            assert count(path) == before
            await pilot.press("escape")
            await pilot.pause(0.1)

            await decide(app, pilot, 2, "approve", "G. Second")
            await lows_done(app, pilot)
            assert app.main.approvals[2] == "approved" and "✓ approved" in watch_text(app)

    run(go())
    assert [e.by for e in Ledger(path).snapshot().entries if e.kind == "approve"] == ["F. Lead", "G. Second"]
