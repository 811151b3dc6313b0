"""The console driven from the keyboard: the check, live refresh, navigation, detail, trend, palette,
first run without a ledger."""
from __future__ import annotations

import math
import os
import time

import pytest
from textual.widgets import Input, Select, Static

from ledger.core.craft import G0
from ledger.services.ledger import Ledger
from ledger.services.records import make_record
from ledger.tui import actions
from ledger.tui.app import make_app
from ledger.tui.dialogs.base import FormDialog
from ledger.tui.dialogs.check import CheckDialog
from ledger.tui.dialogs.detail import DetailDialog
from ledger.tui.screens.main import MainScreen
from ledger.tui.screens.setup import SetupScreen
from ledger.tui.screens.trend import TrendScreen
from ledger.tui.widgets.grid import LedgerGrid
from tui_support import CRAFT, count, ready, run, type_text


def test_check_shows_rocket_equation_figures_and_records_nothing(ledger_path):
    """Check lae 12 m/s: both pending plans (lae 8, rcs 1.2 m/s) are flown first, then the burn.
    Propellant = m(1 - exp(-dv/(Isp g0))) (Tsiolkovsky); g0 = 9.80665 m/s^2 (3rd CGPM, 1901)."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            await pilot.press("k")
            await pilot.pause(0.1)
            assert isinstance(app.screen, CheckDialog)
            await type_text(pilot, "12 m/s")
            await pilot.pause(0.1)
            res = app.screen.result
            text = str(app.screen.query_one("#check-result", Static).render())
            m = app.snap.state.mass_kg
            m = m * math.exp(-8.0 / (318.0 * G0))
            m = m * math.exp(-1.2 / (220.0 * G0 * math.cos(math.radians(15.0))))
            expected = m * (1 - math.exp(-12.0 / (318.0 * G0)))
            assert res["propellant_kg"] == pytest.approx(expected, rel=1e-12)
            assert f"{expected:,.3f} kg" in text
            assert "FEASIBLE" in text and "dv free after" in text and "least margin tank" in text
            # a burn far beyond the tanks: the verdict turns, still nothing is written
            app.screen.query_one("#c-dv", Input).value = "5000 m/s"
            await pilot.pause(0.1)
            assert "NOT FEASIBLE" in str(app.screen.query_one("#check-result", Static).render())
            # pick a pending plan instead of typing
            app.screen.query_one("#c-plan", Select).value = 14
            await pilot.pause(0.1)
            assert app.screen.result["engine"] == "rcs" and app.screen.result["dv_m_s"] == 1.2
            await pilot.press("escape")
            await pilot.pause(0.05)
            assert isinstance(app.screen, MainScreen)

    run(go())
    assert count(ledger_path) == 15


def test_outside_append_shows_within_two_seconds_keeping_place_and_form(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            table = app.main.query_one(LedgerGrid)
            await pilot.press("up", "up", "up")
            await pilot.pause(0.1)
            place = app.main.window.cursor_seq
            assert place == 12  # three rows up from the newest (log order: ... 12, 11, 13, 14)
            await pilot.press("b")
            await pilot.pause(0.1)
            form = app.screen
            await type_text(pilot, "0.5 m")
            Ledger(ledger_path).record("burn", {"engine": "rcs", "dv": 0.3}, by="other-console")
            t0 = time.monotonic()
            while len(app.snap.entries) < 16 and time.monotonic() - t0 < 2.0:
                await pilot.pause(0.05)
            assert len(app.snap.entries) == 16, "append by another process not shown within 2 s"
            assert app.screen is form and form.query_one("#f-amount", Input).value == "0.5 m"
            assert "16" in str(app.main.query_one("#ledger-pane").border_title)
            await pilot.press("escape")
            await pilot.pause(0.1)
            assert app.main.window.cursor_seq == place
            assert table.cursor_key == str(place)

    run(go())


def test_keyboard_paging_home_end_find_and_kinds(tmp_path):
    path = str(tmp_path / "big.json")
    from tui_support import fill  # noqa: PLC0415
    led = fill(path)
    t = 1.8e9
    led.file.append_many([make_record("use", t + i * 60, t + i * 60, "ops", f"pulse-{i}",
                                      {"engine": "rcs", "duration": 1.0}) for i in range(300)])

    async def go():
        app = make_app(path)
        async with app.run_test(size=(100, 30)) as pilot:
            await ready(app, pilot)
            w = app.main.window
            assert w.follow and w.end == 315 and w.cursor_seq == 315
            page = w.size
            await pilot.press("pageup")
            await pilot.pause(0.05)
            assert not w.follow and w.end == 315 - page and w.cursor_seq == w.seqs()[0]
            await pilot.press("home")
            await pilot.pause(0.05)
            assert w.start == 0 and w.cursor_seq == 1
            await pilot.press("up")  # at the very top nothing moves
            assert w.start == 0
            await pilot.press("end")
            await pilot.pause(0.05)
            assert w.follow and w.cursor_seq == 315
            await pilot.press("slash")
            await type_text(pilot, "pulse-29")
            await pilot.press("enter")
            await pilot.pause(0.3)
            assert set(w.sel) == {16 + 29} | {16 + k for k in range(290, 300)}
            assert "find 'pulse-29'" in app.main.query_one("#ledger-pane").border_title
            await pilot.press("slash")
            await pilot.press("escape")  # clears the search
            await pilot.pause(0.3)
            assert len(w.sel) == 315
            await pilot.press("f", "f")  # all -> burns -> plans
            await pilot.pause(0.1)
            assert w.sel == (1, 11, 13, 14)
            await pilot.press("enter")
            await pilot.pause(0.1)
            assert isinstance(app.screen, DetailDialog)
            body = str(app.screen.query_one("#detail", Static).render())
            assert "PLAN" in body and "logged by" in body and "happened at" in body
            await pilot.press("escape", "t")
            await pilot.pause(0.3)
            assert isinstance(app.screen, TrendScreen)
            await pilot.press("escape")
            await pilot.pause(0.05)
            assert isinstance(app.screen, MainScreen)

    run(go())


def test_detail_shows_what_an_entry_drew(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            app.open_detail(2)
            await pilot.pause(0.1)
            body = str(app.screen.query_one("#detail", Static).render())
            assert "drawn from ox" in body and "drawn from fuel" in body and "executes plan" in body
            assert "ops" in body and "hash" in body

    run(go())


def test_every_action_has_a_key_bar_entry_and_a_palette_command(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            titles = [c.title for c in app.get_system_commands(app.screen)]
            bar = " ".join(f"{k} {label}" for k, label, _ in app.main.query_one("#keys").keys)
            for a in actions.ACTIONS:
                assert any(t.startswith(a.title) for t in titles), a.title
                assert f"{a.key_display or a.key} {a.label}" in bar
            await pilot.click("#keys", offset=(1, 0))  # the first key, 'b Burn', by mouse
            await pilot.pause(0.1)
            assert isinstance(app.screen, FormDialog)

    run(go())


def test_footer_at_80x24_has_whole_words_and_palette_has_no_screenshot(ledger_path):
    """Issue 11 point 10: every footer label shown at 80x24 is a whole word, every key is shown on at most
    two lines, and the palette offers no screenshot command (it wrote files to an unchosen folder)."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            bar = app.main.query_one("#keys")
            shown = str(bar.render()).split()
            for bad in ("Wdrw", "Hand", "Rebase", "Corr", "Alrt", "Cmds"):
                assert bad not in shown, bad
            assert bar.size.height <= 2
            for a in actions.ACTIONS:
                assert a.label in shown or a.label in str(bar.render()), a.label
            titles = [c.title.lower() for c in app.get_system_commands(app.screen)]
            assert not any("screenshot" in t for t in titles)

    run(go())


