"""Gauge and re-baseline forms: a valid reading previews, then records exactly one entry with the SI values
typed; invalid input writes nothing. Unit conversions are checked against SI definitions (1 bar = 100 kPa
and T/K = t/degC + 273.15: BIPM SI Brochure, 9th ed., Tables 6 and 8); the gas-stored estimate against
CoolProp's xenon density directly; the re-baseline against the inverse-variance weighted mean."""
from __future__ import annotations

import os

import pytest
from textual.widgets import Input, Select, Static

from ledger.services import gauging
from ledger.services.ledger import Ledger
from ledger.services.timefmt import parse_time
from ledger.tui.app import make_app
from ledger.tui.dialogs.gauge import GaugeForm, RebaselineForm
from ledger.tui.screens.main import MainScreen
from ledger.tui.widgets.state import TankGauges
from tui_support import count, ready, run, type_text, until

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
AT = "2026-03-01T00:00Z"


async def open_gauge(app, pilot, pressure: str, temperature: str, at: str = AT, tank: str | None = None):
    await ready(app, pilot)
    await pilot.press("g")
    await pilot.pause(0.1)
    form = app.screen
    assert isinstance(form, GaugeForm)
    if tank:
        form.query_one("#f-tank", Select).value = tank
    form.query_one("#f-pressure", Input).focus()
    await type_text(pilot, pressure)
    form.query_one("#f-temperature", Input).value = temperature
    form.query_one("#f-at", Input).value = at
    await pilot.pause(0.05)
    return form


def result_text(form) -> str:
    return str(form.query_one("#gauge-result", Static).render())


def test_gauge_previews_then_records_exactly_one_reading(ledger_path):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_gauge(app, pilot, "20.5 bar", "21 degC")
            await pilot.press("ctrl+s")  # preview: computed in a worker, nothing written
            await until(pilot, lambda: form.previewed is not None, what="preview")
            assert count(ledger_path) == before and isinstance(app.screen, GaugeForm)
            reading = form.previewed[1]
            assert reading["pressure_pa"] == pytest.approx(20.5e5, rel=1e-12)  # 1 bar = 1e5 Pa
            assert reading["temperature_k"] == pytest.approx(294.15, rel=1e-12)  # 21 + 273.15
            # the same figures as the service on the same snapshot, reading and time
            ref = gauging.gauge_reading(app.snap, "hyd", 20.5e5, 294.15, at=parse_time(AT, "at"))
            for key in ("propellant_kg", "sigma_kg", "bookkeeping_kg", "difference_sigma", "flagged"):
                assert reading[key] == ref[key], key
            text = result_text(form)
            assert f"{ref['propellant_kg']:,.3f}" in text and f"{ref['difference_sigma']:+.2f}σ" in text
            assert "nothing recorded yet" in text
            await pilot.press("ctrl+s")  # unchanged: records what was previewed
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="record")
            e = app.snap.entries[-1]
            assert e.kind == "gauge" and e.data["propellant_kg"] == ref["propellant_kg"]
            assert e.at == parse_time(AT, "at")
            gauges = str(app.main.query_one(TankGauges).render())  # the tank panel shows the comparison
            assert f"#{e.seq}" in gauges and f"{ref['difference_sigma']:+.1f}σ" in gauges

    run(go())
    assert count(ledger_path) == before + 1


@pytest.mark.parametrize("pressure,temperature,tank,expect", [
    ("20.5 psx", "21 degC", None, "unknown unit"),        # (a bare number is pascals: tests/tui/test_bare_numbers.py)
    ("20.5 bar", "", None, "required"),
    ("20.5 m/s", "21 degC", None, "pressure"),            # wrong dimension
    ("20.5 bar", "21 degC", "ox", "no `volume`"),         # a regulated tank cannot be gauged by PVT
])
def test_invalid_gauge_input_writes_nothing(ledger_path, pressure, temperature, tank, expect):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_gauge(app, pilot, pressure, temperature, tank=tank)
            for _ in range(2):  # neither the preview nor a second ctrl+s records
                await pilot.press("ctrl+s")
                await until(pilot, lambda: not form.busy, what="preview")
            shown = " ".join(str(w.render()) for w in form.query(".field-msg, #form-error"))
            assert expect in shown and "Not recorded" in shown
            assert isinstance(app.screen, GaugeForm) and form.previewed is None

    run(go())
    assert count(ledger_path) == before


def test_an_edit_after_the_preview_asks_for_a_new_one(ledger_path):
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_gauge(app, pilot, "20.5 bar", "21 degC")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: form.previewed is not None, what="preview")
            form.query_one("#f-pressure", Input).value = "20.6 bar"
            await pilot.pause(0.05)
            assert form.previewed is None and "previews again" in result_text(form)
            await pilot.press("ctrl+s")  # a new preview, not a record
            await until(pilot, lambda: form.previewed is not None, what="second preview")
            assert form.previewed[1]["pressure_pa"] == pytest.approx(20.6e5)
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert isinstance(app.screen, MainScreen)

    run(go())
    assert count(ledger_path) == before


