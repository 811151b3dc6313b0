"""Corrections, withdrawals and late entries replay to what the rocket equation gives for the corrected
history. Reference: Tsiolkovsky, m_after = m_before * exp(-dv / (Isp * g0)); a burn given by propellant or
duration removes that mass (duration * thrust / (Isp * g0)). g0 from scipy.constants.g (standard gravity,
9.80665 m/s^2 by definition, 3rd CGPM 1901)."""
from __future__ import annotations

import math

import pytest
from scipy.constants import g as G0
from storekit import snapshot_bytes

from ledger.errors import InputError
from ledger.services import views
from ledger.services.ledger import Ledger

ISP, THRUST, M0 = 321.0, 440.0, 1200.0 + 800.0 + 500.0  # the test craft in storekit.CRAFT_YAML
VE = ISP * G0
OX_SHARE = 1.65 / 2.65  # mass share of the oxidiser at the engine's mixture ratio (feeds ox 1.65 : fuel 1)
T0 = 1.7e9


def _unchanged(path, fn):
    before = snapshot_bytes(path)
    with pytest.raises(InputError):
        fn()
    assert snapshot_bytes(path) == before


def test_a_burn_on_a_withdrawn_plan_is_recorded_with_a_warning(new_ledger):
    """A burn that happened is never refused (issue 11 point 3): executing a withdrawn plan is stored, and
    the entry carries the warning that the plan was withdrawn."""
    led = Ledger(new_ledger)
    plan, _ = led.record("plan", {"engine": "lae", "dv": 5.0}, at=T0 + 86400)
    led.record("withdraw", {"plan": plan["seq"]})
    burn, _ = led.record("burn", {"engine": "lae", "dv": 5.0, "plan": plan["seq"]}, at=T0 + 86400)
    assert any("withdrawn" in w for w in burn["data"]["plan_warnings"])
    assert len(led.snapshot().resolved.events) == 1


def test_withdrawn_plan_is_neither_pending_nor_replayed(new_ledger):
    led = Ledger(new_ledger)
    plan, _ = led.record("plan", {"engine": "lae", "dv": 5.0}, at=T0 + 86400)
    led.record("withdraw", {"plan": plan["seq"]})
    snap = led.snapshot()
    assert snap.resolved.pending == () and plan["seq"] in snap.resolved.withdrawn
    assert snap.state.mass_kg == M0 and len(snap.resolved.events) == 0

    # correcting the withdrawn plan keeps it withdrawn; the withdrawal itself takes only --at / --note
    led.correct(plan["seq"], {"dv": 6.0}, reason="planned value was mistyped")
    led.correct(2, {"note": "withdrawn after the review"}, reason="note added")
    _unchanged(new_ledger, lambda: led.correct(2, {"dv": 1.0}, reason="a withdrawal has no dv"))
    snap = led.snapshot()
    assert snap.resolved.pending == () and snap.resolved.withdrawn == frozenset({plan["seq"]})
    assert snap.resolved.effective[plan["seq"]].get("dv") == 6.0
    assert snap.state.mass_kg == M0
    rows = {r["id"]: r for r in views.log(snap)}
    assert rows[plan["seq"]]["state"] == "withdrawn" and rows[plan["seq"]]["superseded"]

    # a second plan executed by a burn replays once, by the rocket equation
    p2, _ = led.record("plan", {"engine": "lae", "dv": 4.0}, at=T0 + 2 * 86400)
    led.record("burn", {"engine": "lae", "dv": 4.0, "plan": p2["seq"]}, at=T0 + 2 * 86400)
    snap = led.snapshot()
    assert snap.resolved.pending == ()
    assert math.isclose(snap.state.mass_kg, M0 * math.exp(-4.0 / VE), rel_tol=1e-12)


def test_correction_of_a_correction_replays_the_latest_values(new_ledger):
    led = Ledger(new_ledger)
    led.record("burn", {"engine": "lae", "dv": 2.0}, at=T0)                 # 1
    led.correct(1, {"dv": 2.5}, reason="tracking update")                   # 2 corrects 1
    led.correct(2, {"dv": 2.7}, reason="final orbit determination")         # 3 corrects the correction
    snap = led.snapshot()
    expected = M0 * math.exp(-2.7 / VE)
    assert math.isclose(snap.state.mass_kg, expected, rel_tol=1e-12)
    assert snap.resolved.superseded == frozenset({1, 2})
    rows = {r["id"]: r for r in views.log(snap)}
    assert rows[1]["superseded"] and rows[2]["superseded"] and not rows[3]["superseded"]
    assert rows[1]["amount"] == "2.000 m/s"                                 # the original stays visible
    carriers = [r for r in rows.values() if "mass_after_kg" in r]
    assert [r["id"] for r in carriers] == [3] and math.isclose(carriers[0]["mass_after_kg"], expected, rel_tol=1e-12)

    # a correction that gives the amount as a duration replaces the dv: propellant = thrust/(Isp g0) x t
    led.correct(3, {"duration": 60.0}, reason="the burn was logged from the timeline")
    snap = led.snapshot()
    used = THRUST / VE * 60.0
    assert math.isclose(snap.state.mass_kg, M0 - used, rel_tol=1e-12)
    assert math.isclose(800.0 - snap.state.remaining_kg[0], used * OX_SHARE, rel_tol=1e-9)


def test_correction_of_an_entry_logged_late_replays_in_time_order(new_ledger):
    led = Ledger(new_ledger)
    led.record("burn", {"engine": "lae", "dv": 3.0}, at=T0 + 3600)          # 1: 10:00, logged on time
    led.record("burn", {"engine": "lae", "propellant": 20.0}, at=T0)        # 2: 09:00, logged late
    snap = led.snapshot()
    assert math.isclose(snap.state.mass_kg, (M0 - 20.0) * math.exp(-3.0 / VE), rel_tol=1e-12)
    led.correct(2, {"propellant": 30.0}, reason="telemetry dump")           # 3
    snap = led.snapshot()
    assert math.isclose(snap.state.mass_kg, (M0 - 30.0) * math.exp(-3.0 / VE), rel_tol=1e-12)
    order = [r["id"] for r in views.log(snap) if r["kind"] == "burn" or "mass_after_kg" in r]
    assert order.index(3) < order.index(1)  # the corrected late burn still replays first

    led.correct(3, {"at": T0 + 7200}, reason="time was logged in the wrong zone")  # 4: now after burn 1
    snap = led.snapshot()
    assert math.isclose(snap.state.mass_kg, M0 * math.exp(-3.0 / VE) - 30.0, rel_tol=1e-12)
    led.correct(2, {"propellant": 25.0}, reason="recalibrated")               # 5: the time stays corrected
    snap = led.snapshot()
    assert math.isclose(snap.state.mass_kg, M0 * math.exp(-3.0 / VE) - 25.0, rel_tol=1e-12)
    assert snap.resolved.effective[2].at == T0 + 7200


def test_a_correction_may_change_only_fields_of_the_corrected_kind(ledger):
    led = Ledger(ledger)
    _unchanged(ledger, lambda: led.correct(1, {"delta": -5.0}, reason="wrong kind"))
    _unchanged(ledger, lambda: led.correct(1, {"dv": 1.0}, reason=""))
    _unchanged(ledger, lambda: led.correct(99, {"dv": 1.0}, reason="no such entry"))
    _unchanged(ledger, lambda: led.correct(1, {"engine": "nope"}, reason="unknown engine"))
