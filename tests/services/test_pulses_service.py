"""Pulse trains through the services: a pulse burn that executes a plan is judged on the delta-v it
delivers at the pulse-mode Isp (the rocket equation by hand, Sutton & Biblarz, Rocket Propulsion Elements,
9th ed., ch. 4 [memory]; g0 from scipy.constants), and the handover lists per-thruster totals."""
from __future__ import annotations

import math

import pytest
from scipy import constants

from ledger.core.craft import Craft, Engine, Tank
from ledger.services import handover
from ledger.services.ledger import Ledger, create

T0 = 1.78e9


def craft() -> Craft:
    # Invented test craft: 90 kg dry, 6 kg hydrazine, a 2 N pair at 220 s with pulse Isp at 75 %.
    return Craft("p", 90.0, (Tank("hyd", "hydrazine", 6.0),),
                 (Engine("acs", 220.0, 2.0, {"hyd": 1.0}, pulse_isp_factor=0.75, life={"pulses": 10000.0}),))


def test_pulse_burn_executing_a_plan_is_judged_at_the_pulse_isp(tmp_path):
    path = str(tmp_path / "p.json")
    create(path, craft(), by="t")
    led = Ledger(path)
    mp = 900 * 0.1 * 2.0 / (220.0 * constants.g)
    delivered = 0.75 * 220.0 * constants.g * math.log(96.0 / (96.0 - mp))  # by hand, m0 = 96 kg
    led.record("plan", {"engine": "acs", "dv": delivered}, at=T0)
    stored, _ = led.record("burn", {"engine": "acs", "pulses": 900, "on_time": 0.1, "plan": 1}, at=T0 + 10)
    found = stored["data"].get("plan_warnings") or []
    assert not any("achieved dv" in w for w in found), found  # at steady Isp it would read 133 % of the plan
    snap = led.snapshot()
    assert snap.replay.dv[-1] == pytest.approx(delivered, rel=1e-12)
    report = handover.assemble(led, from_name="A", to_name="B", since=T0 - 100, now=T0 + 100)
    acs = report["thrusters"][0]
    assert (acs["engine"], acs["pulses"]) == ("acs", 900)
    assert acs["on_time_s"] == pytest.approx(90.0) and acs["throughput_kg"] == pytest.approx(mp, rel=1e-12)
    assert acs["life_used"]["pulses"] == pytest.approx(0.09)
    assert report["burns"][0]["achieved_from"].startswith("from 900 pulses")
