"""One changed byte anywhere in a stored entry (or the craft link) is found: verify reports the first broken
link, or the file is refused as damaged. Status shows a broken chain prominently and writes are refused."""
from __future__ import annotations

import json
import os
import random
import string

import pytest
from storekit import folder_state, run

from ledger.errors import StoreError
from ledger.store import durable
from ledger.store.ledgerfile import LedgerFile


def _other(ch: int) -> int:
    """A different character of the same class, so the JSON stays well formed where it can."""
    c = chr(ch)
    for alphabet in (string.digits, string.ascii_lowercase, string.ascii_uppercase):
        if c in alphabet:
            return ord(alphabet[(alphabet.index(c) + 1) % len(alphabet)])
    return ch


def test_every_single_changed_character_is_found(ledger):
    raw = open(ledger, "rb").read()
    positions = [i for i, b in enumerate(raw) if _other(b) != b]
    assert len(positions) > 500
    outcomes = {"break": 0, "refused": 0}
    for i in positions:
        changed = bytearray(raw)
        changed[i] = _other(raw[i])
        os.remove(ledger)  # a new file each time: truncating in place makes ext4 flush, which is slow
        with open(ledger, "wb") as fh:
            fh.write(changed)
        durable._CACHE.clear()  # same size and possibly the same mtime tick: make the test independent of it
        try:
            brk = LedgerFile(ledger).verify()
        except StoreError:
            outcomes["refused"] += 1
            continue
        assert brk is not None, f"a change at byte {i} ({raw[max(0, i - 20):i + 20]!r}) went unnoticed"
        outcomes["break"] += 1
    assert outcomes["break"] > 0 and outcomes["refused"] > 0


def test_verify_names_the_first_broken_entry_and_what_differs(ledger):
    doc = json.load(open(ledger))
    doc["entries"]["2"]["data"]["dv"] = 2.5
    open(ledger, "w").write(json.dumps(doc))
    code, out, err = run("--ledger", ledger, "verify")
    assert code == 1 and "entry 2" in err and "does not match the entry's contents" in err
    code, out, _ = run("--ledger", ledger, "verify", "--json")
    assert code == 1 and json.loads(out)["break"] == {"seq": 2, "problem": "stored hash does not match the entry's contents"}


def test_status_shows_a_broken_chain_first_and_writes_are_refused(ledger):
    doc = json.load(open(ledger))
    doc["entries"]["1"]["by"] = "someone else"
    open(ledger, "w").write(json.dumps(doc))
    code, out, _ = run("--ledger", ledger, "status")
    assert code == 0 and out.splitlines()[0].startswith(" INTEGRITY BROKEN  chain broken at entry 1")
    code, out, _ = run("--ledger", ledger, "status", "--json")
    assert json.loads(out)["integrity"].startswith("chain broken at entry 1")
    before = folder_state(os.path.dirname(ledger))
    for argv in (["burn", "--engine", "lae", "--dv", "1"], ["correct", "--entry", "2", "--dv", "1", "--reason", "x"],
                 ["backup"]):
        code, _, err = run("--ledger", ledger, *argv)
        assert code == 2 and "chain broken at entry 1" in err and err.count("\n") == 1
    assert folder_state(os.path.dirname(ledger)) == before


@pytest.mark.parametrize("seed", range(3))
def test_random_changed_byte_via_the_command_line(ledger, seed):
    raw = bytearray(open(ledger, "rb").read())
    rng = random.Random(seed)
    i = rng.choice([k for k, b in enumerate(raw) if _other(b) != b])
    raw[i] = _other(raw[i])
    os.remove(ledger)  # a new inode, as an editor that saves by rename would leave it
    open(ledger, "wb").write(raw)
    code, _, err = run("--ledger", ledger, "verify")
    assert code in (1, 2) and err.count("\n") == 1 and "Traceback" not in err
