"""Issue 11 (one truth): what status shows, through real subprocesses.

Invented craft (tests/cli/conftest.py) plus a routine station-keeping rate.
"""
from __future__ import annotations

import json

from tests.cli.conftest import CRAFT, run

ROUTINE = CRAFT + "operations:\n  routine:\n    - {engine: rcs, dv_per_year: \"5 m/s\"}\n"


def _ledger(tmp_path):
    craft = tmp_path / "craft.yaml"
    craft.write_text(ROUTINE)
    path = str(tmp_path / "r.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    run("--ledger", path, "burn", "--engine", "lae", "--dv", "100 m/s", "--at", "2026-01-01T00:00:00Z", check=True)
    return path


def test_status_shows_the_low_bound_run_out_date_beside_the_nominal(tmp_path):
    path = _ledger(tmp_path)
    data = json.loads(run("--ledger", path, "status", "--json", "--samples", "2000", check=True).stdout)
    row = data["forecast"]["engines"][0]
    eng = data["engines"][row["engine"]]
    assert "low" in row, "forecast was built before the low bounds existed"
    # Delta-v is additive for one engine, so the low date is start + low dv free / rate years
    # (Tsiolkovsky; common practice): the low-bound date can only come earlier than the nominal one.
    assert row["low"]["dv_free_m_s"] == eng["dv_free_low_m_s"]
    assert row["low"]["runs_out"] < row["runs_out"]
    text = run("--ledger", path, "status", "--samples", "2000", check=True).stdout
    assert "low bound at 99%" in text and row["low"]["runs_out"][:10] in text


def test_check_with_no_failing_sample_shows_a_bound(tmp_path):
    path = _ledger(tmp_path)
    out = run("--ledger", path, "check", "--engine", "lae", "--dv", "1 m/s", "--samples", "10000", check=True).stdout
    # 10,000 samples, none failing: the 95 % Wilson lower bound is n/(n + z^2) = 0.99962 (Wilson 1927, JASA
    # 22:209), so the text may claim p > 0.9996 and no more.
    assert "p > 0.9996" in out
    assert "1.0000" not in out and "± 0.0000" not in out
