"""Writer processes for the fault and load tests: append entries through the store's one write path and
print 'seq hash' for each append once it has returned (committed: acknowledged), one write per line.

    python tests/pg/writer.py URL N [TAG]             N appends, then exit
    python tests/pg/writer.py --kill URL CYCLES SEED  CYCLES times: fork a writer, kill -9 it at a random moment

The kill mode imports once and forks each writer (the parent never connects), so a hundred kill cycles
cost forks, not interpreter starts.
"""
from __future__ import annotations

import os
import random
import signal
import sys
import time


def record(note: str) -> dict:
    """A mass-change entry as services.records.make_record writes it (without importing numpy)."""
    stamp = time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime()) + ".000000Z"
    return {"kind": "mass", "at": stamp, "recorded": stamp, "by": "tester", "note": note, "data": {"delta": -0.001}}


def kill_cycles(url: str, cycles: int, seed: int) -> int:
    import psycopg  # noqa: F401,PLC0415 - imported before the forks (the store imports it only to write)

    from ledger.store.pgstore import PgStore  # noqa: PLC0415

    rnd = random.Random(seed)
    for c in range(cycles):
        pid = os.fork()
        if pid == 0:  # the writer: appends until it is killed
            try:
                store = PgStore(url, lock_timeout=60.0)
                for i in range(100000):
                    stored = store.append(record(f"k{seed}-{c}-{i}"))
                    os.write(1, f"{stored['seq']} {stored['hash']}\n".encode())
            finally:
                os._exit(1)
        time.sleep(rnd.uniform(0.01, 0.3))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
    os.write(1, f"cycles {cycles}\n".encode())
    return 0


def main() -> int:
    if sys.argv[1] == "--kill":
        return kill_cycles(sys.argv[2], int(sys.argv[3]), int(sys.argv[4]))
    url, n = sys.argv[1], int(sys.argv[2])
    tag = sys.argv[3] if len(sys.argv) > 3 else "w"
    from ledger.store.pgstore import PgStore  # noqa: PLC0415

    store = PgStore(url, lock_timeout=60.0)
    print("ready", flush=True)
    for i in range(n):
        stored = store.append(record(f"{tag}-{i}"))
        sys.stdout.write(f"{stored['seq']} {stored['hash']}\n")
        sys.stdout.flush()
    return 0


if __name__ == "__main__":
    sys.exit(main())
