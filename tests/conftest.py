"""Shared fixtures: a ledger of a GEO-like craft with a controllable clock (handover, forecast, reports).

The craft is a GEO-like bipropellant craft built from values in docs/sources.md: MMH/MON-3 at mixture ratio
1.65 (§3, from memory), a 440 N apogee engine at 318 s and 10 N thrusters at 290 s (§2, from memory), a
9.617 m/s re-orbit reserve (§7, IADC guideline, computed) and 45.6 m/s/yr of north-south station keeping
on the thrusters (§7, Soop's drift rate from memory, the delta-v computed). Loads and dry mass are round numbers.
"""
from __future__ import annotations

import os

import pytest

if os.environ.get("PYTEST_XDIST_WORKER"):
    # pytest-xdist's workers set COLUMNS=80 and LINES=24; the command line honours COLUMNS (it wraps its
    # output there), so a worker would test another terminal than the one the tests describe.
    for _name in ("COLUMNS", "LINES"):
        os.environ.pop(_name, None)

from ledger.services import craftfile
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import parse_time

CRAFT_YAML = """
craft:
  name: GEO-TEST
  dry_mass: 1500 kg
tanks:
  - {id: ox, fluid: MON-3, load: 400 kg, residual: 8 kg}
  - {id: fuel, fluid: MMH, load: 245 kg, residual: 5 kg}
engines:
  - {id: lae, isp: 318 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
  - {id: thr, isp: 290 s, thrust: 10 N, feeds: {ox: 1.65, fuel: 1}}
reserves:
  - {id: reorbit, engine: thr, dv: 9.617 m/s}
operations:
  routine:
    - {engine: thr, dv_per_year: 45.6 m/s}
"""
T0 = parse_time("2026-03-02T06:00:00Z")
HOUR = 3600.0


class Clock:
    """Stands in for the wall clock in every service module that reads it."""

    def __init__(self, t: float):
        self.t = t

    def __call__(self) -> float:
        return self.t

    def at(self, t: float) -> "Clock":
        self.t = t
        return self


@pytest.fixture
def fake_clock(monkeypatch) -> Clock:
    c = Clock(T0)
    for target in ("ledger.services.ledger.now", "ledger.services.timefmt.now",
                   "ledger.services.handover.clock", "ledger.services.forecast.clock"):
        monkeypatch.setattr(target, c)
    return c


@pytest.fixture
def geo_craft_path(tmp_path) -> str:
    path = tmp_path / "craft.yaml"
    path.write_text(CRAFT_YAML, encoding="utf-8")
    return str(path)


@pytest.fixture
def geo_ledger(tmp_path, geo_craft_path, fake_clock) -> Ledger:
    path = str(tmp_path / "ledger.json")
    create(path, craftfile.load_craft(geo_craft_path), by="test")
    return Ledger(path)


HOSTILE_NOTE = "<script>alert(1)</script> ]]> [red]x[/] | *b* # h"


@pytest.fixture
def two_shifts(geo_ledger, fake_clock):
    """Two shifts on the GEO-TEST ledger. Shift 1 (T0 to T1) logs burn #1 and ends with handover #2.
    Shift 2 logs plans #3 and #4, burn #5 executing plan #3 by duration, burn #6 that happened an hour
    before T1 but is logged three hours after it (late), a correction #7 of burn #1, plan #8 with a
    hostile note. Returns the ledger, the times and the first handover's report."""
    from types import SimpleNamespace

    from ledger.services import handover

    led, c = geo_ledger, fake_clock
    t1 = T0 + 8 * HOUR
    c.at(T0 + HOUR)
    led.record("burn", {"engine": "thr", "dv": 1.75}, note="NS-1")                                      # 1
    c.at(t1)
    first = handover.record(led, handover.assemble(led, from_name="Ann", to_name="Bo"))                  # 2
    c.at(t1 + HOUR)
    led.record("plan", {"engine": "thr", "dv": 1.8}, at=t1 + 30 * HOUR, note="NS-2")                     # 3
    c.at(t1 + 2 * HOUR)
    led.record("plan", {"engine": "lae", "dv": 20.0}, at=t1 + 40 * HOUR, note="trim")                   # 4
    led.record("burn", {"engine": "thr", "duration": 150.0, "plan": 3}, at=t1 + 2 * HOUR)              # 5
    c.at(t1 + 3 * HOUR)
    led.record("burn", {"engine": "thr", "dv": 0.5}, at=t1 - HOUR, note="found in telemetry")          # 6
    c.at(t1 + 4 * HOUR)
    led.correct(1, {"dv": 1.70}, reason="re-analysed tracking")                                          # 7
    c.at(t1 + 5 * HOUR)
    led.record("plan", {"engine": "thr", "dv": 0.4}, at=t1 + 50 * HOUR, note=HOSTILE_NOTE)             # 8
    t2 = t1 + 8 * HOUR
    c.at(t2)
    return SimpleNamespace(ledger=led, clock=c, t0=T0, t1=t1, t2=t2, first=first)


@pytest.fixture
def optional_sections(monkeypatch):
    """Status and check dicts as the uncertainty, approval and gauging work will extend them (keys only)."""
    from ledger.services import views

    real_status, real_check = views.status, views.check

    def status_plus(snap):
        s = real_status(snap)
        s["confidence"] = 0.99
        for t in s["tanks"].values():
            t["usable_low_kg"] = t["usable_kg"] - 2.0
            t["gauge"] = {"method": "PVT", "gauged_kg": 210.5, "difference_kg": -0.25}
        for e in s["engines"].values():
            e["dv_free_low_m_s"] = e["dv_free_m_s"] - 45.6
        for p in s["pending_plans"]:
            p["approval"] = "approved"
        return s

    def check_plus(*args, **kwargs):
        return dict(real_check(*args, **kwargs), verdict="marginal", probability=0.97)

    monkeypatch.setattr(views, "status", status_plus)
    from ledger.services import handover as handover_service  # the handover asks for status with low bounds

    monkeypatch.setattr(handover_service, "_status_with_bounds", lambda snap: views.status(snap))
    monkeypatch.setattr(views, "check", check_plus)


@pytest.fixture
def fake_backup(monkeypatch):
    """A stand-in for ledger.store.backup (the integrity work): records the calls, writes nothing."""
    import sys
    import types

    calls = []

    def make_backup(ledger_path, *, keep=None):
        calls.append(ledger_path)
        return ledger_path + ".backup-test"

    module = types.ModuleType("ledger.store.backup")
    module.make_backup = make_backup
    monkeypatch.setitem(sys.modules, "ledger.store.backup", module)
    return calls
