"""A PostgreSQL database of many craft as a fleet (issue 15, point 1 "or a PostgreSQL database of many craft"),
on a real server: every craft is a row equal to that craft's own ``status --json``, a craft whose chain a
superuser edited is a row that says so, the per-craft cache never answers for a changed head, the fleet
handover records in every craft, and the console's fleet screen shows another writer's entry within 2 s
(LISTEN/NOTIFY) and opens a craft on its own address.

The reference for the figures is the single-craft command run as a separate process on the same craft; the
one physics check is the rocket equation (Tsiolkovsky; Sutton & Biblarz, Rocket Propulsion Elements, 9th ed.,
eq. 4-6, from memory; docs/sources.md §2) on a fresh craft. Delivery of NOTIFY at commit is PostgreSQL's
documented behaviour (PostgreSQL 15 manual, SQL command NOTIFY); the edit count is its cumulative statistics
view ``pg_stat_user_tables`` (PostgreSQL 15 manual, section 28.2.18).
"""
from __future__ import annotations

import asyncio
import itertools
import json
import math
import os
import time

import jsonschema
import pytest

from ledger.cli import main
from ledger.services import fleet, fleetcache, scenario
from ledger.services.fleetsource import DatabaseSource, open_source
from ledger.services.ledger import Ledger, create
from ledger.store import pgfleet, pgschema
from ledger.store.pgstore import PgStore
from tests.cli.conftest import run as run_proc
from tests.cli.schemas import FLEET
from tests.helpers import biprop

from cluster import OWNER  # noqa: E402 - tests/pg is on sys.path (conftest)

G0 = 9.80665  # standard gravity, m/s^2 (CGPM 1901; docs/sources.md §2)
SCENARIOS = ("geo-comsat", "leo-imager", "lunar-orbiter")
_dbs = itertools.count(1)


def mass_record(note: str, by: str = "bob") -> dict:
    return {"kind": "mass", "at": "2026-12-03T00:00:00.000000Z", "recorded": "2026-12-03T00:00:00.000000Z",
            "by": by, "note": note, "data": {"delta": -0.5}}


def wait_for(cond, timeout: float, step: float = 0.05):
    t0 = time.perf_counter()
    while time.perf_counter() - t0 < timeout:
        if cond():
            return time.perf_counter() - t0
        time.sleep(step)
    return None


class FleetDb:
    """A database of its own on the session's cluster: the scenario craft copied in, and a fresh one."""

    def __init__(self, pg, tmp):
        self.pg, self.name = pg, f"fleet{next(_dbs)}"
        pg.psql(f"CREATE DATABASE {self.name} OWNER {OWNER}", db="postgres")
        assert main(["--ledger", pg.url(db=self.name, user=OWNER, craft="zz-owner"), "init", "--craft",
                     scenario.bundled()["leo-smallsat"]]) == 0
        # one entry, so that its run-out date counts from that entry, not from the clock of each reader
        assert main(["--ledger", pg.url(db=self.name, user=OWNER, craft="zz-owner"), "mass", "--delta", "-1 kg",
                     "--at", "2026-12-01T00:00:00Z"]) == 0
        pg.psql(pgschema.GRANTS.format(role="pl_ops"), db=self.name, user=OWNER)
        found = scenario.bundled()
        for name in SCENARIOS:
            path = str(tmp / f"{name}.json")
            scenario.build(found[name], path)
            assert main(["copy", path, self.craft(name)]) == 0
        create(self.craft("fresh"), biprop(), by="test")
        self.url = f"postgresql://alice@/{self.name}?host={pg.sock}"

    def craft(self, name: str, user: str = "alice") -> str:
        return self.pg.url(db=self.name, user=user, craft=name)

    def crafts(self) -> list[str]:
        return ["fresh", *SCENARIOS, "zz-owner"]


@pytest.fixture(scope="module")
def cache_home(tmp_path_factory):
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("XDG_CACHE_HOME", str(tmp_path_factory.mktemp("cache")))
        yield


