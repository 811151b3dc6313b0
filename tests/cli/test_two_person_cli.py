"""Two-person approval through the command line, in real subprocesses (invented craft, tests/cli/conftest.py).

The rule (a second, different person approves a large manoeuvre) is common practice; its details are the
project's (tests/services/test_approval_rule.py says which and why). The boundary: ``above_dv: 5 m/s``
means strictly above, so a plan of exactly 5 m/s needs one approval and one of 5.01 m/s needs two.
"""
from __future__ import annotations

import json
import os

import jsonschema
import pytest

from tests.cli import schemas
from tests.cli.conftest import CRAFT, run

RULE = "operations:\n  approval: {approvers: 2, above_dv: 5 m/s}\n"
S = ("--samples", "2000")


@pytest.fixture()
def led(tmp_path):
    craft = tmp_path / "craft.yaml"
    craft.write_text(CRAFT + RULE)
    path = str(tmp_path / "k7.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    return path


def plan(led, dv, when="2027-01-01T00:00:00Z"):
    return json.loads(run("--ledger", led, "plan", "--engine", "lae", "--dv", dv, "--at", when, "--json",
                          check=True).stdout)["id"]


def status(led):
    doc = json.loads(run("--ledger", led, "status", "--json", *S, check=True).stdout)
    jsonschema.validate(doc, schemas.STATUS)
    return {p["id"]: p for p in doc["pending_plans"]}


def flat(text):
    """Output with the console's line wrapping undone."""
    return " ".join(text.split())


def files(folder):
    """Every file under ``folder`` (ledger, side files, backups) with its bytes."""
    out = {}
    for root, _, names in os.walk(folder):
        for name in names:
            with open(os.path.join(root, name), "rb") as fh:
                out[os.path.join(root, name)] = fh.read()
    return out


def test_same_name_twice_is_refused_and_two_names_approve(led):
    p = plan(led, "20 m/s")
    done = run("--ledger", led, "approve", "--plan", str(p), "--by", "A. Okafor", *S, check=True)
    assert "1 of 2 approvals (A. Okafor)" in flat(done.stdout) and "needs 2 distinct names" in flat(done.stderr)
    row = status(led)[p]
    assert row["approval"] == "partial" and row["approvals_counted"] == 1 and row["approvals_needed"] == 2
    assert "(1 of 2 approvals)" in flat(run("--ledger", led, "status", *S, check=True).stdout)

    before = files(os.path.dirname(led))
    again = run("--ledger", led, "approve", "--plan", str(p), "--by", "A. Okafor", *S)
    assert again.returncode == 2 and again.stdout == ""
    assert again.stderr.count("\n") == 1 and again.stderr.startswith("propledger: ")
    assert "already approved by A. Okafor" in again.stderr
    assert files(os.path.dirname(led)) == before  # nothing written, side files included

    out = json.loads(run("--ledger", led, "approve", "--plan", str(p), "--by", "B. Lee", "--json", *S,
                         check=True).stdout)
    assert out["approvals_counted"] == 2 and out["approvers"] == ["A. Okafor", "B. Lee"]
    row = status(led)[p]
    assert row["approval"] == "approved" and row["approvals_counted"] == 2
    assert row["approval_detail"]["approvers"] == ["A. Okafor", "B. Lee"]


def test_handover_shows_the_count(led):
    p = plan(led, "20 m/s")
    run("--ledger", led, "approve", "--plan", str(p), "--by", "A. Okafor", *S, check=True)
    text = run("--ledger", led, "handover", "--from", "J. Moreau", "--to", "K. Tanaka", "--no-record", check=True)
    assert "approval 1 of 2 approvals" in flat(text.stdout)
    md = run("--ledger", led, "handover", "--from", "J. Moreau", "--to", "K. Tanaka", "--no-record", "--format", "md",
             check=True)
    assert "1 of 2 approvals" in flat(md.stdout)


def test_threshold_boundary_exactly_at_above_dv_needs_one_approval(led):
    at = plan(led, "5 m/s")
    above = plan(led, "5.01 m/s", "2027-02-01T00:00:00Z")
    for p in (at, above):
        run("--ledger", led, "approve", "--plan", str(p), "--by", "A. Okafor", *S, check=True)
    rows = status(led)
    assert rows[at]["approval"] == "approved" and rows[at]["approvals_needed"] == 1
    assert rows[above]["approval"] == "partial" and rows[above]["approvals_needed"] == 2


def test_a_burn_on_a_half_approved_plan_is_recorded_with_a_warning(led):
    p = plan(led, "20 m/s")
    run("--ledger", led, "approve", "--plan", str(p), "--by", "A. Okafor", *S, check=True)
    done = run("--ledger", led, "burn", "--engine", "lae", "--dv", "20 m/s", "--plan", str(p), "--json", check=True)
    warnings = json.loads(done.stdout)["warnings"]
    assert any("1 of 2 approvals" in w and "above 5 m/s" in w for w in warnings)


@pytest.mark.parametrize("rule", ["{approvers: 0, above_dv: 5 m/s}", "{approvers: 2, above_dv: 5 kg}",
                                  "{approvers: 2, above_dv: 5 m/s, who: any}"])
def test_a_bad_rule_is_one_line_and_creates_no_ledger(tmp_path, rule):
    craft = tmp_path / "craft.yaml"
    craft.write_text(CRAFT + f"operations:\n  approval: {rule}\n")
    path = tmp_path / "bad.ledger.json"
    done = run("--ledger", str(path), "init", "--craft", str(craft))
    assert done.returncode == 2 and done.stderr.count("\n") == 1 and "operations.approval" in done.stderr
    assert not path.exists()
