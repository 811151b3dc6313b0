"""One rule for bare numbers in both shells (issue 11, point 9): a bare number is in the base unit of the
quantity the field holds (m/s, kg, Pa, K), as on the command line (tests/cli/test_units_cli.py); a field
that can hold several quantities (the burn form's amount) refuses it rather than guess. Base units are
the SI's (BIPM SI Brochure, 9th ed., Tables 2 and 4)."""
from __future__ import annotations

from textual.widgets import Input, Static

from ledger.services.ledger import Ledger
from ledger.tui.app import make_app
from ledger.tui.dialogs.base import FormDialog
from ledger.tui.dialogs.gauge import GaugeForm
from tui_support import count, ready, run, type_text, until


def test_plan_form_takes_a_bare_delta_v_in_m_s(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            await pilot.press("p")
            await pilot.pause(0.1)
            form = app.screen
            assert isinstance(form, FormDialog)
            await type_text(pilot, "3")
            form.query_one("#f-at", Input).value = "2026-03-01T12:00Z"
            await pilot.pause(0.05)
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert not isinstance(app.screen, FormDialog), "a bare delta-v was refused"

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before + 1
    e = Ledger(ledger_path).snapshot().entries[-1]
    assert (e.kind, e.data["dv"]) == ("plan", 3.0)


def test_gauge_form_takes_bare_pascals_and_kelvin(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            await pilot.press("g")
            await pilot.pause(0.1)
            form = app.screen
            assert isinstance(form, GaugeForm)
            form.query_one("#f-pressure", Input).focus()
            await type_text(pilot, "2050000")
            form.query_one("#f-temperature", Input).value = "294.15"
            form.query_one("#f-at", Input).value = "2026-03-01T00:00Z"
            await pilot.pause(0.05)
            await pilot.press("ctrl+s")  # preview only
            await until(pilot, lambda: form.previewed is not None, what="preview")
            reading = form.previewed[1]
            assert reading["pressure_pa"] == 2050000.0 and reading["temperature_k"] == 294.15

    run(go())


def test_burn_amount_still_needs_the_unit_that_says_which_quantity(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            await pilot.press("b")
            await pilot.pause(0.1)
            form = app.screen
            await type_text(pilot, "12")
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert app.screen is form
            msg = str(form.query_one("#m-amount", Static).render())
            assert "add a unit" in msg and "m/s" in msg and "kg" in msg, msg

    before = count(ledger_path)
    run(go())
    assert count(ledger_path) == before