@pytest.fixture(scope="module")
def db(pg, cache_home, tmp_path_factory) -> FleetDb:
    return FleetDb(pg, tmp_path_factory.mktemp("fleetdb"))


@pytest.fixture(scope="module")
def fleet_json(db) -> dict:
    proc = run_proc("fleet", "--fleet", db.url, "--json")  # a separate process, its rows in worker processes
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


def _status(url: str) -> dict:
    proc = run_proc("--ledger", url, "status", "--json")
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


@pytest.mark.parametrize("name", ["fresh", *SCENARIOS, "zz-owner"])
def test_row_agrees_exactly_with_the_crafts_status_json(db, fleet_json, name):
    rows = {r["ledger"]: r for r in fleet_json["craft"]}
    st = _status(db.craft(name))
    row = rows[st["ledger"]]  # listed under the address status shows for the craft
    assert row["state"] == "ok" and row["craft"] == st["craft"] and row["entries"] == st["entries"]
    assert row["as_of"] == st["as_of"] and row["mass_kg"] == st["mass_kg"] and row["integrity"] == st["integrity"]
    assert row["confidence"] == st["confidence"]
    for tid, t in st["tanks"].items():
        assert row["tanks"][tid] == {"usable_kg": t["usable_kg"], "usable_low_kg": t["usable_low_kg"]}
    for eid, e in st["engines"].items():
        for k in ("dv_free_m_s", "dv_free_low_m_s", "dv_available_m_s", "limiting_tank", "reserves_met"):
            assert row["engines"][eid][k] == e[k], (eid, k)
    assert [(r["engine"], r["runs_out"], r["runs_out_low"]) for r in row["runout"]] == [
        (r["engine"], r["runs_out"], (r.get("low") or {}).get("runs_out")) for r in st["forecast"]["engines"]]
    assert [(p["id"], p["approval"], p["verdict_now"]) for p in row["pending_plans"]] == [
        (p["id"], p["approval"], p["verdict_now"]["verdict"]) for p in st["pending_plans"]]
    assert row["warnings"] == st["warnings"] and row["warnings_count"] == len(st["warnings"])
    assert row["head"] == {"seq": PgStore(db.craft(name)).head()[0], "hash": PgStore(db.craft(name)).head()[1]}


def test_every_craft_of_the_database_is_a_row_and_the_json_keeps_its_schema(db, fleet_json):
    jsonschema.validate(fleet_json, FLEET)
    assert fleet_json["source"] == "database" and fleet_json["fleet"] == db.url
    assert sorted(r["ledger"].rsplit("craft=", 1)[1] for r in fleet_json["craft"]) == sorted(db.crafts())
    assert "Decision support only" in fleet_json["caution"]
    assert all("password" not in r["ledger"] for r in fleet_json["craft"])


def test_fresh_craft_dv_follows_the_rocket_equation(fleet_json):
    # biprop(): dry 800 kg, ox 300 (residual 4), fuel 190 (residual 3), main engine 320 s at mixture 1.65.
    row = next(r for r in fleet_json["craft"] if r["ledger"].endswith("craft=fresh"))
    ox = 300.0 - 4.0
    burn = ox + ox / 1.65
    m0 = 800.0 + 300.0 + 190.0
    assert row["engines"]["main"]["dv_available_m_s"] == pytest.approx(320.0 * G0 * math.log(m0 / (m0 - burn)),
                                                                       rel=1e-9)


