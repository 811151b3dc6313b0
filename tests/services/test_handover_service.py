"""The handover service: window, burns planned against achieved, late logging, plan checks, recording."""
from __future__ import annotations

import math
import sys
import types

import pytest

from ledger.core.craft import G0
from ledger.errors import InputError, StoreError
from ledger.services import handover
from ledger.services.timefmt import iso

# Rocket equation (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2-4, from memory):
# ve = Isp g0, propellant for dv: m (1 - exp(-dv/ve)), dv from propellant p: ve ln(m / (m - p)),
# mass flow = F / (Isp g0). Craft values: tests/conftest.py.
VE_THR = 290 * G0
VE_LAE = 318 * G0
M0 = 1500.0 + 400.0 + 245.0


def test_first_handover_window_runs_from_the_ledger_creation(two_shifts):
    first = two_shifts.first
    assert first["window"]["start"] == iso(two_shifts.t0)
    assert "created" in first["window"]["basis"]
    assert [b["id"] for b in first["burns"]] == [1]
    assert first["burns"][0]["late"] is False
    assert first["record"]["recorded"] and first["record"]["entry"] == 2


def test_since_last_starts_where_the_previous_handover_ended(two_shifts):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy", since="last")
    assert report["window"]["start"] == iso(two_shifts.t1)
    assert report["window"]["end"] == iso(two_shifts.t2)
    assert report["window"]["previous"]["id"] == 2 and "#2" in report["window"]["basis"]
    # The default (no --since) is the same window.
    assert handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")["window"] == report["window"]
    # The previous handover itself is not listed among the shift's entries.
    assert 2 not in [e["id"] for e in report["other_entries"]]


def test_since_last_across_two_recorded_handovers(two_shifts):
    led, c = two_shifts.ledger, two_shifts.clock
    second = handover.record(led, handover.assemble(led, from_name="Bo", to_name="Cy", since="last"))
    assert second["record"]["entry"] == 9
    c.at(two_shifts.t2 + 2 * 3600.0)
    led.record("burn", {"engine": "thr", "dv": 0.3}, note="third shift")                            # 10
    third = handover.assemble(led, from_name="Cy", to_name="Di", since="last")
    assert third["window"]["start"] == iso(two_shifts.t2)
    assert third["window"]["previous"] == {"id": 9, "from": "Bo", "to": "Cy", "at": iso(two_shifts.t2)}
    assert [b["id"] for b in third["burns"]] == [10]
    assert third["other_entries"] == []
    stored = led.file.records()[8]
    assert stored["kind"] == "handover" and stored["by"] == "Bo"
    assert stored["data"] == {"from": "Bo", "to": "Cy", "window_start": two_shifts.t1, "window_end": two_shifts.t2}


def test_late_logged_burn_appears_marked_late(two_shifts):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    burns = {b["id"]: b for b in report["burns"]}
    # #6 happened an hour before the window opened and was logged three hours into it.
    assert burns[6]["late"] is True
    assert burns[6]["at"] == iso(two_shifts.t1 - 3600.0)
    assert burns[5]["late"] is False
    # #1 was logged in the previous shift; it is listed again only because #7 corrected it in this one.
    assert burns[1]["late"] is False and burns[1]["corrected_by"] == [7]
    assert burns[1]["achieved_dv_m_s"] == 1.70
    assert [b["id"] for b in report["burns"]] == [1, 6, 5]  # event-time order


def test_duration_burn_achieved_dv_comes_from_the_replay(two_shifts):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    b5 = next(b for b in report["burns"] if b["id"] == 5)
    # Hand computation: 150 s x 10 N / (290 s x g0) = 0.52744 kg; mass before = M0 after 1.70 m/s (#1,
    # corrected) and 0.5 m/s (#6); dv = ve ln(m / (m - p)) = 0.69993 m/s; plan #3 asked for 1.8 m/s.
    p = 150.0 * 10.0 / VE_THR
    m = M0 * math.exp(-1.70 / VE_THR) * math.exp(-0.5 / VE_THR)
    dv = VE_THR * math.log(m / (m - p))
    assert p == pytest.approx(0.52744, abs=1e-5)
    assert b5["plan"] == 3 and b5["planned_dv_m_s"] == 1.8
    assert b5["achieved_dv_m_s"] == pytest.approx(dv, rel=1e-9)
    assert b5["achieved_dv_m_s"] == pytest.approx(0.69993, abs=1e-5)
    assert b5["ratio"] == pytest.approx(dv / 1.8, rel=1e-9)
    assert b5["propellant_kg"] == pytest.approx(p, rel=1e-9)
    assert b5["achieved_from"].startswith("from duration 150")
    assert any("burn #5 achieved 38.9% of plan #3" in w for w in report["warnings"])