def test_escape_clears_a_find_after_enter_moved_focus_to_the_ledger(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            total = len(app.main.window.sel)
            await pilot.press("slash")
            await type_text(pilot, "rcs")
            await pilot.press("enter")
            await pilot.pause(0.3)
            assert len(app.main.window.sel) < total
            await pilot.press("escape")  # the ledger has the focus now
            await pilot.pause(0.3)
            assert len(app.main.window.sel) == total and app.main.find_text == ""

    run(go())


def test_first_run_creates_the_ledger_from_a_craft_file(tmp_path):
    path = str(tmp_path / "sub" / "new.json")

    async def go():
        app = make_app(path)
        async with app.run_test(size=(100, 30)) as pilot:
            await pilot.pause(0.1)
            assert isinstance(app.screen, SetupScreen)
            app.screen.query_one("#craft-path", Input).value = "/no/such/craft.yaml"
            await pilot.press("enter")
            await pilot.pause(0.1)
            assert "no such file" in str(app.screen.query_one("#setup-msg", Static).render())
            assert not os.path.exists(path)
            app.screen.query_one("#craft-path", Input).value = CRAFT
            await pilot.press("enter")
            await ready(app, pilot)
            assert isinstance(app.screen, MainScreen) and app.snap.craft.name == "Testbed-7"

    run(go())
    assert count(path) == 0


def test_first_run_opens_a_bundled_scenario_as_a_demo_and_never_writes_the_real_ledger(tmp_path, monkeypatch):
    """Issue 11 point 11: a scenario is invented data; it opens from a temporary folder, marked DEMO DATA,
    the real ledger path stays empty, and the temporary folder is gone when the console exits."""
    from ledger.services import scenario  # noqa: PLC0415
    monkeypatch.setattr(scenario, "bundled", lambda: {"testbed": CRAFT})
    path = str(tmp_path / "from-scenario.json")
    seen = {}

    async def go():
        app = make_app(path)
        async with app.run_test(size=(100, 30)) as pilot:
            await pilot.pause(0.1)
            app.screen.query_one("#scenarios").focus()
            await pilot.press("down", "enter")
            await ready(app, pilot)
            assert isinstance(app.screen, MainScreen) and app.snap.craft.name == "Testbed-7"
            assert "DEMO DATA" in str(app.main.query_one("#masthead", Static).render())
            seen["folder"], seen["path"] = app.demo_folder, app.path
            assert os.path.exists(app.path) and os.path.abspath(app.path) != os.path.abspath(path)

    run(go())
    assert not os.path.exists(path)
    assert not os.path.exists(seen["folder"])


def test_a_real_ledger_is_not_marked_as_demo_data(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 30)) as pilot:
            await ready(app, pilot)
            assert "DEMO DATA" not in str(app.main.query_one("#masthead", Static).render())

    run(go())


