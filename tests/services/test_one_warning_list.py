"""Issue 11 point 2: a pending plan whose check fails at the ledger's confidence is a warning in `status`
(text and JSON) and in the handover alike, from the one service (ledger.services.warnings).

The plan is infeasible by construction: 5,000 m/s on the apogee engine of the test craft is beyond any dv
the craft can deliver (the rocket equation, common practice), so its check must say so everywhere."""
from __future__ import annotations

import json
import os
import subprocess
import sys

from ledger.services import craftfile, handover, uncertainty
from ledger.services.ledger import Ledger, create
from ledger.services.timefmt import parse_time

CRAFT = os.path.join(os.path.dirname(os.path.dirname(__file__)), "tui", "craft.yaml")


def _ledger(path: str) -> Ledger:
    create(path, craftfile.load_craft(CRAFT), by="tester")
    led = Ledger(path)
    t = parse_time("2026-01-10T00:00Z")
    led.record("burn", {"engine": "lae", "dv": 100.0}, at=t, by="ops")
    led.record("plan", {"engine": "lae", "dv": 5.0}, at=t + 86400, by="fd", note="trim, fine")
    led.record("plan", {"engine": "lae", "dv": 5000.0}, at=t + 2 * 86400, by="fd", note="far too much")
    return led


def _cli(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "ledger", *args], capture_output=True, text=True, timeout=300)


def test_failing_plan_is_one_warning_in_status_json_text_and_handover(tmp_path):
    path = str(tmp_path / "w.ledger.json")
    _ledger(path)
    data = json.loads(_cli("--ledger", path, "status", "--json", "--samples", "2000").stdout)
    rows = {p["id"]: p for p in data["pending_plans"]}
    assert rows[3]["verdict_now"]["verdict"] == "infeasible"
    flagged = [w for w in data["warnings"] if w.startswith("plan #3 ")]
    assert len(flagged) == 1 and "INFEASIBLE" in flagged[0]
    # every pending plan is a warning exactly when its own verdict fails (plan #2 is checked with plan #3
    # flown first, so it fails too: the verdict and the warning agree either way)
    for pid, row in rows.items():
        warned = [w for w in data["warnings"] if w.startswith(f"plan #{pid} ")]
        assert len(warned) == (row["verdict_now"]["verdict"] in ("infeasible", "marginal"))

    text = _cli("--ledger", path, "status", "--samples", "2000").stdout
    assert flagged[0].split(":")[0] in " ".join(text.split())

    report = handover.assemble(Ledger(path), from_name="A. Reyes", to_name="B. Lindt")
    same = [w for w in report["warnings"] if w.startswith("plan #3 ")]
    assert same and "INFEASIBLE" in same[0]
    assert not any("fails its check" in w for w in report["warnings"])  # not said twice in two wordings


def test_verdicts_come_from_the_same_check_as_check_command(tmp_path):
    """The watch list's and status's verdict for a plan is what `check` says of the same burn with the other
    pending plans flown first (uncertainty.plan_check)."""
    path = str(tmp_path / "w.ledger.json")
    _ledger(path)
    snap = Ledger(path).snapshot()
    st = uncertainty.status_with_confidence(snap, 0.99, 2000)
    s = uncertainty.run(snap, 2000)
    for row in st["pending_plans"]:
        ref = uncertainty.plan_check(snap, s, row["id"], 0.99)
        assert row["verdict_now"]["verdict"] == ref["verdict"]
        assert row["verdict_now"]["probability"] == ref["probability"]
