"""Cost of the store's integrity work: append (lock, head check, whole-file durable rewrite), verify and
make_backup, at growing ledger sizes. Run: python benchmarks/store_integrity.py [max_entries]."""
from __future__ import annotations

import os
import sys
import tempfile
import time

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from ledger.store.backup import make_backup  # noqa: E402
from ledger.store.ledgerfile import LedgerFile  # noqa: E402

CRAFT = {"name": "bench", "dry_mass_kg": 1000.0, "tanks": [{"id": "t", "fluid": "N2H4", "load_kg": 100.0,
         "residual_kg": 0.0}], "engines": [{"id": "e", "isp_s": 220.0, "thrust_n": 1.0, "cant_deg": 0.0,
         "feeds": {"t": 1.0}}], "reserves": [], "routine": []}


def record(k: int) -> dict:
    return {"kind": "burn", "at": "2026-01-01T00:00:00Z", "recorded": "2026-01-01T00:00:00Z", "by": "bench",
            "note": f"entry {k}", "data": {"engine": "e", "dv": 0.001}}


def main(limit: int) -> None:
    folder = tempfile.mkdtemp(prefix="propledger-bench-")
    lf = LedgerFile.create(os.path.join(folder, "l.json"), CRAFT, "2026-01-01T00:00:00Z", "bench")
    n, mark = 0, 100
    print("entries  file KB  append ms (median of 20)  verify ms  backup ms")
    while mark <= limit:
        lf.append_many([record(k) for k in range(n, mark - 20)])
        n = mark - 20
        times = []
        for _ in range(20):
            t = time.perf_counter()
            lf.append(record(n))
            times.append(time.perf_counter() - t)
            n += 1
        t = time.perf_counter()
        assert lf.verify() is None
        verify_ms = (time.perf_counter() - t) * 1e3
        t = time.perf_counter()
        make_backup(lf.path, keep=2)
        backup_ms = (time.perf_counter() - t) * 1e3
        print(f"{n:7d}  {os.path.getsize(lf.path) / 1024:7.0f}  {sorted(times)[10] * 1e3:24.1f}  {verify_ms:9.1f}"
              f"  {backup_ms:9.1f}")
        mark *= 10


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000)