def test_mouse_picks_a_row_and_opens_it_and_columns_scroll(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            grid = app.main.query_one(LedgerGrid)
            await pilot.click("#ledger", offset=(5, 1))  # first data row under the header
            await pilot.pause(0.05)
            first = grid.rows[0][0]
            assert grid.cursor == 0 and app.main.window.cursor_seq == int(first)
            await pilot.click("#ledger", offset=(5, 1))  # again: open it
            await pilot.pause(0.1)
            assert isinstance(app.screen, DetailDialog) and app.screen.detail["id"] == int(first)
            await pilot.press("escape")
            await pilot.pause(0.05)
            text = str(grid.render())
            assert "›" in text.splitlines()[0]  # more columns to the right at 80 columns
            await pilot.press("right")
            assert grid.first_col == 1 and "‹" in str(grid.render()).splitlines()[0]
            await pilot.press("left")
            assert grid.first_col == 0

    run(go())


def test_no_command_opens_the_console_on_the_chosen_ledger(ledger_path, monkeypatch):
    from ledger.cli import main  # noqa: PLC0415
    from ledger.tui.app import LedgerConsole  # noqa: PLC0415
    opened = []
    monkeypatch.setattr(LedgerConsole, "run", lambda self, *a, **k: opened.append(self.path))
    assert main(["--ledger", ledger_path]) == 0
    monkeypatch.setenv("PROPLEDGER_LEDGER", ledger_path)
    assert main([]) == 0
    assert opened == [os.path.abspath(ledger_path)] * 2


def test_newest_and_selected_rows_are_on_screen_at_80x24(tmp_path):
    """Issue 11 point 10: with a long watch list at 80x24 the ledger pane was held at a minimum height and its
    last rows (the newest, and the selected one) were drawn under the footer."""
    from ledger.services import scenario  # noqa: PLC0415
    found = scenario.bundled()
    if "geo-comsat" not in found:
        pytest.skip("bundled scenario not found")
    path = str(tmp_path / "demo.json")
    scenario.build(found["geo-comsat"], path)

    async def go():
        app = make_app(path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            await pilot.pause(0.5)
            grid = app.main.query_one(LedgerGrid)
            keys = app.main.query_one("#keys")
            shown = grid.region.height - 1  # less the header
            assert app.main.window.size <= shown and grid.page_rows <= shown
            assert grid.region.bottom <= keys.region.y  # nothing of the grid under the footer
            assert grid.cursor < shown and app.main.window.cursor_seq == app.main.window.seqs()[-1]

    run(go())


def test_narrow_ledger_shows_the_year_when_entries_span_years(ledger_path):
    """Issue 11 point 10: at 80x24 the grid dropped the year even when entries spanned several years."""
    led = Ledger(ledger_path)
    led.file.append_many([make_record("use", 2.2e9, 2.2e9, "ops", "a later year", {"engine": "rcs", "duration": 1.0})])

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            await pilot.pause(0.3)
            grid = app.main.query_one(LedgerGrid)
            assert "MM-DD UTC" not in grid.columns
            assert any(str(c[2]).startswith("2039-") for _, c in grid.rows)  # 2.2e9 s is in 2039 (UTC)

    run(go())
