"""Entry forms: valid input writes exactly one entry with the SI values typed; invalid input shows the
field's message and writes nothing. Unit conversions are checked against SI definitions (1 min = 60 s,
BIPM SI Brochure, 9th ed., Table 8)."""
from __future__ import annotations

import pytest
from textual.widgets import Select, Static

from ledger.services.ledger import Ledger
from ledger.tui.app import make_app
from ledger.tui.dialogs.base import FormDialog
from tui_support import count, ready, run, type_text


def last_entry(path):
    return Ledger(path).snapshot().entries[-1]


async def open_form(app, pilot, key: str):
    await ready(app, pilot)
    await pilot.press(key)
    await pilot.pause(0.1)
    assert isinstance(app.screen, FormDialog), f"key {key} did not open a form"
    return app.screen


def message(screen, name: str) -> str:
    return str(screen.query_one(f"#m-{name}", Static).render())


# (key, typed into the focused field, selects to set, expected kind, expected data subset)
VALID = [
    ("b", "1.8 m/s", {"plan": 13}, "burn", {"engine": "lae", "dv": 1.8, "plan": 13}),
    ("b", "95 s", {"engine": "lae"}, "burn", {"engine": "lae", "duration": 95.0}),
    ("b", "2.4 kg", {"engine": "rcs"}, "burn", {"engine": "rcs", "propellant": 2.4}),
    ("u", "3 min", {}, "use", {"engine": "rcs", "duration": 180.0}),
    ("u", "0.2 kg", {}, "use", {"engine": "rcs", "propellant": 0.2}),
    ("m", "-35 kg", {}, "mass", {"delta": -35.0}),
    ("w", "", {"plan": 14}, "withdraw", {"plan": 14}),
]


@pytest.mark.parametrize("key,typed,selects,kind,expected", VALID)
def test_valid_form_writes_exactly_one_entry(ledger_path, key, typed, selects, kind, expected):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, key)
            for name, value in selects.items():
                screen.query_one(f"#f-{name}", Select).value = value
                await pilot.pause(0.05)
            if "plan" in selects and key == "b":  # picking a plan fills in its engine and delta-v
                assert screen.query_one("#f-amount").value == "8 m/s"
                screen.query_one("#f-amount").value = ""
            if typed:
                screen.query_one("#f-delta" if key == "m" else "#f-amount").focus()
                await type_text(pilot, typed)
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert not isinstance(app.screen, FormDialog), "form stayed open after valid input"
            assert app.snap.entries[-1].kind == kind  # panels were handed the new snapshot

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before + 1
    e = last_entry(ledger_path)
    assert e.kind == kind
    for k, v in expected.items():
        assert e.data[k] == pytest.approx(v) if isinstance(v, float) else e.data[k] == v


def test_plan_form_needs_a_time_and_then_writes(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, "p")
            await type_text(pilot, "3 m/s")
            await pilot.press("ctrl+s")
            await pilot.pause(0.1)
            assert isinstance(app.screen, FormDialog)
            assert "required" in message(screen, "at")
            assert count(ledger_path) == 15
            screen.query_one("#f-at").focus()
            await type_text(pilot, "2026-03-01T12:00Z")
            await pilot.press("enter")
            await pilot.pause(0.2)
            assert not isinstance(app.screen, FormDialog)

    run(go())
    e = last_entry(ledger_path)
    assert (e.kind, e.data["engine"], e.data["dv"]) == ("plan", "lae", 3.0)
    assert count(ledger_path) == 16


INVALID = [
    ("b", "12", "amount", "add a unit"),
    ("b", "12 blorps", "amount", "unknown unit"),
    ("b", "12 parsec", "amount", "is not a dv or duration or propellant"),
    ("b", "-3 m/s", "amount", "negative"),
    ("u", "2 m/s", "amount", "is not a duration or propellant"),
    ("m", "0 kg", "delta", "zero"),
    ("m", "heavy", "delta", "expected a mass"),
    ("w", "", "plan", "pick one"),
    ("b", "1 m/s|at=yesterday", "at", "ISO 8601"),
]


