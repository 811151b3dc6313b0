"""A full disk and failing writes: a clear error, nothing acknowledged, the previous ledger byte-for-byte
intact and no temporary files left. Disk full is a soft RLIMIT_FSIZE in a child process (EFBIG, SIGXFSZ
ignored); ENOSPC and EIO are injected into the store's own write, fsync, rename and link steps
(docs/sources.md §8: patching os.write misses open().write, so the storage's wrappers are the seam)."""
from __future__ import annotations

import errno
import os
import subprocess
import sys

import pytest
from faultkit import CRAFT_YAML, child_env, folder_state, make_ledger, run

from ledger.errors import StoreError
from ledger.services.ledger import Ledger
from ledger.store import backup, durable
from ledger.store.head import read_heads
from ledger.store.ledgerfile import LedgerFile

CHILD = """
import os, resource, signal, sys
from ledger.cli import main
signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
path = sys.argv[1]
limit = os.path.getsize(path) + int(sys.argv[2])
resource.setrlimit(resource.RLIMIT_FSIZE, (limit, resource.getrlimit(resource.RLIMIT_FSIZE)[1]))
sys.exit(main(["--ledger", path] + sys.argv[3:]))
"""


@pytest.mark.parametrize("room,argv", [(40, ["burn", "--engine", "lae", "--dv", "1"]), (-100, ["backup"]),
                                       (40, ["correct", "--entry", "1", "--dv", "2", "--reason", "fix"])])
def test_file_size_limit_in_a_child(tmp_path, room, argv):
    """``room``: bytes a file may grow beyond the ledger's size (a backup is a copy: it needs a lower limit)."""
    path = make_ledger(str(tmp_path))
    before = folder_state(str(tmp_path))
    proc = subprocess.run([sys.executable, "-c", CHILD, path, str(room), *argv], capture_output=True, text=True,
                          env=child_env(), timeout=60)
    assert proc.returncode == 2, proc.stderr
    assert "File too large" in proc.stderr and proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert "recorded entry" not in proc.stdout and "backup written" not in proc.stdout
    assert folder_state(str(tmp_path)) == before
    assert LedgerFile(path).verify() is None


def _fail(errno_: int, step: str, on_call: int = 1):
    """A replacement for durable.<step> that raises OSError(errno_) on its ``on_call``-th call."""
    real = getattr(durable, step)
    calls = {"n": 0}

    def failing(*args):
        calls["n"] += 1
        if calls["n"] == on_call:
            raise OSError(errno_, os.strerror(errno_))
        return real(*args)

    return failing


FAULTS = [("write_all", errno.ENOSPC, 1), ("write_all", errno.EIO, 1), ("fsync", errno.EIO, 1),
          ("fsync", errno.ENOSPC, 1), ("fsync", errno.EIO, 2), ("replace", errno.EIO, 1), ("replace", errno.ENOSPC, 1)]
# fsync call 2 is the folder's fsync after the rename: the previous file is put back.


@pytest.mark.parametrize("step,code,on_call", FAULTS)
def test_injected_faults_in_an_append(tmp_path, monkeypatch, step, code, on_call):
    path = make_ledger(str(tmp_path))
    led = Ledger(path)
    before = folder_state(str(tmp_path))
    monkeypatch.setattr(durable, step, _fail(code, step, on_call))
    with pytest.raises(StoreError, match=os.strerror(code)) as info:
        led.record("burn", {"engine": "lae", "dv": 1.0})
    assert "nothing was recorded" in str(info.value)
    assert folder_state(str(tmp_path)) == before
    monkeypatch.undo()
    code_, _, err = run("--ledger", path, "burn", "--engine", "lae", "--dv", "1")
    assert code_ == 0, err
    assert LedgerFile(path).verify() is None and len(LedgerFile(path).records()) == 4


@pytest.mark.parametrize("step,code,on_call", FAULTS + [("link", errno.ENOSPC, 1), ("replace", errno.EIO, 2)])
def test_injected_faults_in_a_backup(tmp_path, monkeypatch, step, code, on_call):
    path = make_ledger(str(tmp_path))
    first = backup.make_backup(path)
    ledger_bytes = open(path, "rb").read()
    monkeypatch.setattr(durable, step, _fail(code, step, on_call))
    with pytest.raises(StoreError, match=os.strerror(code)):
        backup.make_backup(path)
    monkeypatch.undo()
    assert open(path, "rb").read() == ledger_bytes
    assert backup.list_backups(path) == [first]  # no new backup when the head could not be recorded
    assert LedgerFile(path).verify() is None and {h.seq for h in read_heads(path)} == {3}
    assert not [n for n in os.listdir(tmp_path) if n.endswith(durable.TMP_SUFFIX)]


@pytest.mark.parametrize("step,code", [("write_all", errno.ENOSPC), ("fsync", errno.EIO), ("link", errno.EIO)])
def test_injected_faults_in_a_restore_put_the_damaged_file_back(tmp_path, monkeypatch, step, code):
    path = make_ledger(str(tmp_path))
    backup.make_backup(path)
    open(path, "wb").write(b"{ damaged")
    before = folder_state(str(tmp_path))
    monkeypatch.setattr(durable, step, _fail(code, step))
    with pytest.raises(StoreError):
        backup.restore(path)
    assert folder_state(str(tmp_path)) == before
    monkeypatch.undo()
    assert backup.restore(path).seq == 3


@pytest.mark.parametrize("step,on_call", [("fsync", 2), ("write_all", 2), ("replace", 2), ("write_all", 3)])
def test_injected_fault_in_init_creates_nothing(tmp_path, monkeypatch, step, on_call):
    """fsync 2 is the folder's after the ledger is linked in; write_all 2 and 3 and replace 2 write the heads."""
    craft = tmp_path / "c.yaml"
    craft.write_text(CRAFT_YAML)
    before = folder_state(str(tmp_path))
    monkeypatch.setattr(durable, step, _fail(errno.EIO, step, on_call))
    code, _, err = run("--ledger", str(tmp_path / "l.json"), "init", "--craft", str(craft))
    assert code == 2 and "Input/output error" in err
    assert folder_state(str(tmp_path)) == before
    monkeypatch.undo()
    assert run("--ledger", str(tmp_path / "l.json"), "init", "--craft", str(craft))[0] == 0
