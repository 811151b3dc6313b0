"""Pulse trains in the console (issue 12, point 3): the use and burn forms accept 'N x on-time', and the
engine detail (the e key, shown in the palette, not on the full key bar; a click on the engines panel; the
palette) shows on-time, pulses and throughput against the qualified life, with the same
80 % warning the status carries. Hand value: 1200 x 50 ms = 60 s of on-time (SI: 1 ms = 1e-3 s, BIPM SI
Brochure, 9th ed., Table 7 prefixes)."""
from __future__ import annotations

import pytest
from textual.widgets import Static

from ledger.services import scenario
from ledger.tui.app import make_app
from ledger.tui.dialogs.base import FormDialog
from ledger.tui.dialogs.engines import EnginesDialog
from tui_support import count, ready, run, type_text

from test_forms import last_entry, message, open_form


@pytest.mark.parametrize("key", ["u", "b"])
def test_form_takes_a_pulse_train(ledger_path, key):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, key)
            screen.query_one("#f-amount").focus()
            await type_text(pilot, "1200 x 50 ms")
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert not isinstance(app.screen, FormDialog), "form stayed open after a valid pulse train"

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before + 1
    e = last_entry(ledger_path)
    assert e.data["pulses"] == 1200 and e.data["on_time"] == pytest.approx(0.050)
    assert e.data["duration"] == pytest.approx(60.0)


@pytest.mark.parametrize("typed, expected", [("12.5 x 50 ms", "whole number"), ("0 x 50 ms", "at least 1"),
                                             ("10 x 0 s", "greater than zero")])
def test_form_refuses_a_bad_pulse_train(ledger_path, typed, expected):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, "u")
            await type_text(pilot, typed)
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert app.screen is screen
            assert expected in message(screen, "amount"), message(screen, "amount")

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before


def test_engine_detail_shows_totals_against_life(tmp_path):
    path = str(tmp_path / "smallsat.json")
    scenario.build(scenario.bundled()["leo-smallsat"], path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(120, 44)) as pilot:
            await ready(app, pilot)
            assert any(c.title.startswith("Show engine detail") for c in app.get_system_commands(app.screen))
            await pilot.click("#engines")  # the engines panel opens the detail (no key: the bar is full)
            await pilot.pause(0.2)
            assert isinstance(app.screen, EnginesDialog)
            body = str(app.screen.query_one("#engines-detail", Static).render())
            assert "pulses 51,300" in body and "life pulses: 51,300 of 60,000 (86 %)" in body
            assert "pulse Isp 75 %" in body
            assert any("86 % of its qualified pulses" in w for w in app.snap.warnings)  # the one list
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert not isinstance(app.screen, EnginesDialog)

    run(go())


def test_the_e_key_opens_the_engine_detail_at_80x24(tmp_path):
    """The key bar is full at 80 columns: e is an off-bar key, listed in the palette with its key."""
    path = str(tmp_path / "smallsat.json")
    scenario.build(scenario.bundled()["leo-smallsat"], path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            assert any(c.title == "Show engine detail  (e)" for c in app.get_system_commands(app.screen))
            await pilot.press("e")
            await pilot.pause(0.2)
            assert isinstance(app.screen, EnginesDialog)
            body = str(app.screen.query_one("#engines-detail", Static).render())
            assert "acs" in body and "life pulses: 51,300 of 60,000 (86 %)" in body
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert not isinstance(app.screen, EnginesDialog)

    run(go())


def test_the_engine_detail_shows_an_impulse_bit_table():
    import copy  # noqa: PLC0415

    from ledger.services.craftfile import craft_from_document  # noqa: PLC0415
    from ledger.tui.dialogs.engines import engines_text  # noqa: PLC0415
    from tests.services.test_impulse_bit import DOC  # noqa: PLC0415

    craft = craft_from_document(copy.deepcopy(DOC), "ib.yaml")
    row = {"on_time_s": 0.0, "pulses": 0, "throughput_kg": 0.0, "life": {}, "life_used": {}}
    text = engines_text(craft, [row]).plain
    assert "impulse bit 6-92 mN s over 10-100 ms on-time" in text and "pulse Isp 80 % (176.0 s)" in text
