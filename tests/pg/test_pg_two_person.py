"""Two-person approval in the database store: the names counted are the server's authenticated users, so
one role cannot approve twice by typing another --by (the two-person rule is common practice for
safety-critical commands; no single published source)."""
from __future__ import annotations

import itertools
import json

import yaml

from ledger.cli import main

from tests.pg.conftest import CRAFT_FILE

_names = itertools.count(1)


def _craft_with_rule(tmp_path) -> str:
    with open(CRAFT_FILE, encoding="utf-8") as fh:
        doc = yaml.safe_load(fh)
    doc["craft"].setdefault("operations", {})["approval"] = {"approvers": 2, "above_dv": "0.5 m/s"}
    path = tmp_path / "two-person.yaml"
    path.write_text(yaml.safe_dump(doc), encoding="utf-8")
    return str(path)


def test_one_role_cannot_approve_twice_under_two_typed_names(capsys, tmp_path, pg_schema):
    craft = f"tp{next(_names)}"
    alice, bob = pg_schema.url(craft=craft), pg_schema.url(user="bob", craft=craft)
    assert main(["--ledger", alice, "init", "--craft", _craft_with_rule(tmp_path)]) == 0
    engine = yaml.safe_load(open(CRAFT_FILE, encoding="utf-8"))["engines"][0]["id"]
    assert main(["--ledger", alice, "plan", "--engine", engine, "--dv", "1 m/s", "--at", "2031-01-01T00:00Z"]) == 0
    capsys.readouterr()
    assert main(["--ledger", alice, "approve", "--plan", "1", "--by", "A. Ferreira"]) in (0, 1, 3)
    capsys.readouterr()
    # the same database role typing a colleague's name is still the same person to the rule
    code = main(["--ledger", alice, "approve", "--plan", "1", "--by", "B. Lindqvist"])
    _, err = capsys.readouterr()
    assert code == 2 and err.count("\n") == 1, err
    assert main(["--ledger", alice, "status", "--json"]) in (0, 1)
    plan = json.loads(capsys.readouterr().out)["pending_plans"][0]
    assert plan["approvals_counted"] == 1 and plan["approval"] == "partial"
    # a second authenticated role completes it
    assert main(["--ledger", bob, "approve", "--plan", "1", "--by", "bob"]) in (0, 1, 3)
    capsys.readouterr()
    assert main(["--ledger", alice, "status", "--json"]) in (0, 1)
    plan = json.loads(capsys.readouterr().out)["pending_plans"][0]
    assert plan["approvals_counted"] == 2 and plan["approval"] == "approved"
