"""The console (Textual Pilot) never shows a low bound from a forged confidence cache (issue 16, point 1)."""
from __future__ import annotations

import asyncio

import orjson

from ledger.services import confcache, uncertainty
from ledger.services.ledger import Ledger
from ledger.tui import lows
from ledger.tui.app import make_app
from ledger.tui.widgets.state import EngineTable


def test_console_ignores_an_edited_cache(ledger):
    honest = uncertainty.confidence_status(Ledger(ledger).snapshot(), lows.CONFIDENCE, lows.SAMPLES, lows.SEED)
    cache = confcache.cache_path(ledger)
    tag, body = open(cache, "rb").read().split(b"\n", 1)
    doc = orjson.loads(body)
    doc["value"]["engines"]["lae"]["dv_free_low_m_s"] = 9999.0
    with open(cache, "wb") as fh:
        fh.write(tag + b"\n" + orjson.dumps(doc))

    async def go():
        app = make_app(ledger)
        async with app.run_test(size=(160, 48)) as pilot:
            for _ in range(600):
                if app.lows.result is not None or app.lows.error is not None:
                    break
                await pilot.pause(0.05)
            await pilot.pause(0.1)
            assert app.lows.result["engines"]["lae"]["dv_free_low_m_s"] == honest["engines"]["lae"]["dv_free_low_m_s"]
            assert "9,999" not in str(app.main.query_one(EngineTable).render())

    asyncio.run(go())
