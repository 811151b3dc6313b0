"""Child process for the fault tests (not a test module): appends entries and prints each acknowledged one.

Modes: ``kill PATH TAG`` appends forever (single entries, batches of three, and a backup now and then) until
it is killed; ``count PATH TAG N`` waits for a line on stdin, then appends N entries; ``plan PATH TAG SEQ``
waits for a line on stdin, then logs a burn executing plan SEQ through the service layer.
An acknowledgement ``ack SEQ:HASH ...`` is printed only after the append returned, i.e. after it is durable.
"""
from __future__ import annotations

import sys

from ledger.errors import LedgerError
from ledger.store.backup import make_backup
from ledger.store.ledgerfile import LedgerFile


def record(tag: str, k: int) -> dict:
    """A valid burn record (the shape services.records.make_record gives), built without importing numpy so
    the child is appending within a few tens of milliseconds of its start."""
    at = f"2026-05-01T00:{k // 60 % 60:02d}:{k % 60:02d}Z"
    return {"kind": "burn", "at": at, "recorded": at, "by": tag, "note": f"{tag} {k}",
            "data": {"engine": "rcs", "dv": 0.001}}


def main() -> int:
    mode, path, tag = sys.argv[1:4]
    lf = LedgerFile(path, lock_timeout=120)
    if mode == "kill":
        print("ready", flush=True)
        k = 0
        while True:
            k += 1
            if k % 17 == 0:
                make_backup(path, keep=3)
                continue
            stored = lf.append_many([record(tag, k)] * 3) if k % 5 == 0 else [lf.append(record(tag, k))]
            print("ack " + " ".join(f"{s['seq']}:{s['hash']}" for s in stored), flush=True)
    print("ready", flush=True)
    sys.stdin.readline()
    if mode == "count":
        for k in range(int(sys.argv[4])):
            s = lf.append(record(tag, k))
            print(f"ack {s['seq']}:{s['hash']}", flush=True)
        print("done", flush=True)
        return 0
    if mode == "plan":
        from ledger.services.ledger import Ledger  # noqa: PLC0415

        try:
            s, _ = Ledger(path).record("burn", {"engine": "lae", "dv": 1.0, "plan": sys.argv[4]}, by=tag)
        except LedgerError as exc:
            print(f"refused {exc}", flush=True)
            return 2
        print(f"ack {s['seq']}:{s['hash']}", flush=True)
        return 0
    return 2


if __name__ == "__main__":
    sys.exit(main())