def test_sort_attention_and_the_table(db, fleet_json):
    proc = run_proc("fleet", "--fleet", db.url, "--json", "--sort", "margin", "--attention", "--margin", "0 m/s")
    assert proc.returncode == 0, proc.stderr
    shown = json.loads(proc.stdout)
    assert shown["attention_only"] and all(r["attention"] for r in shown["craft"])
    names = {r["ledger"].rsplit("craft=", 1)[1] for r in shown["craft"]}
    assert "geo-comsat" in names and "fresh" not in names  # geo-comsat has undecided plans; fresh nothing
    proc = run_proc("fleet", "--fleet", db.url, "--print", env_extra={"COLUMNS": "140"})
    assert proc.returncode == 0 and "Vantrel-2" in proc.stdout and "Decision support only" in proc.stdout
    proc = run_proc("fleet", "--json", env_extra={fleet.ENV: db.url})  # PROPLEDGER_FLEET names the database
    assert proc.returncode == 0 and len(json.loads(proc.stdout)["craft"]) == len(db.crafts())


def test_one_line_errors_for_a_craft_address_and_a_database_without_tables(pg, db):
    proc = run_proc("fleet", "--fleet", db.craft("fresh"), "--json")
    assert proc.returncode == 2 and proc.stderr.count("\n") == 1 and "leave out craft=" in proc.stderr
    pg.psql("CREATE DATABASE fleetempty OWNER pl_owner", db="postgres")
    proc = run_proc("fleet", "--fleet", f"postgresql://alice@/fleetempty?host={pg.sock}", "--json")
    assert proc.returncode == 2 and proc.stderr.count("\n") == 1 and "no propledger tables" in proc.stderr
    proc = run_proc("fleet", "--fleet", "postgresql://alice:s3cret@/ledgers?host=/nonexistent", "--json")
    assert proc.returncode == 2 and proc.stderr.count("\n") == 1 and "cannot reach the database" in proc.stderr
    assert "s3cret" not in proc.stderr


def test_heads_come_in_one_query_and_match_each_store(db):
    conninfo, shown = pgfleet.parse_fleet_address(db.url)
    heads = pgfleet.heads(conninfo, shown)
    assert sorted(heads) == sorted(db.crafts())
    for name, head in heads.items():
        assert (head.seq, head.hash) == PgStore(db.craft(name)).head()


def test_cache_answers_only_for_an_unchanged_head(db, monkeypatch):
    source = DatabaseSource(db.url)
    first = {r["ledger"]: r for r in fleet.rows(source, workers=1)}
    computed = []
    real = fleet.compute

    def spy(todo, *a, **k):
        computed.extend(todo)
        return real(todo, *a, **k)

    monkeypatch.setattr(fleet, "compute", spy)
    assert {r["ledger"]: r for r in fleet.rows(source, workers=1)} == first and computed == []  # all cached
    target = next(m for m in first if m.endswith("craft=lunar-orbiter"))
    stored = fleetcache.load(source.cache_base())
    assert stored[target]["key"] == source.fingerprint(target)
    PgStore(db.craft("lunar-orbiter", user="bob")).append(mass_record("new head"))
    again = {r["ledger"]: r for r in fleet.rows(source, workers=1)}
    assert computed == [target]  # only the changed craft was read again
    assert again[target]["entries"] == first[target]["entries"] + 1
    assert again[target]["mass_kg"] == pytest.approx(first[target]["mass_kg"] - 0.5, abs=1e-9)
    assert again[target]["head"]["seq"] == first[target]["head"]["seq"] + 1
    assert fleetcache.load(source.cache_base())[target]["key"] != stored[target]["key"]
    # the cache is not in the database and not beside anything of it: the user's cache folder, by address
    assert source.cache_base().startswith(os.environ["XDG_CACHE_HOME"])