def test_other_entries_hold_plans_and_the_correction(two_shifts):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    others = {e["id"]: e for e in report["other_entries"]}
    assert sorted(others) == [3, 4, 7, 8]
    assert "executed by #5" in others[3]["summary"]
    assert others[7]["summary"].startswith("corrects #1: dv 1.7 m/s; reason: re-analysed tracking")


def test_each_pending_plan_is_checked_after_the_others_but_not_itself(two_shifts):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    plans = {p["id"]: p for p in report["plans"]}
    assert sorted(plans) == [4, 8]
    assert plans[4]["check"]["commitments"] == 1 and plans[8]["check"]["commitments"] == 1
    # Hand computation for plan #4 (lae 20 m/s) flown after plan #8 (thr 0.4 m/s) only:
    # m_now = M0 after 1.70, 0.5 m/s and the 0.52744 kg of #5; m1 = m_now e^(-0.4/ve_thr);
    # propellant = m1 (1 - e^(-20/ve_lae)). Counting #4 among its own commitments would fly 20 m/s twice.
    m_now = M0 * math.exp(-1.70 / VE_THR) * math.exp(-0.5 / VE_THR) - 150.0 * 10.0 / VE_THR
    m1 = m_now * math.exp(-0.4 / VE_THR)
    assert plans[4]["check"]["propellant_kg"] == pytest.approx(m1 * (1 - math.exp(-20.0 / VE_LAE)), rel=1e-9)
    assert plans[4]["check"]["verdict"] == "feasible"
    assert plans[4]["overdue"] is False


def test_optional_sections_appear_when_the_status_carries_them(two_shifts, optional_sections):
    report = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    assert report["state"]["confidence"] == 0.99
    assert all("usable_low_kg" in t for t in report["state"]["tanks"])
    assert all("gauge" not in t for t in report["state"]["tanks"])  # shown once, in its own section
    assert [g["tank"] for g in report["gauge"]] == ["ox", "fuel"]
    assert report["gauge"][0]["summary"] == "method PVT; gauged kg 210.5; difference kg -0.25"
    assert {p["approval"] for p in report["plans"]} == {"approved"}
    assert {p["check"]["verdict"] for p in report["plans"]} == {"marginal"}
    assert {p["check"]["probability"] for p in report["plans"]} == {0.97}
    fc = next(e for e in report["forecast"]["engines"] if e["engine"] == "thr")
    # 45.6 m/s less at the low bound is exactly one year less at 45.6 m/s/yr.
    assert fc["years_left"] - fc["low"]["years_left"] == pytest.approx(1.0)
    assert report["forecast"]["confidence"] == 0.99


def test_bad_window_and_names_are_refused(two_shifts):
    led = two_shifts.ledger
    with pytest.raises(InputError, match="--since"):
        handover.assemble(led, from_name="Bo", to_name="Cy", since=iso(two_shifts.t2 + 60))
    with pytest.raises(InputError, match="--since"):
        handover.assemble(led, from_name="Bo", to_name="Cy", since="yesterday")
    with pytest.raises(InputError, match="--to"):
        handover.assemble(led, from_name="Bo", to_name="  ")
    report = handover.assemble(led, from_name="Bo", to_name="Cy", since=iso(two_shifts.t1 + 1.5 * 3600))
    assert report["window"]["basis"] == "since the time given"
    assert [b["id"] for b in report["burns"]] == [1, 6, 5]  # all three recorded after 1.5 h into the shift


def test_a_handover_cannot_be_corrected(two_shifts):
    with pytest.raises(InputError, match="handover"):
        two_shifts.ledger.correct(2, {"note": "x"}, reason="try")


def test_backup_is_written_after_the_handover_entry(two_shifts, monkeypatch):
    seen = []

    def make_backup(ledger_path, *, keep=None):
        records = two_shifts.ledger.file.records()
        seen.append((ledger_path, records[-1]["kind"], records[-1]["seq"]))
        return ledger_path + ".bak"

    fake = types.ModuleType("ledger.store.backup")
    fake.make_backup = make_backup
    monkeypatch.setitem(sys.modules, "ledger.store.backup", fake)
    report = handover.record(two_shifts.ledger, handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy"))
    assert seen == [(two_shifts.ledger.path, "handover", 9)]
    assert report["record"]["backup"] == two_shifts.ledger.path + ".bak"
    assert "backup module not available" not in report["warnings"]


def test_failed_backup_is_reported_loudly(two_shifts, monkeypatch):
    def make_backup(ledger_path, *, keep=None):
        raise StoreError("disk full")

    fake = types.ModuleType("ledger.store.backup")
    fake.make_backup = make_backup
    monkeypatch.setitem(sys.modules, "ledger.store.backup", fake)
    report = handover.record(two_shifts.ledger, handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy"))
    assert report["record"]["backup_failed"] is True
    assert any(w.startswith("BACKUP FAILED") and "disk full" in w for w in report["warnings"])