@pytest.mark.parametrize("key,typed,field,expected", INVALID)
def test_invalid_form_shows_message_and_writes_nothing(ledger_path, key, typed, field, expected):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, key)
            text, _, extra = typed.partition("|")
            if text:
                await type_text(pilot, text)
            if extra:
                name, value = extra.split("=")
                screen.query_one(f"#f-{name}").focus()
                await type_text(pilot, value)
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert app.screen is screen, "an invalid form must stay open"
            assert expected in message(screen, field), message(screen, field)
            assert "Not recorded" in str(screen.query_one("#form-error", Static).render())

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before


def test_correct_form_prefills_selected_entry_and_needs_a_reason(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            app.main.window.cursor_seq = 6
            app.main.draw_rows()
            await pilot.pause(0.05)
            await pilot.press("c")
            await pilot.pause(0.1)
            screen = app.screen
            assert screen.query_one("#f-entry").value == "6"
            screen.query_one("#f-amount").focus()
            await type_text(pilot, "50 s")
            await pilot.press("ctrl+s")
            await pilot.pause(0.1)
            assert app.screen is screen and "required" in message(screen, "reason")
            assert count(ledger_path) == 15
            screen.query_one("#f-reason").focus()
            await type_text(pilot, "recount")
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert app.screen is not screen

    run(go())
    e = last_entry(ledger_path)
    assert e.kind == "correct" and e.data["entry"] == 6 and e.data["changes"] == {"duration": 50.0}
    assert e.data["reason"] == "recount"
    assert count(ledger_path) == 16


def test_burn_on_a_plan_withdrawn_meanwhile_is_recorded_with_a_warning(ledger_path):
    """A burn naming a plan that another process withdrew meanwhile: a burn that happened is never refused
    (issue 11 point 3); it is recorded and carries the warning that the plan was withdrawn."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            screen = await open_form(app, pilot, "b")
            screen.query_one("#f-plan", Select).value = 13
            await pilot.pause(0.05)
            Ledger(ledger_path).record("withdraw", {"plan": 13}, by="other")
            await type_text(pilot, "1 m/s") if not screen.query_one("#f-amount").value else None
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            if app.screen is screen:  # the console saw the withdrawal first: a new warning asks to confirm
                assert "withdrawn" in str(screen.query_one("#burn-warnings", Static).render())
                await pilot.press("ctrl+s")
                await pilot.pause(0.2)
            assert app.screen is not screen

    run(go())
    assert count(ledger_path) == 17  # the other process's withdrawal and the burn
    e = last_entry(ledger_path)
    assert e.kind == "burn" and any("withdrawn" in w for w in e.data["plan_warnings"])


def test_escape_cancels_without_writing(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await open_form(app, pilot, "m")
            await type_text(pilot, "-5 kg")
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert not isinstance(app.screen, FormDialog)

    run(go())
    assert count(ledger_path) == 15


def test_an_executed_burn_beyond_the_model_is_recorded_with_a_warning(ledger_path):
    """Rules: an executed burn is always recorded; a warning says it contradicts the model."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(160, 48)) as pilot:
            screen = await open_form(app, pilot, "b")
            await type_text(pilot, "3000 m/s")
            await pilot.press("ctrl+s")
            await pilot.pause(0.3)
            assert not isinstance(app.screen, FormDialog)
            notes = [n.message for n in app._notifications]
            assert any("recorded entry #16" in n for n in notes)
            assert any(n.severity == "warning" for n in app._notifications)
            watch = str(app.main.query_one("#watch").render())
            assert "⚠" in watch and "reserves" in watch
            assert "warning" in str(app.main.query_one("#masthead", Static).render())
            await pilot.press("a")
            await pilot.pause(0.1)
            text = str(app.screen.query_one("#alerts", Static).render())
            assert "reserves can no longer be met" in text and "chain: intact" in text

    run(go())
    assert count(ledger_path) == 16