def test_handover_over_a_database_fleet(db, tmp_path):
    before = {n: PgStore(db.craft(n)).head()[0] for n in db.crafts()}
    out = tmp_path / "fleet.md"
    proc = run_proc("handover", "--fleet", db.url, "--from", "R. Okafor", "--to", "J. Ito", "--format", "md",
                    "--out", str(out))
    assert proc.returncode == 0, proc.stderr
    text = out.read_text()
    assert "Vantrel-2" in text and "Decision support only" in text
    assert f"recorded a handover entry in {len(db.crafts())} of {len(db.crafts())} ledgers" in proc.stderr
    for name in db.crafts():
        recs = PgStore(db.craft(name)).records()
        assert len(recs) == before[name] + 1 and recs[-1]["kind"] == "handover"
        assert recs[-1]["by"] == "alice" and recs[-1]["on_behalf_of"] == "R. Okafor"  # the session user records
    proc = run_proc("handover", "--fleet", db.url, "--from", "J. Ito", "--to", "R. Okafor", "--format", "json",
                    "--no-record")
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout)
    assert len(report["craft"]) == len(db.crafts()) and all(p["report"] for p in report["craft"])
    assert all(PgStore(db.craft(n)).head()[0] == before[n] + 1 for n in db.crafts())  # --no-record wrote nothing


def test_console_fleet_screen_live_within_two_seconds_and_enter_opens_the_craft(db):
    from ledger.tui.fleet import FleetApp  # noqa: PLC0415

    source = DatabaseSource(db.url)

    async def go():
        app = FleetApp(source)
        async with app.run_test(size=(120, 30)) as pilot:
            t0 = time.perf_counter()
            while not app.loaded.is_set() and time.perf_counter() - t0 < 120:
                await pilot.pause(0.1)
            assert app.loaded.is_set() and len(app.rows) == len(db.crafts())
            member = next(m for m in app.rows if m.endswith("craft=geo-comsat"))
            count = app.rows[member]["entries"]
            writer = PgStore(db.craft("geo-comsat", user="bob"))
            writer.head()  # connected before the clock starts
            writer.append(mass_record("from another workstation"))
            t0 = time.perf_counter()  # committed: from here the row has 2 s
            while app.rows[member]["entries"] == count and time.perf_counter() - t0 < 6.0:
                await pilot.pause(0.05)
            took = time.perf_counter() - t0
            # 2 s is the bound (issue 15); 0.5 s more for the test's own pauses on a loaded 2-core machine
            assert app.rows[member]["entries"] == count + 1 and took < 2.5, took
            row = next(i for i, r in enumerate(app.shown) if r["ledger"] == member)
            app.query_one("DataTable").move_cursor(row=row)
            await pilot.pause(0.05)
            await pilot.press("enter")
            await pilot.pause(0.1)
        assert app.return_value == ("open", db.craft("geo-comsat"))
    try:
        asyncio.run(go())
    finally:
        source.close()


def test_fleet_screen_says_disconnected_while_the_server_is_away_and_catches_up(pg, db):
    from ledger.tui.fleet import FleetApp  # noqa: PLC0415

    source = DatabaseSource(db.url)

    async def go():
        app = FleetApp(source)
        async with app.run_test(size=(120, 30)) as pilot:
            t0 = time.perf_counter()
            while not app.loaded.is_set() and time.perf_counter() - t0 < 120:
                await pilot.pause(0.1)
            assert app.loaded.is_set() and app.store_note is None
            member = next(m for m in app.rows if m.endswith("craft=fresh"))
            count = app.rows[member]["entries"]
            pg.stop("fast")
            try:
                t0 = time.perf_counter()
                while app.store_note is None and time.perf_counter() - t0 < 15:
                    await pilot.pause(0.1)
                assert app.store_note is not None and app.store_note.startswith("disconnected from the database")
                assert "disconnected" in str(app.query_one("#fleet-head").render())
            finally:
                pg.start()
            # written as the server comes back: a notification, or the re-listing on reconnection, brings it
            PgStore(db.craft("fresh", user="bob")).append(mass_record("while away"))
            t0 = time.perf_counter()
            while (app.store_note is not None or app.rows[member]["entries"] == count) and time.perf_counter() - t0 < 20:
                await pilot.pause(0.1)
            assert app.store_note is None and app.rows[member]["entries"] == count + 1
    try:
        asyncio.run(go())
    finally:
        source.close()
        pg.start()  # no-op when already running


