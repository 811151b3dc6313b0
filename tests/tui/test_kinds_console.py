"""Every entry kind has a symbol and a word (never colour alone), in the grid and the detail view, and the
kind filter reaches the later kinds."""
from __future__ import annotations

import pytest
from textual.widgets import Static

from ledger.core.entries import KINDS
from ledger.services import approvals, gauging, handover
from ledger.services.ledger import Ledger
from ledger.tui import fmt
from ledger.tui.app import make_app
from ledger.tui.widgets.grid import LedgerGrid
from tui_support import ready, run


def test_every_kind_has_its_own_symbol_and_word():
    assert set(fmt.KIND_TAG) == set(KINDS)
    symbols = [s for s, _ in fmt.KIND_TAG.values()]
    words = [w for _, w in fmt.KIND_TAG.values()]
    assert len(set(symbols)) == len(symbols) and len(set(words)) == len(words)
    assert all(fmt.kind_label(k) != f"? {k.upper()}" and fmt.KIND_STYLE.get(k) for k in KINDS)


@pytest.fixture
def every_kind(ledger_path) -> str:
    led = Ledger(ledger_path)
    approvals.decide(led, "approve", 13, "F. Lead", samples=400)
    approvals.decide(led, "reject", 14, "F. Lead", "not needed", samples=400)
    g = gauging.record_gauge(led, "hyd", 20.5e5, 294.15, by="ops")
    gauging.record_rebaseline(led, "hyd", g["id"], "F. Lead", reason="PVT agrees")
    handover.record(led, handover.assemble(led, from_name="A. Day", to_name="B. Night"))
    return ledger_path


def test_grid_and_detail_show_the_later_kinds(every_kind):
    expect = {16: ("APPROVE", ["check then", "probability", "plan's state now"]),
              17: ("REJECT", ["check then", "not needed"]),
              18: ("GAUGE", ["bar", "degC", "gauged", "bookkeeping then", "difference", "within 3σ", "would adopt"]),
              19: ("REBASELINE", ["adopts reading", "#18", "adopted value", "PVT agrees"]),
              20: ("HANDOVER", ["from", "A. Day", "B. Night", "window start"])}

    async def go():
        app = make_app(every_kind)
        async with app.run_test(size=(160, 48)) as pilot:
            await ready(app, pilot)
            grid = str(app.main.query_one(LedgerGrid).render())
            for seq, (word, fields) in expect.items():
                sym = fmt.KIND_TAG[app.snap.entries[seq - 1].kind][0]
                assert f"{sym} {word}" in grid, word
                app.open_detail(seq)
                await pilot.pause(0.1)
                body = str(app.screen.query_one("#detail", Static).render())
                missing = [f for f in fields if f not in body]
                assert not missing, (word, missing)
                await pilot.press("escape")
                await pilot.pause(0.05)
            status = {k: " ".join(str(c) for c in cells) for k, cells in app.main.query_one(LedgerGrid).rows}
            assert "adopts #18" in status["19"] and "within 3σ" in status["18"]  # the status column
            assert "plan #13" in status["16"] and "plan #14" in status["17"]
            for _ in range(7):  # all -> burn ... correct -> gauging
                await pilot.press("f")
            await pilot.pause(0.1)
            assert app.main.window.sel == (18, 19)
            await pilot.press("f")
            await pilot.pause(0.1)
            assert app.main.window.sel == (16, 17)

    run(go())
