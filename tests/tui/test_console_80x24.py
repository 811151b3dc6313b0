"""Issue 11 point 10 at 80x24: plan states told apart by glyph and word; the handover preview fits the
width with its last column's header visible; the trend shows one engine at a time with a legend and
dates that do not run into the labels; the colours each carry one meaning."""
from __future__ import annotations

from ledger.services import approvals
from ledger.services.ledger import Ledger
from ledger.tui import fmt
from ledger.tui.app import make_app
from ledger.tui.widgets.grid import LedgerGrid
from tui_support import ready, run, until

SIZE = (80, 24)


def test_plan_states_have_their_own_glyph_and_word(ledger_path):
    # the test ledger: plan 1 executed, 11 withdrawn, 13 pending; 14 is rejected here
    approvals.decide(Ledger(ledger_path), "reject", 14, by="F. Lead", note="phasing not needed", samples=1000)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            await until(pilot, lambda: app.main.approvals.get(14) == "rejected", what="approval states")
            await pilot.press("f", "f")  # all kinds -> burns -> plans
            await pilot.pause(0.3)
            grid = app.main.query_one(LedgerGrid)
            lines = grid.render().plain.split("\n")
            by_id = {line.split()[0]: line for line in lines[1:] if line.strip()}
            assert set(by_id) == {"1", "11", "13", "14"}, lines
            want = {"1": "executed", "11": "withdrawn", "13": "pending", "14": "rejected"}
            seen = set()
            for pid, state in want.items():
                sym, word = fmt.PLAN_STATE_TAG[state]
                assert f"{sym} PLAN {word}" in by_id[pid], by_id[pid]
                seen.add(sym)
            assert len(seen) == 4  # four different glyphs as well as four words
            assert "Decision support only" in str(app.main.query_one("#caution").render())

    run(go())
