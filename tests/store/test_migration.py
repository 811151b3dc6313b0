"""Schema versions: a newer file is refused; an older one is migrated after a backup of it is written.

Schema 1 is the first layout propledger has written, so no real older layout exists: these tests register
a migration from schema 1 and pretend the current schema is 2, which exercises the whole mechanism."""
from __future__ import annotations

import json
import os

import pytest
from storekit import folder_state, run

from ledger.errors import StoreError
from ledger.services.ledger import Ledger
from ledger.store import backup, ledgerfile, migrate
from ledger.store.head import read_heads
from ledger.store.ledgerfile import LedgerFile


def _add_timezone(doc):
    """The registered test migration: every entry gains an explicit time zone field."""
    for rec in doc["entries"].values():
        rec["tz"] = "UTC"
    return doc


@pytest.fixture
def schema2(monkeypatch):
    monkeypatch.setattr(ledgerfile, "SCHEMA", 2)
    monkeypatch.setitem(migrate.MIGRATIONS, 1, _add_timezone)


def test_an_older_file_is_backed_up_then_migrated(ledger, schema2):
    old_bytes = open(ledger, "rb").read()
    old_head = ledgerfile.head_of(LedgerFile(ledger).document(migrate=False))
    snap = Ledger(ledger).snapshot()
    assert any("migrated from schema 1 to 2" in w for w in snap.warnings)
    kept = backup.list_backups(ledger)
    assert len(kept) == 1 and open(kept[0], "rb").read() == old_bytes
    lf = LedgerFile(ledger)
    meta = lf.meta()
    assert meta["schema"] == 2 and all(r["tz"] == "UTC" for r in lf.records())
    assert meta["migrated"][0]["from"] == 1 and meta["migrated"][0]["to"] == 2
    assert (meta["migrated"][0]["old_head"]["seq"], meta["migrated"][0]["old_head"]["hash"]) == old_head
    assert meta["migrated"][0]["backup"] == os.path.basename(kept[0])
    assert lf.verify() is None
    assert {(h.seq, h.genesis) for h in read_heads(ledger)} == {(3, meta["hash"])}
    Ledger(ledger).record("burn", {"engine": "lae", "dv": 1.0})
    assert run("--ledger", ledger, "verify")[0] == 0
    assert backup.inspect_backup(kept[0]).seq == 3  # the old chain stays checkable in the backup


def test_a_newer_file_is_refused_unchanged(ledger):
    doc = json.load(open(ledger))
    doc["meta"]["1"]["schema"] = 7
    open(ledger, "w").write(json.dumps(doc))
    before = folder_state(os.path.dirname(ledger))
    for argv in (["status"], ["burn", "--engine", "lae", "--dv", "1"], ["backup"]):
        code, _, err = run("--ledger", ledger, *argv)
        assert code == 2 and "newer propledger (schema 7" in err
    assert folder_state(os.path.dirname(ledger)) == before


def test_a_failing_or_missing_migration_changes_nothing(ledger, monkeypatch):
    monkeypatch.setattr(ledgerfile, "SCHEMA", 3)
    monkeypatch.setitem(migrate.MIGRATIONS, 1, _add_timezone)  # none from 2 to 3
    before = open(ledger, "rb").read()
    with pytest.raises(StoreError, match="no migration from schema 2 to 3"):
        Ledger(ledger).snapshot()
    assert open(ledger, "rb").read() == before

    def broken(doc):
        raise KeyError("craft")

    monkeypatch.setitem(migrate.MIGRATIONS, 1, broken)
    with pytest.raises(StoreError, match="migration from schema 1 failed"):
        LedgerFile(ledger).document()
    assert open(ledger, "rb").read() == before


def test_an_old_file_with_a_broken_chain_is_not_migrated(ledger, schema2):
    doc = json.load(open(ledger))
    doc["entries"]["1"]["note"] = "changed"
    open(ledger, "w").write(json.dumps(doc))
    before = folder_state(os.path.dirname(ledger))
    with pytest.raises(StoreError, match="not migrating"):
        LedgerFile(ledger).document()
    assert folder_state(os.path.dirname(ledger)) == before
