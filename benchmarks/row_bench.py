"""What one cold fleet row costs in CPU (issue 15, point 4), split into the Monte Carlo sampler and the rest,
with the rest's faster passes timed against the general forms they replace, in the same process.

Run:  python benchmarks/row_bench.py [--entries 2000 20000] [--rows 9] [--folder DIR]
A cold row: no verified mark, no Monte Carlo cache, the ledger not yet parsed in this process (what each
of the fleet's worker processes does per craft). Each row runs in this process, one thread (as in a worker),
on ledgers generated with the fleet benchmark's mix (``fleet_bench.generate``); figures are the median
processor time (time.process_time) over ``--rows`` rows. Target context: 500 x 2,000 and 50 x 20,000 cold
in <= 30 s on 2 cores, so about 0.12 s and 1.2 s of CPU per row with everything else included.

Baselines in the same process (same inputs, same answers checked equal):
  low bounds      ``np.quantile(x, 1 - c, method="lower")`` on the same columns, twice per column as before
  capability      ``capability.dv_available_many`` / ``dv_free_many`` per engine on the (S, tanks) samples
  stored times    ``datetime.fromisoformat(...).timestamp()`` one by one (the reference reading)
"""
from __future__ import annotations

import argparse
import glob
import os
import shutil
import statistics
import sys
import tempfile
import time
from datetime import datetime

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import numpy as np  # noqa: E402

SIDE = (".key", ".verified", ".confidence-cache.json")


def _clean(path: str) -> None:
    for suffix in SIDE:
        if os.path.exists(path + suffix):
            os.unlink(path + suffix)


def _cpu(fn, reps: int) -> float:
    """Median processor time of ``fn()`` over ``reps`` calls."""
    out = []
    for _ in range(reps):
        t = time.process_time()
        fn()
        out.append(time.process_time() - t)
    return statistics.median(out)


def rows(paths: list[str], n: int) -> tuple[float, float]:
    """Median cold row CPU and the median CPU of its sampler (``montecarlo.simulate``)."""
    from ledger.core import montecarlo
    from ledger.services import fleet

    fleet._worker_init()
    spent = [0.0]
    real = montecarlo.simulate

    def timed(*a, **k):
        t = time.process_time()
        try:
            return real(*a, **k)
        finally:
            spent[0] += time.process_time() - t

    montecarlo.simulate = timed
    try:
        _clean(paths[0])
        fleet.row_for_path(paths[0])  # this process's one-off imports and first calls
        total, sampler = [], []
        for i in range(n):
            p = paths[i % len(paths)]
            _clean(p)
            spent[0] = 0.0
            t = time.process_time()
            row = fleet.row_for_path(p)
            total.append(time.process_time() - t)
            sampler.append(spent[0])
            assert row["state"] == "ok", row["error"]
    finally:
        montecarlo.simulate = real
    return statistics.median(total), statistics.median(sampler)


def passes(path: str, reps: int) -> list[tuple[str, float, float]]:
    """(name, ms now, ms of the general form) for the passes with an in-process baseline."""
    from ledger.core import capability as cap
    from ledger.core import sampled
    from ledger.services import uncertainty
    from ledger.services.ledger import Ledger
    from ledger.services.records import _epochs
    from ledger.store.ledgerfile import forget

    snap = Ledger(path).snapshot()
    s = uncertainty.run(snap)
    craft = snap.craft
    usable, avail, free = sampled.capability_samples(craft, s)
    columns = [usable[:, i] for i in range(usable.shape[1])] + [free[:, i] for i in range(free.shape[1])] \
        + [avail[:, i] for i in range(avail.shape[1])]

    def lows_now():
        return [sampled.low_bound(x, 0.99) for x in columns]

    def lows_before():  # the status took the usable and dv free columns' quantile twice
        twice = [float(np.quantile(x, 0.01, method="lower")) for x in columns[:usable.shape[1] + free.shape[1]]]
        return [float(np.quantile(x, 0.01, method="lower")) for x in columns] + twice

    def cap_before():
        a = np.empty(s.ve.shape)
        f = np.empty(s.ve.shape)
        for e in range(len(craft.engines)):
            a[:, e], _ = cap.dv_available_many(craft, s.mass_kg, s.remaining_kg, e, ve=s.ve, frac=s.frac)
            fe, _, _ = cap.dv_free_many(craft, s.mass_kg, s.remaining_kg, e, ve=s.ve, frac=s.frac)
            f[:, e] = np.minimum(fe, a[:, e])
        return np.maximum(0.0, s.remaining_kg - craft.residuals()), a, f

    texts = [e for e in (r["at"] for r in Ledger(path).file.read()[1])]

    def times_before():
        return [datetime.fromisoformat(t.replace("Z", "+00:00")).timestamp() for t in texts]

    assert lows_now() == lows_before()[:len(columns)]
    assert all(np.array_equal(x, y) for x, y in zip(sampled.capability_samples(craft, s), cap_before()))
    assert _epochs(texts) == times_before()
    forget(path)
    return [("low bounds (a status's)", _cpu(lows_now, reps) * 1e3, _cpu(lows_before, reps) * 1e3),
            ("capability per sample", _cpu(lambda: sampled.capability_samples(craft, s), reps) * 1e3,
             _cpu(cap_before, reps) * 1e3),
            ("stored times (one field)", _cpu(lambda: _epochs(texts), reps) * 1e3, _cpu(times_before, reps) * 1e3)]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--entries", type=int, nargs="+", default=[2000, 20000])
    ap.add_argument("--rows", type=int, default=9, help="cold rows timed per size (median)")
    ap.add_argument("--folder", help="keep the generated ledgers here and reuse them next time")
    a = ap.parse_args()
    import fleet_bench  # noqa: PLC0415

    base = a.folder or tempfile.mkdtemp(prefix="propledger-row-bench-")
    print(f"Python {sys.version.split()[0]}, {os.cpu_count()} cores, load {os.getloadavg()[0]:.1f}; ledgers in {base}")
    print("cold row = one craft's fleet row from nothing, in one process and thread (median CPU s)")
    print(" entries  row cpu s  sampler s  rest s   (rest = parse, chain check, replay, status, confidence pass)")
    found = []
    try:
        for n in a.entries:
            folder = os.path.join(base, f"3x{n}")
            fleet_bench.generate(folder, 3, n)
            paths = sorted(glob.glob(os.path.join(folder, "craft-[0-9][0-9][0-9][0-9].json")))
            total, sampler = rows(paths, a.rows)
            print(f" {n:7d}  {total:9.3f}  {sampler:9.3f}  {total - sampler:6.3f}", flush=True)
            found.append((n, paths))
        print("passes of the rest against the general forms they replace (same answers; median ms over 15 calls):")
        print(" entries  pass                        now ms  before ms   ratio")
        for n, paths in found:
            for name, now, before in passes(paths[0], 15):
                print(f" {n:7d}  {name:26s} {now:7.2f}  {before:9.2f}  {before / now:5.1f}x")
    finally:
        if not a.folder:
            shutil.rmtree(base, ignore_errors=True)
    print("targets (issue 15): 500 x 2,000 and 50 x 20,000 cold in <= 30 s on 2 cores (about 0.12 s and 1.2 s CPU "
          "per row, the pool and the fleet cache included)")


if __name__ == "__main__":
    main()
