"""Issue 11 point 2 in the console: the watch list shows each pending plan's current verdict, a plan that
fails its check is a warning there (the same one `status` gives), and at 80x24 a list longer than its room
says how many lines it hides and that the alerts key shows them all."""
from __future__ import annotations

from ledger.services import uncertainty
from ledger.services.ledger import Ledger
from ledger.services.timefmt import parse_time
from ledger.tui import lows
from ledger.tui.app import make_app
from ledger.tui.dialogs.detail import AlertsDialog
from ledger.tui.widgets.watch import WatchList
from tui_support import fill, lows_done, ready, run


def _bad_plan(path: str) -> None:
    """5,000 m/s on the apogee engine: beyond anything the craft can fly (rocket equation, common practice)."""
    Ledger(path).record("plan", {"engine": "lae", "dv": 5000.0}, at=parse_time("2026-03-01T00:00Z"), by="fd")


def test_watch_list_shows_verdicts_and_the_failing_plan_warning(tmp_path):
    path = str(tmp_path / "w.ledger.json")
    fill(path)
    _bad_plan(path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(160, 48)) as pilot:
            await ready(app, pilot)
            await lows_done(app, pilot)
            await pilot.pause(0.2)
            text = str(app.main.query_one(WatchList).render())
            ref = uncertainty.status_with_confidence(app.snap, lows.CONFIDENCE, lows.SAMPLES, lows.SEED)
            failing = [w for w in ref["warnings"] if w.startswith("plan #")]
            assert failing and "INFEASIBLE" in text
            flat = " ".join(text.split())
            assert any(w.split(":")[0] in flat for w in failing)
            assert "no warnings" not in text
            app.open_alerts()
            await pilot.pause(0.2)
            assert isinstance(app.screen, AlertsDialog)
            assert all(w in app.screen.warnings for w in failing)

    run(go())


def test_watch_list_says_what_it_hides_at_80x24(tmp_path):
    path = str(tmp_path / "w.ledger.json")
    fill(path)
    for k in range(4):  # four more failing plans: more lines than the narrow strip has room for
        _bad_plan(path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            await lows_done(app, pilot)
            await pilot.pause(0.3)
            watch = app.main.query_one(WatchList)
            shown = str(watch.render()).splitlines()
            total = len(watch.all_lines(watch.size.width))
            assert total > len(shown)
            assert "more line" in shown[-1] and "press a" in shown[-1]
            assert str(total - (len(shown) - 1)) in shown[-1]

    run(go())


def test_console_says_when_routine_engines_share_tanks(tmp_path):
    """Issue 11 point 5: the geostationary scenario's two routine engines (nsk and ewk) both draw on ox and
    fuel; each run-out date assumes only its own spend, so the console says so next to the dates, as
    `status` does (services.forecast notes)."""
    from ledger.services import scenario  # noqa: PLC0415
    from ledger.tui.widgets.state import EngineTable  # noqa: PLC0415

    path = str(tmp_path / "geo.json")
    scenario.build(scenario.bundled()["geo-comsat"], path)

    async def go():
        for size, words in (((160, 48), "shared tanks"), ((80, 24), "shared")):
            app = make_app(path)
            async with app.run_test(size=size) as pilot:
                await ready(app, pilot)
                await pilot.pause(0.3)
                lines = [ln for ln in str(app.main.query_one(EngineTable).render()).splitlines() if "↘" in ln]
                assert lines and all(words in ln for ln in lines if "nsk" in ln or "ewk" in ln), lines

    run(go())
