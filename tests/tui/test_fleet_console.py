"""The console's fleet screen at 80x24 (Textual Pilot): every ledger is a row, attention first, Enter opens a
craft, a write to any craft shows in its row within 2 s, and the single-craft console's v key leads back here
(issue 15, point 2). Figures are the ledgers' own status (checked against `status --json` in
tests/services/test_fleet_service.py)."""
from __future__ import annotations

import shutil
import time

import pytest

from ledger.services import fleet, scenario
from ledger.services.ledger import Ledger
from ledger.store import durable
from ledger.tui.app import make_app
from ledger.tui.fleet import FleetApp
from tui_support import ready, run, until


def _tamper(path: str) -> None:
    raw = open(path, "rb").read()
    i = raw.index(b'"dv":') + 5
    with open(path, "wb") as fh:
        fh.write(raw[:i] + (b"7" if raw[i:i + 1] != b"7" else b"8") + raw[i + 1:])
    durable._CACHE.clear()


@pytest.fixture
def folder(tmp_path):
    found = scenario.bundled()
    for name in ("geo-comsat", "lunar-orbiter"):
        scenario.build(found[name], str(tmp_path / f"{name}.json"))
    shutil.copyfile(tmp_path / "lunar-orbiter.json", tmp_path / "copy.json")
    _tamper(str(tmp_path / "copy.json"))
    (tmp_path / "junk.json").write_text("{")
    return str(tmp_path)


def _screen_text(app) -> str:
    return " ".join(str(w.render()) for w in app.query("Static")) + " " + "\n".join(
        " ".join(str(c) for c in app.query_one("DataTable").get_row_at(i))
        for i in range(app.query_one("DataTable").row_count))


def test_every_ledger_is_a_row_attention_first_with_the_caution(folder):
    async def go():
        app = FleetApp(fleet.FolderSource(folder))
        async with app.run_test(size=(80, 24)) as pilot:
            await until(pilot, app.loaded.is_set, what="fleet rows")
            table = app.query_one("DataTable")
            assert table.row_count == 4
            states = [r["state"] for r in app.shown]
            assert set(states[:2]) == {"broken", "unreadable"} and states[2:] == ["ok", "ok"]
            text = _screen_text(app)
            assert "BROKEN" in text and "ERROR" in text and "Vantrel-2" in text and "Pallenor" in text
            assert "Decision support only" in text and "flight-dynamics system of record" in text
            assert table.virtual_size.width <= 80  # every column on an 80-column terminal
            await pilot.press("a")  # attention only: all four are flagged here (undecided plans, broken, unreadable)
            assert app.query_one("DataTable").row_count == 4

    run(go())


def test_enter_opens_the_selected_craft_and_refuses_an_unreadable_one(folder):
    async def go():
        app = FleetApp(fleet.FolderSource(folder))
        async with app.run_test(size=(80, 24)) as pilot:
            await until(pilot, app.loaded.is_set, what="fleet rows")
            target = next(i for i, r in enumerate(app.shown) if r["craft"] == "Vantrel-2")
            unreadable = next(i for i, r in enumerate(app.shown) if r["state"] == "unreadable")
            app.query_one("DataTable").move_cursor(row=unreadable)
            await pilot.press("enter")
            await pilot.pause(0.1)
            assert app.is_running  # not opened: the error is shown instead
            app.query_one("DataTable").move_cursor(row=target)
            await pilot.pause(0.05)
            await pilot.press("enter")
            await pilot.pause(0.1)
        assert app.return_value == ("open", f"{folder}/geo-comsat.json")

    run(go())


def test_a_write_to_any_craft_shows_in_its_row_within_2_s(folder):
    async def go():
        app = FleetApp(fleet.FolderSource(folder))
        async with app.run_test(size=(80, 24)) as pilot:
            await until(pilot, app.loaded.is_set, what="fleet rows")
            path = f"{folder}/lunar-orbiter.json"
            before = app.rows[path]
            Ledger(path).record("mass", {"delta": -1.25}, by="other process")
            t0 = time.monotonic()
            await until(pilot, lambda: app.rows[path]["entries"] == before["entries"] + 1, timeout=2.0,
                        what="the changed row")
            assert time.monotonic() - t0 <= 2.0
            assert app.rows[path]["mass_kg"] == pytest.approx(before["mass_kg"] - 1.25, abs=1e-9)
            row = next(i for i, r in enumerate(app.shown) if r["ledger"] == path)
            app.query_one("DataTable").move_cursor(row=row)
            await pilot.pause(0.1)
            assert f"mass {app.rows[path]['mass_kg']:.1f} kg" in str(app.query_one("#fleet-why").render())

    run(go())


def test_the_craft_console_v_key_opens_the_fleet_when_one_is_configured(folder, monkeypatch):
    monkeypatch.delenv(fleet.ENV, raising=False)
    path = f"{folder}/geo-comsat.json"

    async def go(configured: bool):
        app = make_app(path)
        if configured:
            app.fleet_folder = folder
        async with app.run_test(size=(80, 24)) as pilot:
            await ready(app, pilot)
            await pilot.press("v")
            await pilot.pause(0.2)
            running = app.is_running
        return app.return_value, running

    value, running = run(go(False))
    assert running and value is None  # no fleet: a notice, the console stays
    value, _ = run(go(True))
    assert value == "fleet"


def test_run_fleet_opens_the_chosen_craft_and_comes_back(folder, monkeypatch):
    """Enter on the fleet screen opens that craft's console; leaving it returns to the fleet screen."""
    from ledger.tui import app as craft_app
    from ledger.tui import fleet as fleet_screen

    opened, shown = [], []
    picks = iter([("open", f"{folder}/geo-comsat.json"), None])

    def fleet_run(self):
        shown.append(self.source.folder)
        self._return_value = next(picks)

    def craft_run(self):
        opened.append((self.path, self.fleet_folder))

    monkeypatch.setattr(fleet_screen.FleetApp, "run", fleet_run)
    monkeypatch.setattr(craft_app.LedgerConsole, "run", craft_run)
    assert fleet_screen.run_fleet(fleet.FolderSource(folder)) == 0
    assert opened == [(f"{folder}/geo-comsat.json", folder)] and len(shown) == 2


def test_fleet_command_in_a_terminal_opens_the_screen(folder, monkeypatch):
    from ledger.cli import main

    seen = []
    monkeypatch.setattr("sys.stdout.isatty", lambda: True, raising=False)
    monkeypatch.setattr("sys.stdin.isatty", lambda: True, raising=False)
    monkeypatch.setattr("ledger.tui.fleet.run_fleet", lambda source, **kw: seen.append((source.folder, kw)) or 0)
    assert main(["fleet", "--fleet", folder, "--sort", "margin"]) == 0
    assert seen == [(folder, {"margin": fleet.DEFAULT_MARGIN_M_S, "sort": "margin", "only_attention": False})]
