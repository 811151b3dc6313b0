"""Helpers for the console tests: a small ledger with every kind of entry (built through the services),
and driving the app from plain synchronous tests."""
from __future__ import annotations

import asyncio
import os

from ledger.services import craftfile
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import parse_time

HERE = os.path.dirname(os.path.abspath(__file__))
CRAFT = os.path.join(HERE, "craft.yaml")


def fill(path: str) -> Ledger:
    """A ledger with burns, plans (one executed, one withdrawn, two pending), uses, a mass change and a
    correction, in the order an operations team might log them."""
    create(path, craftfile.load_craft(CRAFT), by="tester")
    led = Ledger(path)
    t = parse_time("2026-01-10T00:00Z")
    day = 86400.0
    led.record("plan", {"engine": "lae", "dv": 310.0}, at=t, by="fd", note="apogee 1")
    led.record("burn", {"engine": "lae", "dv": 309.2, "plan": 1}, at=t + 60, by="ops", note="apogee 1 done")
    led.record("mass", {"delta": -12.0}, at=t + 2 * day, by="ops", note="cover released")
    for k in range(6):
        led.record("use", {"engine": "rcs", "duration": 40.0 + k}, at=t + (3 + k) * day, by="ops")
    led.record("burn", {"engine": "rcs", "propellant": 0.8}, at=t + 10 * day, by="ops", note="trim")
    led.record("plan", {"engine": "lae", "dv": 5.0}, at=t + 20 * day, by="fd", note="drift stop")
    led.record("withdraw", {"plan": 11}, at=t + 11 * day, by="fd", note="not needed")
    led.record("plan", {"engine": "lae", "dv": 8.0}, at=t + 30 * day, by="fd", note="inclination trim")
    led.record("plan", {"engine": "rcs", "dv": 1.2}, at=t + 31 * day, by="fd", note="phasing")
    led.correct(5, {"duration": 44.0}, reason="telemetry recount", by="ops")
    return led


def run(coro):
    """Run an async Pilot test from a plain (sync) pytest test."""
    return asyncio.run(coro)


KEY_NAMES = {" ": "space", "/": "slash", ".": "full_stop", "-": "minus", ":": "colon", "+": "plus", "#": "number_sign"}


async def type_text(pilot, text: str) -> None:
    """Type like a user: one key press per character."""
    await pilot.press(*[KEY_NAMES.get(ch, ch) for ch in text])


async def ready(app, pilot, timeout: float = 10.0) -> None:
    """Wait until the first snapshot is drawn and the chain verified."""
    waited = 0.0
    while not (app.loaded.is_set() and app.live.verified) and waited < timeout:
        await pilot.pause(0.05)
        waited += 0.05
    await pilot.pause(0.1)
    assert app.loaded.is_set(), "console did not load the ledger"


def count(path: str) -> int:
    from ledger.services.ledger import Ledger  # noqa: PLC0415
    return len(Ledger(path).snapshot().entries)


async def until(pilot, cond, timeout: float = 30.0, what: str = "condition") -> None:
    """Pause until ``cond()`` is true (a worker finished); fail after ``timeout`` seconds."""
    import time  # noqa: PLC0415
    t0 = time.monotonic()
    while not cond():
        if time.monotonic() - t0 > timeout:
            raise AssertionError(f"timed out waiting for {what}")
        await pilot.pause(0.05)
    await pilot.pause(0.05)


async def lows_done(app, pilot, timeout: float = 60.0) -> None:
    await until(pilot, lambda: app.lows.result is not None or app.lows.error is not None, timeout, "low bounds")
    assert app.lows.error is None, app.lows.error
