"""The fleet rows agree exactly with each ledger's own `status --json`, and every ledger is a row (issue 15).

The reference for every figure is the single-craft command run as a separate process on the same file;
the one physics check is the rocket equation (Tsiolkovsky; Sutton & Biblarz, Rocket Propulsion Elements,
9th ed., eq. 4-6, from memory; docs/sources.md §2) on a fresh craft.
"""
from __future__ import annotations

import json
import math
import os
import shutil

import orjson
import pytest

from ledger.services import fleet, fleetcache, gauging, scenario
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import parse_time
from ledger.store import durable
from tests.cli.conftest import run
from tests.helpers import biprop

GAUGED = parse_time("2026-12-01T00:00:00Z")
G0 = 9.80665  # standard gravity, m/s^2 (CGPM 1901; docs/sources.md §2)


def _tamper(path: str) -> None:
    raw = open(path, "rb").read()
    i = raw.index(b'"dv":') + 5
    with open(path, "wb") as fh:
        fh.write(raw[:i] + (b"7" if raw[i:i + 1] != b"7" else b"8") + raw[i + 1:])
    durable._CACHE.clear()


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("fleet")
    found = scenario.bundled()
    for name in ("geo-comsat", "leo-imager", "lunar-orbiter"):
        scenario.build(found[name], str(d / f"{name}.json"))
    create(str(d / "fresh.json"), biprop(), by="test")
    # a nitrogen tank reading at 15 MPa, 20 degC (a plausible cold-gas pressure; CoolProp densities)
    gauging.record_gauge(Ledger(str(d / "leo-imager.json")), "gn2", 15e6, 293.15, at=GAUGED, by="test")
    shutil.copyfile(d / "leo-imager.json", d / "tampered.json")
    _tamper(str(d / "tampered.json"))
    (d / "notes.json").write_text("{not a ledger")
    return str(d)


@pytest.fixture(scope="module")
def rows(folder):
    return {os.path.basename(r["ledger"]): r for r in fleet.rows(fleet.FolderSource(folder))}


def _status(path: str) -> dict:
    proc = run("--ledger", path, "status", "--json")
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout)


@pytest.mark.parametrize("name", ["geo-comsat.json", "leo-imager.json", "lunar-orbiter.json", "fresh.json",
                                  "tampered.json"])
def test_row_agrees_exactly_with_status_json(folder, rows, name):
    row, st = rows[name], _status(os.path.join(folder, name))
    assert row["craft"] == st["craft"] and row["entries"] == st["entries"] and row["as_of"] == st["as_of"]
    assert row["mass_kg"] == st["mass_kg"] and row["integrity"] == st["integrity"]
    assert row["confidence"] == st["confidence"]
    for tid, t in st["tanks"].items():
        assert row["tanks"][tid] == {"usable_kg": t["usable_kg"], "usable_low_kg": t["usable_low_kg"]}
    assert row["usable_kg"] == pytest.approx(sum(t["usable_kg"] for t in st["tanks"].values()), abs=0)
    for eid, e in st["engines"].items():
        for k in ("dv_free_m_s", "dv_free_low_m_s", "dv_available_m_s", "limiting_tank", "reserves_met"):
            assert row["engines"][eid][k] == e[k], (eid, k)
    assert [(r["engine"], r["runs_out"], r["runs_out_low"]) for r in row["runout"]] == [
        (r["engine"], r["runs_out"], (r.get("low") or {}).get("runs_out")) for r in st["forecast"]["engines"]]
    assert [(p["id"], p["approval"], p["verdict_now"]) for p in row["pending_plans"]] == [
        (p["id"], p["approval"], p["verdict_now"]["verdict"]) for p in st["pending_plans"]]
    assert row["warnings"] == st["warnings"] and row["warnings_count"] == len(st["warnings"])
    gauges = [t["gauge"]["at"] for t in st["tanks"].values() if t["gauge"]]
    assert row["last_gauge_at"] == (max(gauges) if gauges else None)
    assert row["margin_m_s"] == st["engines"][row["margin_engine"]]["dv_free_low_m_s"]


def test_states_say_what_is_wrong(rows):
    assert rows["geo-comsat.json"]["state"] == "ok"
    assert rows["tampered.json"]["state"] == "broken" and rows["tampered.json"]["integrity"] != "intact"
    bad = rows["notes.json"]
    assert bad["state"] == "unreadable" and "not a readable ledger file" in bad["error"]
    shown = fleet.view(rows.values())
    assert {shown[0]["state"], shown[1]["state"]} == {"broken", "unreadable"}  # attention order: these first


def test_days_since_the_last_gauge_reading(rows):
    row = rows["leo-imager.json"]
    assert row["last_gauge_at"] == "2026-12-01T00:00:00Z" and rows["geo-comsat.json"]["last_gauge_at"] is None
    shown = {r["ledger"]: r for r in fleet.view(rows.values(), now=GAUGED + 2.5 * 86400.0)}
    assert shown[row["ledger"]]["days_since_gauge"] == pytest.approx(2.5)
    assert shown[rows["geo-comsat.json"]["ledger"]]["days_since_gauge"] is None


