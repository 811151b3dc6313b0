"""Lifetime forecast service against a hand computation, and its place in status."""
from __future__ import annotations

import math
from datetime import datetime, timedelta, timezone

import pytest

from ledger.core.craft import G0
from ledger.services import craftfile, views
from ledger.services.forecast import forecast
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import iso, parse_time

# A monopropellant craft: hydrazine thrusters at Isp 220 s (NASA Ames SST-SoA Table 4-1: 200-235 s),
# 2% residual (ESA SRE-PA/2011.097 via a summary; docs/sources.md §3), the 9.617 m/s GEO re-orbit reserve and
# 45.6 m/s/yr north-south station keeping (IADC guideline and Soop; docs/sources.md §7).
MONO = """
craft: {name: MONO, dry_mass: 1000 kg}
tanks: [{id: t, fluid: N2H4, load: 200 kg, residual: 4 kg}]
engines: [{id: thr, isp: 220 s, thrust: 1 N, feeds: {t: 1}}]
reserves: [{id: reorbit, engine: thr, dv: 9.617 m/s}]
operations: {routine: [{engine: thr, dv_per_year: 45.6 m/s}]}
"""
BURN_AT = "2026-01-01T00:00:00Z"


@pytest.fixture
def mono(tmp_path, fake_clock):
    (tmp_path / "mono.yaml").write_text(MONO, encoding="utf-8")
    path = str(tmp_path / "mono.json")
    create(path, craftfile.load_craft(str(tmp_path / "mono.yaml")))
    return Ledger(path)


def test_run_out_date_by_hand(mono, fake_clock):
    fake_clock.at(parse_time("2026-06-01T00:00:00Z"))
    mono.record("burn", {"engine": "thr", "dv": 10.0}, at=parse_time(BURN_AT))
    fc = forecast(mono.snapshot())
    (row,) = fc["engines"]
    # Hand computation:
    #   ve = 220 x 9.80665 = 2157.463 m/s; m0 = 1000 + 200 = 1200 kg; usable = 200 - 4 = 196 kg
    #   dv available = 2157.463 x ln(1200 / 1004) = 2157.463 x 0.178330 = 384.739 m/s
    #   one engine, one tank: dv adds, so dv free = 384.739 - 9.617 (reserve) - 10 (the burn) = 365.122 m/s
    #   years = 365.122 / 45.6 = 8.0071; 8.0071 x 365.25 d = 2924.6 d after the burn -> 2034-01-03 (about 14:00)
    ve = 220 * G0
    free = ve * math.log(1200 / 1004) - 9.617 - 10.0
    assert row["dv_free_m_s"] == pytest.approx(365.122, abs=1e-3)
    assert row["dv_free_m_s"] == pytest.approx(free, rel=1e-9)
    assert row["years_left"] == pytest.approx(8.0071, abs=1e-4)
    assert row["runs_out"].startswith("2034-01-03T13:58")
    expected = datetime(2026, 1, 1, tzinfo=timezone.utc) + timedelta(days=free / 45.6 * 365.25)
    assert parse_time(row["runs_out"]) == pytest.approx(expected.timestamp(), abs=1.0)
    # Counted from the last recorded event, not from the clock (2026-06-01).
    assert fc["reference"] == BURN_AT and fc["reference_basis"] == "last recorded event"
    assert row["figures"][0] == {"at": BURN_AT, "dv_free_m_s": pytest.approx(free)}
    for fig in row["figures"]:  # on the straight line free - 45.6 m/s per Julian year (times kept to 1 s)
        years = (parse_time(fig["at"]) - parse_time(BURN_AT)) / (365.25 * 86400)
        assert fig["dv_free_m_s"] == pytest.approx(max(0.0, free - 45.6 * years), abs=1e-5)
    assert row["figures"][-1]["dv_free_m_s"] == 0.0 and row["figures"][-1]["at"] == row["runs_out"]
    assert "low" not in row


def test_without_events_the_forecast_counts_from_now(mono, fake_clock):
    fc = forecast(mono.snapshot())
    assert fc["reference"] == iso(fake_clock())
    assert fc["reference_basis"].startswith("now")


def test_low_bound_from_the_status(mono):
    snap = mono.snapshot()
    status = views.status(snap)
    status["confidence"] = 0.99
    status["engines"]["thr"]["dv_free_low_m_s"] = 300.0
    fc = forecast(snap, status)
    # 300 m/s at 45.6 m/s/yr = 6.5789 yr.
    assert fc["engines"][0]["low"]["years_left"] == pytest.approx(300.0 / 45.6)
    assert fc["confidence"] == 0.99


def test_status_carries_the_forecast(mono):
    data = views.status(mono.snapshot())
    assert data["forecast"]["engines"][0]["engine"] == "thr"
    assert data["forecast"]["engines"][0]["dv_per_year_m_s"] == 45.6


def test_series_history_ends_at_the_status_dv_free(geo_ledger, fake_clock):
    for k in range(30):
        fake_clock.at(fake_clock() + 14 * 86400.0)
        geo_ledger.record("burn", {"engine": "thr", "dv": 1.75})
    snap = geo_ledger.snapshot()
    fc = forecast(snap, series=True, history_points=10)
    s = fc["series"]["thr"]
    assert len(s["history_t"]) <= 11
    assert s["history_dv"][-1] == pytest.approx(snap.engines[1].dv_free_m_s, rel=1e-12)
    # Each 1.75 m/s burn of the routine engine takes 1.75 m/s off its own dv free (dv is additive).
    assert s["history_dv"][0] - s["history_dv"][-1] == pytest.approx(30 * 1.75, rel=1e-9)
    assert s["projection_dv"][0] == s["history_dv"][-1] and s["projection_dv"][-1] == pytest.approx(0.0, abs=1e-9)


def test_no_routine_operations(tmp_path, fake_clock):
    (tmp_path / "c.yaml").write_text(MONO.replace("operations: {routine: [{engine: thr, dv_per_year: 45.6 m/s}]}", ""))
    create(str(tmp_path / "c.json"), craftfile.load_craft(str(tmp_path / "c.yaml")))
    fc = forecast(Ledger(str(tmp_path / "c.json")).snapshot(), series=True)
    assert fc["engines"] == [] and fc["series"] == {}
    assert "no routine operations" in fc["notes"][0]
