"""--json outputs match the shapes in docs/json.md (issue 11 point 6), checked with the jsonschema package
(JSON Schema draft 2020-12, https://json-schema.org/draft/2020-12) through real subprocesses."""
from __future__ import annotations

import json

import jsonschema

from tests.cli import schemas
from tests.cli.conftest import run


def _validate(doc, schema):
    jsonschema.Draft202012Validator(schema, format_checker=jsonschema.FormatChecker()).validate(doc)


def test_log_json_carries_everything_stored(ledger):
    run("--ledger", ledger, "plan", "--engine", "lae", "--dv", "2 m/s", "--at", "2026-03-01T00:00Z", check=True)
    run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1.5 m/s", "--sigma", "0.02 m/s",
        "--at", "2026-03-02T00:00Z", check=True)
    run("--ledger", ledger, "mass", "--delta", "-3 kg", "--at", "2026-03-03T00:00Z", check=True)
    run("--ledger", ledger, "correct", "--entry", "2", "--dv", "1.6 m/s", "--at", "2026-03-02T06:00Z",
        "--reason", "tracking update", check=True)
    rows = json.loads(run("--ledger", ledger, "log", "--json", check=True).stdout)
    _validate(rows, schemas.LOG)
    by_id = {r["id"]: r for r in rows}
    assert by_id[2]["data"]["dv_m_s"] == 1.5 and by_id[2]["data"]["sigma"] == 0.02
    assert by_id[3]["data"]["delta_kg"] == -3.0
    fix = by_id[4]
    assert fix["changes"] == {"at": "2026-03-02T06:00:00Z", "dv_m_s": 1.6}
    assert fix["prev"] == by_id[3]["hash"] and by_id[2]["prev"] == by_id[1]["hash"]
    assert fix["program"].startswith("propledger ")


def test_verify_json_matches_its_schema(ledger):
    run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1.5 m/s", check=True)
    _validate(json.loads(run("--ledger", ledger, "verify", "--json", check=True).stdout), schemas.VERIFY)


def test_status_and_check_json_match_their_schemas(ledger):
    """status --json and check --json as docs/json.md describes them, with a pending plan so that its
    approval state and its check now (verdict_now) are present."""
    run("--ledger", ledger, "plan", "--engine", "lae", "--dv", "2 m/s", "--at", "2026-03-01T00:00Z", check=True)
    status = json.loads(run("--ledger", ledger, "status", "--json", "--samples", "2000", check=True).stdout)
    _validate(status, schemas.STATUS)
    assert status["pending_plans"][0]["verdict_now"]["samples"] == 2000
    done = run("--ledger", ledger, "check", "--engine", "lae", "--dv", "1 m/s", "--json", "--samples", "2000")
    assert done.returncode in (0, 1, 3)  # feasible, infeasible, marginal: all print the same document
    _validate(json.loads(done.stdout), schemas.CHECK)