def test_fresh_craft_dv_follows_the_rocket_equation(rows):
    # biprop(): dry 800 kg, ox 300 (residual 4), fuel 190 (residual 3), main engine 320 s at mixture 1.65.
    ox = 300.0 - 4.0
    burn = ox + ox / 1.65  # ox runs out first: 296 kg of ox and 179.4 kg of fuel (fuel needed < 187 kg)
    m0 = 800.0 + 300.0 + 190.0
    assert rows["fresh.json"]["engines"]["main"]["dv_available_m_s"] == pytest.approx(
        320.0 * G0 * math.log(m0 / (m0 - burn)), rel=1e-9)


def test_attention_filter_and_sorting(rows):
    shown = fleet.view(rows.values(), margin=0.0, only_attention=True)
    names = {os.path.basename(r["ledger"]) for r in shown}
    assert "fresh.json" not in names  # no plan, no warning, margin not under 0
    assert {"notes.json", "tampered.json", "geo-comsat.json"} <= names  # geo-comsat has 2 undecided plans
    flagged = fleet.view(rows.values(), margin=1e6, only_attention=True)
    assert any("margin under" in a for a in next(r for r in flagged if r["craft"] == "Test biprop")["attention"])
    by_margin = [r["margin_m_s"] for r in fleet.view(rows.values(), sort="margin") if r["margin_m_s"] is not None]
    assert by_margin == sorted(by_margin)
    with pytest.raises(Exception, match="--sort"):
        fleet.view(rows.values(), sort="colour")


def test_cache_answers_unchanged_ledgers_and_never_a_changed_one(tmp_path, monkeypatch):
    found = scenario.bundled()
    for name in ("geo-comsat", "lunar-orbiter"):
        scenario.build(found[name], str(tmp_path / f"{name}.json"))
    src = fleet.FolderSource(str(tmp_path))
    first = fleet.rows(src)
    computed = []
    real = fleet.compute
    monkeypatch.setattr(fleet, "compute", lambda paths, *a, **k: computed.extend(paths) or real(paths, *a, **k))
    assert fleet.rows(src) == first and computed == []
    Ledger(str(tmp_path / "lunar-orbiter.json")).record("mass", {"delta": -0.5}, by="test")
    again = fleet.rows(src)
    assert computed == [str(tmp_path / "lunar-orbiter.json")]
    assert again[1]["entries"] == first[1]["entries"] + 1 and again[1] == fleet.row_for_path(computed[0])
    assert again[1]["mass_kg"] == pytest.approx(first[1]["mass_kg"] - 0.5, abs=1e-9)


def test_forged_fleet_cache_is_ignored(tmp_path):
    scenario.build(scenario.bundled()["leo-imager"], str(tmp_path / "leo.json"))
    src = fleet.FolderSource(str(tmp_path))
    honest = fleet.rows(src)
    raw = open(src.cache_base(), "rb").read()
    tag, body = raw.split(b"\n", 1)
    doc = orjson.loads(body)
    for v in doc["rows"].values():
        v["row"]["margin_m_s"] = 9999.0
    with open(src.cache_base(), "wb") as fh:
        fh.write(tag + b"\n" + orjson.dumps(doc))
    assert fleetcache.load(src.cache_base()) == {}
    assert fleet.rows(src) == honest


def test_parallel_rows_equal_serial_rows(folder):
    paths = fleet.FolderSource(folder).members()
    assert fleet.compute(paths, workers=2) == fleet.compute(paths, workers=1)


def test_no_folder_is_one_clear_error(tmp_path, monkeypatch):
    monkeypatch.delenv(fleet.ENV, raising=False)
    with pytest.raises(Exception, match="--fleet"):
        fleet.resolve_folder(None)
    with pytest.raises(Exception, match="not a folder"):
        fleet.FolderSource(str(tmp_path / "nowhere"))


def test_each_cache_key_is_taken_before_its_row(tmp_path, monkeypatch):
    # The keys of the rows to compute are read as the rows are handed out (so the workers can start on the
    # first rows): each must still be read before its own row, so a cached row can be older than its key
    # says, never newer (a ledger changed in between is computed again on the next look).
    found = scenario.bundled()
    for name in ("geo-comsat", "leo-imager", "lunar-orbiter"):
        scenario.build(found[name], str(tmp_path / f"{name}.json"))
    src = fleet.FolderSource(str(tmp_path))
    events = []
    real_key, real_row = src.fingerprint, fleet.row_for_path
    monkeypatch.setattr(src, "fingerprint", lambda m: events.append(("key", m)) or real_key(m))
    monkeypatch.setattr(fleet, "row_for_path", lambda m: events.append(("row", m)) or real_row(m))
    rows = fleet.rows(src, workers=1)
    members = src.members()
    assert sorted(m for kind, m in events if kind == "row") == sorted(members)
    for m in members:
        assert events.index(("key", m)) < events.index(("row", m))
    stored = fleetcache.load(src.cache_base())
    assert {m: stored[m]["row"] for m in members} == dict(zip(members, rows))
    assert all(stored[m]["key"] == real_key(m) for m in members)
