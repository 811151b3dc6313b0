"""kill -9 of a writer at random moments during appends (and backups): every acknowledged entry is present
afterwards, the file always opens, the chain always verifies, every kept backup is good.
30 cycles by default; 200 with PROPLEDGER_SOAK=1, or run the ``soak`` test with ``-m soak``.
(Method: docs/sources.md §8; SQLite's crash testing, "How SQLite Is Tested", does the same.)"""
from __future__ import annotations

import os
import random
import signal
import time

import pytest
from faultkit import acks, make_ledger, spawn

from ledger.services.ledger import Ledger
from ledger.store import backup, durable
from ledger.store.ledgerfile import LedgerFile

CYCLES = 200 if os.environ.get("PROPLEDGER_SOAK") else 30


def kill_cycles(folder: str, cycles: int, seed: int) -> None:
    path = make_ledger(folder)
    rng = random.Random(seed)
    acknowledged: dict[int, str] = {}
    for cycle in range(cycles):
        proc = spawn("kill", path, f"w{cycle}")
        assert proc.stdout.readline() == "ready\n", proc.stderr.read()
        time.sleep(rng.uniform(0.005, 0.3))
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait()
        out, err = proc.stdout.read(), proc.stderr.read()
        proc.stdout.close()
        proc.stderr.close()
        assert "Traceback" not in err, f"cycle {cycle} (seed {seed}): the writer failed: {err}"
        acknowledged.update(acks(out))
        lf = LedgerFile(path)
        assert lf.verify() is None, f"cycle {cycle} (seed {seed}): chain does not verify"
        stored = {r["seq"]: r["hash"] for r in lf.records()}
        missing = {s for s, h in acknowledged.items() if stored.get(s) != h}
        assert not missing, f"cycle {cycle} (seed {seed}): acknowledged entries lost or changed: {sorted(missing)}"
        if cycle % 10 == 9:
            Ledger(path).snapshot()  # the whole service layer reads it (slower, so not every cycle)
        for b in backup.list_backups(path):
            backup.inspect_backup(b)  # raises if a kill left a partial backup under a backup's name
    assert len(acknowledged) > cycles  # the writers did get work done between kills
    LedgerFile(path).append(Ledger(path).file.records()[-1] | {"note": "after the storm"})
    assert not [n for n in os.listdir(folder) if n.endswith(durable.TMP_SUFFIX)]


def test_kill9_during_appends(tmp_path):
    kill_cycles(str(tmp_path), CYCLES, seed=int(os.environ.get("PROPLEDGER_SEED", "20260501")))


@pytest.mark.soak
def test_kill9_soak(tmp_path, request):
    if "soak" not in (request.config.getoption("-m") or ""):
        pytest.skip("the 200-cycle soak runs with -m soak (or set PROPLEDGER_SOAK=1 for the main test)")
    kill_cycles(str(tmp_path), 200, seed=int(time.time()))
