"""Consoles learn of other writers' entries from the server's NOTIFY (no polling of the table), within a
second, and say "disconnected" while the server is away, then reconnect by themselves.

The 1 s bound is the issue's requirement (issue 13); delivery of NOTIFY at commit is PostgreSQL's
documented behaviour (PostgreSQL 15 manual, SQL command NOTIFY)."""
from __future__ import annotations

import asyncio
import time

from ledger.services.live import LiveLedger
from ledger.store.pgstore import PgStore



def bob(url: str) -> PgStore:
    return PgStore(url.replace("alice@", "bob@"))


def plan_record(note: str) -> dict:
    return {"kind": "mass", "at": "2026-12-03T00:00:00.000000Z", "recorded": "2026-12-03T00:00:00.000000Z",
            "by": "bob", "note": note, "data": {"delta": -0.5}}


def wait_for(cond, timeout: float) -> float | None:
    t0 = time.perf_counter()
    while time.perf_counter() - t0 < timeout:
        if cond():
            return time.perf_counter() - t0
        time.sleep(0.02)
    return None


def test_live_ledger_sees_another_writer_within_a_second(craft_url):
    live = LiveLedger(craft_url)
    assert len(live.snapshot().entries) == 0 and not live.changed()
    other = bob(craft_url)
    for i in range(3):
        other.append(plan_record(f"n{i}"))
        took = wait_for(live.changed, 1.0)
        assert took is not None, "no notification within 1 s"
        snap = live.snapshot()
        assert len(snap.entries) == i + 1 and snap.entries[-1].by == "bob"
        assert not live.changed()


def test_other_craft_does_not_wake_the_console(pg_schema, craft_url):
    from ledger.cli import main  # noqa: PLC0415

    from tests.pg.conftest import CRAFT_FILE  # noqa: PLC0415

    live = LiveLedger(craft_url)
    live.snapshot()
    other = craft_url.replace("craft=", "craft=quiet")
    assert main(["--ledger", other, "init", "--craft", CRAFT_FILE]) == 0
    bob(other).append(plan_record("elsewhere"))
    assert wait_for(live.changed, 0.6) is None


def test_disconnected_note_then_reconnects(pg_schema, craft_url):
    live = LiveLedger(craft_url)
    live.snapshot()
    assert live.store_note() is None
    pg_schema.stop("fast")
    try:
        assert wait_for(lambda: live.store_note() is not None, 10.0) is not None
        assert live.store_note().startswith("disconnected from the database since")
    finally:
        pg_schema.start()
    assert wait_for(lambda: live.store_note() is None, 15.0) is not None
    bob(craft_url).append(plan_record("after the restart"))
    assert wait_for(lambda: live.changed() and len(live.snapshot().entries) == 1, 3.0) is not None


def test_console_shows_other_writers_and_the_outage(pg_schema, craft_url):
    from ledger.tui.app import make_app  # noqa: PLC0415

    async def go():
        app = make_app(craft_url)
        async with app.run_test(size=(160, 50)) as pilot:
            for _ in range(200):
                if app.loaded.is_set():
                    break
                await pilot.pause(0.05)
            assert app.loaded.is_set() and len(app.snap.entries) == 0
            other = bob(craft_url)
            other.head()  # connected before the clock starts
            other.append(plan_record("from the other console"))
            t0 = time.perf_counter()  # committed: from here the console has 1 s
            while len(app.snap.entries) < 1 and time.perf_counter() - t0 < 3.0:
                await pilot.pause(0.05)
            took = time.perf_counter() - t0
            # 1 s is the bound; 0.5 s more for the test's own 50 ms pauses on a loaded 2-core machine
            assert len(app.snap.entries) == 1 and took < 1.5, took
            pg_schema.stop("fast")
            try:
                t0 = time.perf_counter()
                while app.store_note is None and time.perf_counter() - t0 < 10:
                    await pilot.pause(0.1)
                assert app.store_note is not None
                assert any("disconnected" in n.message for n in app._notifications)
            finally:
                pg_schema.start()
            t0 = time.perf_counter()
            while app.store_note is not None and time.perf_counter() - t0 < 15:
                await pilot.pause(0.1)
            assert app.store_note is None
            bob(craft_url).append(plan_record("after the restart"))
            t0 = time.perf_counter()
            while len(app.snap.entries) < 2 and time.perf_counter() - t0 < 5.0:
                await pilot.pause(0.05)
            assert len(app.snap.entries) == 2
    asyncio.run(go())


def test_console_started_while_the_server_is_down_loads_once_it_is_back(pg_schema, craft_url):
    from ledger.tui.app import make_app  # noqa: PLC0415

    bob(craft_url).append(plan_record("before"))

    async def go():
        pg_schema.stop("fast")
        try:
            app = make_app(craft_url)
            async with app.run_test(size=(160, 50)) as pilot:
                await pilot.pause(1.5)
                assert app.snap is None
                assert any("cannot read the ledger" in n.message for n in app._notifications)
                pg_schema.start()
                t0 = time.perf_counter()
                while app.snap is None and time.perf_counter() - t0 < 20:
                    await pilot.pause(0.1)
                assert app.snap is not None and len(app.snap.entries) == 1
        finally:
            pg_schema.start()  # no-op when already running
    asyncio.run(go())