def test_gas_stored_tank_estimate_is_coolprop_density_times_volume(tmp_path):
    """leo-imager (bundled demo): xenon in 5.5 L. At 6.0 MPa and 25 degC the estimate is
    rho(P, T) x V with rho from CoolProp's reference equation of state for xenon."""
    CP = pytest.importorskip("CoolProp.CoolProp")
    from ledger.services import scenario  # noqa: PLC0415
    path = str(tmp_path / "leo.json")
    scenario.build(os.path.join(ROOT, "scenarios", "leo-imager.yaml"), path)
    before = count(path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_gauge(app, pilot, "6.0 MPa", "25 degC", tank="xe", at="")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: form.previewed is not None, what="preview")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="record")

    run(go())
    assert count(path) == before + 1
    e = Ledger(path).snapshot().entries[-1]
    expected = CP.PropsSI("D", "P", 6.0e6, "T", 298.15, "Xenon") * 5.5e-3
    assert e.kind == "gauge" and e.data["method"] == "gas density"
    assert e.data["propellant_kg"] == pytest.approx(expected, rel=1e-9)


def _reading(path: str, pressure_pa: float) -> int:
    out = gauging.record_gauge(Ledger(path), "hyd", pressure_pa, 294.15, at=parse_time(AT, "at"), by="ops")
    return out["id"]


async def open_rebaseline(app, pilot, seq: int):
    await ready(app, pilot)
    app.main.window.cursor_seq = seq  # the reading selected in the ledger
    await pilot.press("r")
    await pilot.pause(0.1)
    form = app.screen
    assert isinstance(form, RebaselineForm) and form.raw("gauge") == seq
    return form


def test_rebaseline_needs_a_name_then_adopts_the_weighted_mean(ledger_path):
    """The adopted value is the inverse-variance weighted mean of the gauge estimate g and the bookkeeping
    b: (g/sg^2 + b/sb^2) / (1/sg^2 + 1/sb^2), sigma (1/sg^2 + 1/sb^2)^-1/2 (Taylor, An Introduction to
    Error Analysis, 2nd ed., section 7.2; from memory)."""
    seq = _reading(ledger_path, 20.5e5)
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_rebaseline(app, pilot, seq)
            assert "within 3σ" in result_text(form)
            await pilot.press("ctrl+s")  # no name: refused, nothing written
            await pilot.pause(0.1)
            assert "required" in str(form.query_one("#m-by", Static).render())
            assert count(ledger_path) == before
            form.query_one("#f-by", Input).focus()
            await type_text(pilot, "F. Lead")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="re-baseline")

    run(go())
    assert count(ledger_path) == before + 1
    snap = Ledger(ledger_path).snapshot()
    g = snap.resolved.effective[seq].data
    e = snap.entries[-1]
    wg, wb = 1 / g["sigma_kg"] ** 2, 1 / g["bookkeeping_sigma_kg"] ** 2
    assert e.kind == "rebaseline" and e.by == "F. Lead" and e.data["gauge"] == seq
    assert e.data["remaining_kg"] == pytest.approx((g["propellant_kg"] * wg + g["bookkeeping_kg"] * wb) / (wg + wb),
                                                   rel=1e-9)
    assert e.data["sigma_kg"] == pytest.approx((wg + wb) ** -0.5, rel=1e-9)


def test_rebaseline_beyond_three_sigma_is_refused_unless_forced(ledger_path):
    seq = _reading(ledger_path, 19.0e5)  # far below the bookkeeping: flagged
    assert Ledger(ledger_path).snapshot().resolved.effective[seq].data["flagged"]
    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_rebaseline(app, pilot, seq)
            assert "BEYOND 3σ" in result_text(form)
            form.query_one("#f-by", Input).value = "F. Lead"
            await pilot.press("ctrl+s")
            await until(pilot, lambda: not form.busy, what="refusal")
            assert "beyond 3" in str(form.query_one("#form-error", Static).render())
            assert count(ledger_path) == before
            form.query_one("#f-force", Select).value = "force"
            await pilot.press("ctrl+s")
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="forced re-baseline")

    run(go())
    assert count(ledger_path) == before + 1
    assert Ledger(ledger_path).snapshot().entries[-1].data["forced"] is True


def test_the_form_takes_the_gas_temperature_offset_sigma(ledger_path):
    """The console form's 'gas temp. σ' is the command line's --gas-temperature-offset: the preview equals the
    service's reading with that sigma, and a wider offset (3 K against the 0.5 K default for a settled tank)
    can only widen the mass uncertainty (a larger input variance; the estimate's sensitivity is unchanged)."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            form = await open_gauge(app, pilot, "20.5 bar", "21 degC")
            form.query_one("#f-g_offset", Input).value = "3 K"
            await pilot.pause(0.05)
            await pilot.press("ctrl+s")
            await until(pilot, lambda: form.previewed is not None, what="preview")
            reading = form.previewed[1]
            assert reading["sigmas"]["gas_temperature_offset_k"] == 3.0
            tank = gauging.tank_of(app.snap, "hyd")
            at = parse_time(AT, "at")
            wide = gauging.gauge_reading(app.snap, "hyd", 20.5e5, 294.15,
                                         gauging.default_sigmas(tank, None, None, 3.0), at=at)
            default = gauging.gauge_reading(app.snap, "hyd", 20.5e5, 294.15, at=at)
            assert reading["sigma_kg"] == wide["sigma_kg"]
            assert default["sigmas"]["gas_temperature_offset_k"] < 3.0
            assert wide["sigma_kg"] > default["sigma_kg"]

    run(go())
