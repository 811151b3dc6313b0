"""The chain head recorded outside the ledger catches what a hash chain alone cannot: cut-off entries and a
file rewritten with a fresh, self-consistent chain (docs/sources.md §8; the same idea as
the signed tree head of RFC 6962)."""
from __future__ import annotations

import json
import os

import pytest
from storekit import folder_state, run

from ledger.errors import StoreError
from ledger.services.ledger import Ledger
from ledger.store import backup
from ledger.store.chain import verify_chain
from ledger.store.head import HeadMismatch, head_paths, read_heads
from ledger.store.ledgerfile import LedgerFile
from ledger.store.migrate import relink


def _write(path, doc):
    with open(path, "w") as fh:
        json.dump(doc, fh)


def test_init_records_the_craft_link(new_ledger):
    heads = read_heads(new_ledger)
    meta = LedgerFile(new_ledger).meta()
    assert [(h.seq, h.genesis) for h in heads] == [(0, meta["hash"])] * 2


def test_entries_cut_off_after_a_backup_are_an_error_not_a_rollback(ledger):
    backup.make_backup(ledger)
    doc = json.load(open(ledger))
    del doc["entries"]["3"]  # the shorter chain still verifies on its own
    _write(ledger, doc)
    lf = LedgerFile(ledger)
    assert verify_chain(doc["meta"]["1"], [doc["entries"][k] for k in ("1", "2")]) is None
    with pytest.raises(HeadMismatch, match="ends at entry 2 .* entry 3 existed: entries were cut off"):
        lf.document()
    before = folder_state(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1")
    assert code == 2 and "cut off" in err and "restore" in err
    assert folder_state(os.path.dirname(ledger)) == before
    assert run("--ledger", ledger, "verify")[0] == 2


def test_a_rewritten_chain_is_caught(ledger):
    backup.make_backup(ledger)
    doc = json.load(open(ledger))
    doc["entries"]["2"]["data"]["dv"] = 0.5   # change a burn and recompute every hash after it
    _write(ledger, relink(doc))
    with pytest.raises(HeadMismatch):  # the chain alone verifies; only the recorded head shows the rewrite
        LedgerFile(ledger).verify()
    assert verify_chain(doc["meta"]["1"], [doc["entries"][k] for k in ("1", "2", "3")]) is None
    with pytest.raises(HeadMismatch):
        Ledger(ledger).snapshot()


def test_another_ledger_in_its_place_is_caught(ledger, tmp_path, craft_file):
    from ledger.services.craftfile import load_craft
    from ledger.services.ledger import create

    other = str(tmp_path / "o" / "l.json")
    os.makedirs(os.path.dirname(other))
    create(other, load_craft(craft_file), by="x")
    os.replace(other, ledger)
    code, _, err = run("--ledger", ledger, "status")
    assert code == 2 and "replaced or rewritten" in err


def test_only_one_copy_of_the_head_is_enough(ledger):
    backup.make_backup(ledger)
    os.remove(head_paths(ledger)[0])  # the sidecar is deleted; the copy in the backup folder remains
    doc = json.load(open(ledger))
    del doc["entries"]["3"]
    _write(ledger, doc)
    with pytest.raises(HeadMismatch):
        LedgerFile(ledger).document()


def test_an_unreadable_head_record_is_a_clear_error(ledger):
    open(head_paths(ledger)[0], "w").write("{not json")
    code, _, err = run("--ledger", ledger, "status")
    assert code == 2 and "head record is unreadable" in err and err.count("\n") == 1
    with pytest.raises(StoreError):
        Ledger(ledger).record("burn", {"engine": "lae", "dv": 1.0})


def test_appending_after_the_recorded_head_is_normal(ledger):
    backup.make_backup(ledger)
    led = Ledger(ledger)
    led.record("burn", {"engine": "lae", "dv": 1.0})
    code, out, _ = run("--ledger", ledger, "verify", "--json")
    result = json.loads(out)
    assert code == 0 and result["intact"] and result["entries"] == 4
    assert {h["seq"] for h in result["recorded_heads"]} == {3}
