"""`propledger demo --fleet`: the demo fleet of invented craft (scenarios/ and scenarios/fleet/), one with a
warning, several with an undecided plan and one with nothing flagged; each row agrees with that ledger's own
`status --json` and every chain verifies (issue 15, point 5)."""
from __future__ import annotations

import json
import os

from ledger.services import scenario
from tests.cli.conftest import run


def test_demo_fleet_shows_a_warning_an_undecided_plan_and_a_quiet_craft(tmp_path):
    folder = str(tmp_path / "demo")
    proc = run("demo", "--fleet", "--print", "--folder", folder, env_extra={"COLUMNS": "80"})
    assert proc.returncode == 0, proc.stderr
    assert "Decision support only" in proc.stdout
    doc = json.loads(run("fleet", "--fleet", folder, "--json", check=True).stdout)
    rows = {r["craft"]: r for r in doc["craft"]}
    assert set(rows) >= {"Vantrel-2", "Quillfen-1", "Pallenor", "Corvane-1", "Orrin-3"}
    assert len(rows) == len(scenario.demo_fleet())
    for name in rows:
        assert name in proc.stdout
    warned = rows["Corvane-1"]
    assert warned["warnings_count"] >= 1 and any(p["approval"] == "none" for p in warned["pending_plans"])
    assert rows["Orrin-3"]["attention"] == []  # nothing pending, no warning, margin well above 5 m/s
    assert doc["craft"][-1]["craft"] == "Orrin-3"  # the quiet craft sorts last
    st = json.loads(run("--ledger", warned["ledger"], "status", "--json", check=True).stdout)
    assert warned["warnings"] == st["warnings"]
    assert "MARGINAL" in st["warnings"][0] or "INFEASIBLE" in st["warnings"][0]
    for row in doc["craft"]:
        assert json.loads(run("--ledger", row["ledger"], "verify", "--json", check=True).stdout)["intact"]


def test_demo_fleet_refuses_a_folder_that_holds_ledgers(tmp_path):
    folder = str(tmp_path / "demo")
    run("demo", "--fleet", "--print", "--folder", folder, check=True)
    before = sorted(os.listdir(folder))
    proc = run("demo", "--fleet", "--print", "--folder", folder)
    assert proc.returncode == 2 and "already holds ledgers" in proc.stderr and sorted(os.listdir(folder)) == before
