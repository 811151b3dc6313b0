"""Backups beside the ledger, the head they record, and restore (which never deletes anything)."""
from __future__ import annotations

import inspect
import json
import os
import stat

import pytest
from storekit import folder_state, run, snapshot_bytes

from ledger.errors import InputError, StoreError
from ledger.services.craftfile import load_craft
from ledger.services.ledger import Ledger, create
from ledger.store import backup
from ledger.store.head import head_paths, read_heads
from ledger.store.ledgerfile import LedgerFile


def _mode(path: str) -> int:
    return stat.S_IMODE(os.stat(path).st_mode)


def test_make_backup_has_the_agreed_signature():
    sig = inspect.signature(backup.make_backup)
    assert list(sig.parameters) == ["ledger_path", "keep"]
    assert sig.parameters["keep"].kind is inspect.Parameter.KEYWORD_ONLY and sig.parameters["keep"].default is None


def test_backup_is_an_exact_private_copy_and_records_the_head(ledger):
    dest = backup.make_backup(ledger)
    assert os.path.dirname(dest) == ledger + ".backups"
    assert open(dest, "rb").read() == open(ledger, "rb").read()
    assert _mode(dest) == 0o600 and _mode(ledger + ".backups") == 0o700 and _mode(ledger) == 0o600
    assert _mode(ledger + ".lock") == 0o600
    seq, h = LedgerFile(ledger).head()
    heads = read_heads(ledger)
    assert [(x.seq, x.hash) for x in heads] == [(seq, h), (seq, h)]
    for p in head_paths(ledger):
        assert _mode(p) == 0o600


def test_keep_prunes_the_oldest(ledger, monkeypatch):
    made = [backup.make_backup(ledger, keep=3) for _ in range(5)]
    assert backup.list_backups(ledger) == made[::-1][:3]
    monkeypatch.setenv(backup.KEEP_ENV, "2")
    backup.make_backup(ledger)
    assert len(backup.list_backups(ledger)) == 2
    monkeypatch.setenv(backup.KEEP_ENV, "many")
    with pytest.raises(InputError, match=backup.KEEP_ENV):
        backup.make_backup(ledger)
    code, _, err = run("--ledger", ledger, "backup", "--keep", "0")
    assert code == 2 and "--keep" in err
    monkeypatch.delenv(backup.KEEP_ENV)
    assert backup.keep_count() == backup.DEFAULT_KEEP == 10


def test_backup_command_and_listing(ledger):
    code, out, _ = run("--ledger", ledger, "backup", "--keep", "4", "--json")
    assert code == 0 and json.loads(out)["entries"] == 3
    code, out, _ = run("--ledger", ledger, "backup", "--list", "--json")
    rows = json.loads(out)
    assert code == 0 and len(rows) == 1 and rows[0]["good"]


def test_a_broken_chain_is_not_backed_up_and_good_backups_are_kept(ledger):
    good = backup.make_backup(ledger)
    doc = json.loads(open(ledger).read())
    doc["entries"]["2"]["note"] = "edited afterwards"
    open(ledger, "w").write(json.dumps(doc))
    before = folder_state(os.path.dirname(ledger))
    with pytest.raises(StoreError, match="not backing it up"):
        backup.make_backup(ledger, keep=1)
    assert folder_state(os.path.dirname(ledger)) == before
    assert backup.list_backups(ledger) == [good]


def test_restore_puts_back_the_newest_good_backup_and_keeps_the_damaged_file(ledger):
    first = backup.make_backup(ledger)
    Ledger(ledger).record("burn", {"engine": "lae", "dv": 0.5})
    second = backup.make_backup(ledger)
    with open(second, "r+b") as fh:  # the newest backup itself is damaged: restore skips it
        fh.truncate(100)
    damaged = open(ledger, "rb").read()[:-40]
    open(ledger, "wb").write(damaged)
    code, _, err = run("--ledger", ledger, "status")
    assert code == 2 and err.count("\n") == 1
    assert first in err and "restore" in err and "Nothing was overwritten" in err
    code, out, _ = run("--ledger", ledger, "restore", "--json")
    result = json.loads(out)
    assert code == 0 and result["restored_from"] == first and result["entries"] == 3
    assert open(result["kept_aside"], "rb").read() == damaged
    assert result["recorded_head"] == 4 and result["warnings"]  # entry 4 is only in the kept file
    assert open(ledger, "rb").read() == open(first, "rb").read()
    assert LedgerFile(ledger).verify() is None
    assert [h.seq for h in read_heads(ledger)] == [3, 3]
    assert run("--ledger", ledger, "status")[0] == 0


def test_restore_refuses_an_intact_ledger_without_force(ledger):
    dest = backup.make_backup(ledger)
    Ledger(ledger).record("burn", {"engine": "lae", "dv": 0.5})
    before = folder_state(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, "restore")
    assert code == 2 and "intact" in err and folder_state(os.path.dirname(ledger)) == before
    current = open(ledger, "rb").read()
    code, out, _ = run("--ledger", ledger, "restore", "--force", "--json")
    aside = json.loads(out)["kept_aside"]
    assert code == 0 and ".replaced-" in aside and open(aside, "rb").read() == current
    assert open(ledger, "rb").read() == open(dest, "rb").read()


def test_restore_from_a_file(ledger, tmp_path, craft_file):
    other = str(tmp_path / "other" / "ledger.json")
    os.makedirs(os.path.dirname(other))
    create(other, load_craft(craft_file), by="someone else")
    dest = backup.make_backup(ledger)
    os.remove(ledger)
    code, _, err = run("--ledger", ledger, "status")  # a deleted ledger with backups is not "no ledger yet"
    assert code == 2 and "restore" in err
    code, _, err = run("--ledger", ledger, "init", "--craft", str(tmp_path / "craft.yaml"))
    assert code == 2 and "restore" in err and not os.path.exists(ledger)
    bad = tmp_path / "bad.json"
    bad.write_text("[1, 2, 3]")
    code, _, err = run("--ledger", ledger, "restore", "--from", str(bad))
    assert code == 2 and "--from" in err and not os.path.exists(ledger)
    code, _, err = run("--ledger", ledger, "restore", "--from", other)  # another ledger's file
    assert code == 2 and "different ledger" in err and not os.path.exists(ledger)
    code, out, _ = run("--ledger", ledger, "restore", "--from", dest, "--json")
    assert code == 0 and json.loads(out)["kept_aside"] is None
    assert open(ledger, "rb").read() == open(dest, "rb").read()


def test_no_good_backup_says_so_and_changes_nothing(ledger):
    open(ledger, "wb").write(b"\x00" * 64)
    before = snapshot_bytes(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1")
    assert code == 2 and "No good backup" in err
    code, _, err = run("--ledger", ledger, "restore")
    assert code == 2 and "no good backup" in err
    assert snapshot_bytes(os.path.dirname(ledger)) == before