def test_superuser_edit_is_a_broken_row_even_with_a_cache(pg, db):
    source = open_source(db.url)
    before = {r["ledger"]: r for r in fleet.rows(source, workers=1)}
    target = next(m for m in before if m.endswith("craft=leo-imager"))
    assert before[target]["state"] == "ok"
    conninfo, shown = pgfleet.parse_fleet_address(db.url)
    edits = pgfleet.heads(conninfo, shown)["leo-imager"].edits
    pg.psql("SET session_replication_role = replica; "  # a superuser switches the triggers off
            "UPDATE propledger.entries SET body = jsonb_set(body::jsonb, '{note}', '\"edited\"')::json "
            "WHERE craft = 'leo-imager' AND seq = 1", db=db.name)
    head = pgfleet.heads(conninfo, shown)["leo-imager"]
    assert (head.seq, head.hash) == (before[target]["head"]["seq"], before[target]["head"]["hash"])  # head kept
    # the server's statistics count the edit once the editing session has ended (moments later)
    assert wait_for(lambda: pgfleet.heads(conninfo, shown)["leo-imager"].edits > edits, 10.0) is not None
    after = {r["ledger"]: r for r in fleet.rows(source, workers=2)}  # worker processes, own connections
    row = after[target]
    assert row["state"] == "broken" and "chain broken at entry 1" in row["integrity"]
    assert "integrity broken" in fleet.view([row])[0]["attention"]
    assert all(r["state"] == "ok" for m, r in after.items() if m != target)
    proc = run_proc("fleet", "--fleet", db.url, "--print", env_extra={"COLUMNS": "140"})
    assert proc.returncode == 0 and "BROKEN" in proc.stdout


def test_a_folder_fleet_never_imports_the_driver_and_a_database_fleet_table_no_console(tmp_path, db):
    from tests.test_boundaries import loaded_after  # noqa: PLC0415

    create(str(tmp_path / "one.json"), biprop(), by="test")
    mods = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            assert main(["fleet", "--fleet", {str(tmp_path)!r}, "--json"]) == 0
    """)
    assert "psycopg" not in mods and "ledger.store.pgfleet" not in mods
    mods = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            assert main(["fleet", "--fleet", {db.url!r}, "--json"]) == 0
    """)
    assert "psycopg" in mods and "textual" not in mods


def test_a_craft_created_while_the_fleet_screen_is_open_shows_as_a_row(pg):
    """A new craft sends no notification; the listener's listing every RELIST_S brings it in."""
    from ledger.tui.fleet import FleetApp  # noqa: PLC0415

    name = f"fleet{next(_dbs)}"
    pg.psql(f"CREATE DATABASE {name} OWNER {OWNER}", db="postgres")
    assert main(["--ledger", pg.url(db=name, user=OWNER, craft="first"), "init", "--craft",
                 scenario.bundled()["leo-smallsat"]]) == 0
    pg.psql(pgschema.GRANTS.format(role="pl_ops"), db=name, user=OWNER)
    source = DatabaseSource(f"postgresql://alice@/{name}?host={pg.sock}")

    async def go():
        app = FleetApp(source)
        async with app.run_test(size=(120, 30)) as pilot:
            t0 = time.perf_counter()
            while not app.loaded.is_set() and time.perf_counter() - t0 < 60:
                await pilot.pause(0.1)
            assert len(app.rows) == 1
            create(pg.url(db=name, craft="second"), biprop(), by="test")
            t0 = time.perf_counter()
            while len(app.rows) == 1 and time.perf_counter() - t0 < 10.0:
                await pilot.pause(0.1)
            took = time.perf_counter() - t0
            # the listing period, then a poll and the row's read; 1.5 s more for a loaded 2-core machine
            assert len(app.rows) == 2 and took < pgfleet.RELIST_S + 2.5, took
            assert any(m.endswith("craft=second") for m in app.rows)
    try:
        asyncio.run(go())
    finally:
        source.close()
