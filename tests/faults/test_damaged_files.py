"""Whatever sits at the ledger path (truncated, garbled, another program's file, empty, a folder), every
command gives one clear line and writes nothing; the error names the newest good backup and the restore
command, and restore then works, keeping the damaged file aside byte for byte."""
from __future__ import annotations

import json
import os
import random
import shutil

import pytest
from faultkit import folder_state, make_ledger, run

from ledger.errors import StoreError
from ledger.store import backup, durable
from ledger.store.ledgerfile import LedgerFile

PNG_HEADER = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x10\x00\x00\x00\x10\x08\x06\x00\x00\x00"
OTHER_TINYDB = b'{"_default": {"1": {"title": "groceries", "done": false}, "2": {"title": "call home"}}}'
WRITES = [["burn", "--engine", "lae", "--dv", "1"], ["plan", "--engine", "lae", "--dv", "1", "--at", "2030-01-01"],
          ["mass", "--delta", "-1 kg"], ["use", "--engine", "lae", "--propellant", "1 kg"],
          ["withdraw", "--plan", "1"], ["correct", "--entry", "1", "--dv", "2", "--reason", "x"], ["backup"]]
READS = [["status"], ["log"], ["verify"], ["check", "--engine", "lae", "--dv", "1"], ["backup", "--list", "--json"]]


def _damage(path: str, kind: str, good: bytes) -> None:
    if kind == "directory":
        os.remove(path)
        os.mkdir(path)
        return
    data = {"truncated": good[: len(good) // 2], "empty": b"", "nul-filled": b"\x00" * len(good),
            "json-list": b"[1, 2, 3]", "png": PNG_HEADER, "other-tinydb": OTHER_TINYDB, "text": b"hello\n",
            "garbage-appended": good + b"\n{garbage", "invalid-utf8": good[:50] + b"\xff\xfe" + good[52:]}[kind]
    with open(path, "wb") as fh:
        fh.write(data)


KINDS = ["truncated", "empty", "nul-filled", "json-list", "png", "other-tinydb", "text", "garbage-appended",
         "invalid-utf8", "directory"]


@pytest.mark.parametrize("kind", KINDS)
def test_each_damage_is_one_clear_line_and_nothing_is_overwritten(tmp_path, kind):
    path = make_ledger(str(tmp_path))
    good_backup = backup.make_backup(path)
    _damage(path, kind, open(path, "rb").read())
    before = folder_state(str(tmp_path))
    for argv in WRITES + READS:
        code, out, err = run("--ledger", path, *argv)
        if argv[0] == "backup" and "--list" in argv:
            assert code == 0 and json.loads(out)[0] == {"backup": good_backup, "good": True, "entries": 3,
                                                        "problem": None}
            continue
        assert code == 2, (argv, out, err)
        assert err.startswith("propledger: error: ") and err.count("\n") == 1
        assert "Traceback" not in err and "internal error" not in err
        assert good_backup in err and "restore" in err, err
    assert folder_state(str(tmp_path)) == before
    code, out, err = run("--ledger", path, "restore", "--json")
    assert code == 0, err
    aside = json.loads(out)["kept_aside"]
    if kind == "directory":
        assert os.path.isdir(aside)
    else:
        assert open(aside, "rb").read() == before[path]
    assert LedgerFile(path).verify() is None


def test_truncated_at_every_offset(tmp_path):
    path = make_ledger(str(tmp_path))
    good = open(path, "rb").read()
    for n in range(len(good)):
        os.remove(path)  # a new file each time (truncating in place makes ext4 flush: slow, and not the point)
        with open(path, "wb") as fh:
            fh.write(good[:n])
        durable._CACHE.clear()  # never let the read cache hide the damage
        with pytest.raises(StoreError) as info:
            LedgerFile(path).records()
        assert "\n" not in str(info.value)
        assert open(path, "rb").read() == good[:n]


def test_garbled_bytes_are_caught(tmp_path):
    path = make_ledger(str(tmp_path))
    backup.make_backup(path)
    good = open(path, "rb").read()
    rng = random.Random(7)
    for _ in range(150):
        data = bytearray(good)
        i = rng.randrange(len(data))
        data[i] = rng.choice([b for b in range(256) if b != data[i]])
        os.remove(path)
        with open(path, "wb") as fh:
            fh.write(data)
        durable._CACHE.clear()
        try:
            brk = LedgerFile(path).verify()
        except StoreError:
            continue
        assert brk is not None, f"a garbled byte at {i} went unnoticed"
        code, _, err = run("--ledger", path, "burn", "--engine", "lae", "--dv", "1")
        assert code == 2 and open(path, "rb").read() == bytes(data)


def test_a_symlink_loop_and_a_missing_folder(tmp_path):
    loop = tmp_path / "loop.json"
    os.symlink(loop, loop)
    code, _, err = run("--ledger", str(loop), "status")
    assert code == 2 and err.count("\n") == 1 and "internal error" not in err
    code, _, err = run("--ledger", str(tmp_path / "nowhere" / "l.json"), "burn", "--engine", "lae", "--dv", "1")
    assert code == 2 and "no ledger here" in err
    shutil.rmtree(tmp_path / "nowhere", ignore_errors=True)
