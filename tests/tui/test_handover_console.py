"""The handover view: both names are required; the preview is the text report of ``handover.assemble``
(nothing written); export writes the report whole in text, Markdown or HTML with the safety caution in it;
recording appends exactly one handover entry and writes a backup."""
from __future__ import annotations

import os

import pytest
from textual.widgets import Input, Select, Static

from ledger.services.ledger import Ledger
from ledger.tui.app import make_app
from ledger.tui.dialogs.export import ExportDialog
from ledger.tui.screens.handover import HandoverScreen
from tui_support import count, ready, run, type_text, until

CAUTION_WORDS = "Decision support only"


async def open_handover(app, pilot, src: str, dst: str):
    await ready(app, pilot)
    await pilot.press("h")
    await pilot.pause(0.1)
    screen = app.screen
    assert isinstance(screen, HandoverScreen)
    screen.query_one("#h-from", Input).value = src
    screen.query_one("#h-to", Input).focus()
    await type_text(pilot, dst)
    if src and dst:
        await until(pilot, lambda: screen.report is not None, what="report")
    else:
        await pilot.pause(0.6)
    return screen


def preview(screen) -> str:
    return str(screen.query_one("#handover-text", Static).render())


def message(screen) -> str:
    return str(screen.query_one("#handover-msg", Static).render())


def test_preview_needs_both_names_and_writes_nothing(ledger_path):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_handover(app, pilot, "A. Day", "")
            assert screen.report is None and "Give both names" in message(screen)
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert "Nothing to record" in message(screen)
            await type_text(pilot, "B. Night")
            await until(pilot, lambda: screen.report is not None, what="report")
            text = preview(screen)
            assert "Shift handover" in text and "A. Day" in text and "B. Night" in text and CAUTION_WORDS in text
            assert "not recorded" in text
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert not isinstance(app.screen, HandoverScreen)

    run(go())
    assert count(ledger_path) == before


@pytest.mark.parametrize("fmt,marker", [("text", "Shift handover"), ("md", "# Shift handover"),
                                        ("html", "<html")])
def test_export_writes_the_report_with_the_caution(ledger_path, tmp_path, fmt, marker):
    target = tmp_path / f"out.{fmt}"
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_handover(app, pilot, "A. Day", "B. Night <night shift>")
            await pilot.press("ctrl+o")
            await pilot.pause(0.1)
            dialog = app.screen
            assert isinstance(dialog, ExportDialog)
            dialog.query_one("#x-format", Select).value = fmt
            await pilot.pause(0.05)
            box = dialog.query_one("#x-path", Input)
            assert box.value.endswith({"text": ".txt", "md": ".md", "html": ".html"}[fmt])  # follows the format
            box.value = str(tmp_path / "no-such-folder" / "x")
            await pilot.press("enter")
            await pilot.pause(0.1)
            assert "Not written" in str(dialog.query_one("#form-error", Static).render())
            box.value = str(target)
            await pilot.press("enter")
            await pilot.pause(0.2)
            assert app.screen is screen and str(target) in message(screen)

    run(go())
    body = target.read_text(encoding="utf-8")
    assert marker in body and CAUTION_WORDS in body and "A. Day" in body
    if fmt == "html":  # user text is escaped in HTML
        assert "&lt;night shift&gt;" in body and "<night shift>" not in body
    assert not (tmp_path / "no-such-folder").exists()
    assert count(ledger_path) == before  # exporting records nothing


def test_record_appends_one_handover_entry_and_writes_a_backup(ledger_path):
    before = count(ledger_path)
    state = {}

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_handover(app, pilot, "A. Day", "B. Night")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: screen.report["record"].get("recorded"), what="record")
            rec = state["rec"] = screen.report["record"]
            assert f"entry #{rec['entry']}" in message(screen) and "Recorded as" in preview(screen)
            await pilot.press("ctrl+s")  # the same report is not recorded twice
            await pilot.pause(0.2)
            assert "Already recorded" in message(screen)
            assert app.snap.entries[-1].kind == "handover"

    run(go())
    assert count(ledger_path) == before + 1
    e = Ledger(ledger_path).snapshot().entries[-1]
    assert e.kind == "handover" and e.data["from"] == "A. Day" and e.data["to"] == "B. Night"
    assert state["rec"]["backup"] and os.path.exists(state["rec"]["backup"])
