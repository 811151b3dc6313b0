"""Core figures: replay (scan vs per-entry loop), `propledger status` wall time, durable append vs sqlite3.

Run:  python benchmarks/core_bench.py [--sizes 1000 20000 100000]
Targets (issue 2): replay of 100k entries <= 50 ms; `propledger status` on 20k <= 0.6 s wall;
one append at 20k entries <= 60 ms. Ratios are against baselines run in the same process.
"""
from __future__ import annotations

import argparse
import os
import resource
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from ledger.core.codec import craft_to_dict  # noqa: E402
from ledger.core.craft import Craft, Engine, Reserve, Tank  # noqa: E402
from ledger.core.entries import Entry  # noqa: E402
from ledger.core.replay import replay, replay_loop, steps_from_events  # noqa: E402
from ledger.services.records import make_record  # noqa: E402
from ledger.store.ledgerfile import LedgerFile  # noqa: E402

T0 = 1_700_000_000.0
CRAFT = Craft("Bench craft", 2000.0,
              (Tank("ox", "MON-3", 1400.0, 10.0), Tank("fuel", "MMH", 850.0, 8.0), Tank("gn2", "nitrogen", 30.0, 1.0)),
              (Engine("main", 318.0, 440.0, {"ox": 1.65, "fuel": 1.0}),
               Engine("thr", 290.0, 20.0, {"ox": 1.65, "fuel": 1.0}, cant_deg=15.0),
               Engine("cg", 68.0, 0.5, {"gn2": 1.0})),
              (Reserve("eol", "thr", 10.0),))


def history(n: int) -> list[tuple[str, dict]]:
    """A plausible mix: small burns by dv and duration, thruster uses, rare mass changes."""
    out = []
    for i in range(n):
        r = i % 10
        if r < 5:
            out.append(("burn", {"engine": "thr", "dv": 0.01 + 0.001 * (i % 7)}))
        elif r < 7:
            out.append(("burn", {"engine": "thr", "duration": 2.0 + (i % 5)}))
        elif r < 9:
            out.append(("use", {"engine": "cg", "propellant": 0.0004}))
        else:
            out.append(("mass", {"delta": -0.001}))
    return out


def entries(n: int) -> list[Entry]:
    return [Entry(i + 1, k, T0 + 600.0 * i, T0 + 600.0 * i, "bench", "", d) for i, (k, d) in enumerate(history(n))]


def best(fn, repeat: int = 5) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def best_child(cmd: list[str], env: dict, repeat: int) -> tuple[float, float]:
    """Best wall time of ``repeat`` runs of a command, and the CPU time (user + system) of that run."""
    best_wall, best_cpu = float("inf"), float("nan")
    for _ in range(repeat):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t = time.perf_counter()
        subprocess.run(cmd, env=env, capture_output=True, check=True)
        wall = time.perf_counter() - t
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        if wall < best_wall:
            best_wall = wall
            best_cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return best_wall, best_cpu


def build_ledger(folder: str, n: int) -> str:
    path = os.path.join(folder, f"bench-{n}.json")
    LedgerFile.create(path, craft_to_dict(CRAFT), "2023-01-01T00:00:00Z", "bench")
    recs = [make_record(k, T0 + 600.0 * i, T0 + 600.0 * i, "bench", "", d) for i, (k, d) in enumerate(history(n))]
    LedgerFile(path).append_many(recs)
    return path


def bench_append(path: str, folder: str, count: int = 20) -> tuple[float, float]:
    lf = LedgerFile(path)
    rec = make_record("use", T0, T0, "bench", "", {"engine": "cg", "propellant": 0.0004})
    times = []
    for _ in range(count):
        t = time.perf_counter()
        lf.append(rec)
        times.append(time.perf_counter() - t)
    db = sqlite3.connect(os.path.join(folder, "baseline.sqlite"))
    db.execute("PRAGMA synchronous=FULL")
    db.execute("CREATE TABLE IF NOT EXISTS e (seq INTEGER PRIMARY KEY, doc TEXT)")
    sq = []
    for i in range(count):
        t = time.perf_counter()
        db.execute("INSERT INTO e (doc) VALUES (?)", (str(rec),))
        db.commit()
        sq.append(time.perf_counter() - t)
    db.close()
    return statistics.median(times), statistics.median(sq)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", type=int, nargs="*", default=[1000, 20000, 100000])
    args = ap.parse_args()
    print("status s = status --json with its Monte Carlo cached; 1st s = the first status after a write")
    print("cpu s = its processor time (user + system); x floor = status against 'python -c \"import numpy\"'")
    print("replay = the prefix scan over the step arrays; +convert = from Entry objects (steps built too)")
    print(f"{'entries':>8} {'replay ms':>10} {'+convert':>9} {'loop ms':>9} {'speed-up':>9} {'status s':>9} "
          f"{'cpu s':>6} {'x floor':>8} {'1st s':>7} {'append ms':>10} {'sqlite ms':>10} {'ratio':>7}")
    t_floor = None
    with tempfile.TemporaryDirectory() as folder:
        for n in args.sizes:
            evs = entries(n)
            steps = steps_from_events(CRAFT, evs)
            t_scan = best(lambda: replay(CRAFT, evs, steps))
            t_full = best(lambda: replay(CRAFT, evs))
            t_loop = best(lambda: replay_loop(CRAFT, evs), repeat=2)
            path = build_ledger(folder, n)
            env = dict(os.environ, PYTHONPATH=ROOT)
            # As an installed program runs: with its compiled bytecode cached (the warm-up run writes it).
            env.pop("PYTHONDONTWRITEBYTECODE", None)
            cmd = [sys.executable, "-m", "ledger", "--ledger", path, "status", "--json"]
            subprocess.run(cmd, env=env, capture_output=True, check=True)  # warm the page cache
            t_status, cpu_status = best_child(cmd, env, repeat=5)
            if t_floor is None:  # the same machine's floor: an interpreter that only imports numpy
                t_floor, _ = best_child([sys.executable, "-c", "import numpy"], env, repeat=5)

            def cold():  # the first status after a write: the Monte Carlo runs, then is cached
                os.unlink(path + ".confidence-cache.json")
                subprocess.run(cmd, env=env, capture_output=True, check=True)
            t_cold = best(cold, repeat=2)
            t_app, t_sql = bench_append(path, folder)
            print(f"{n:>8} {1e3 * t_scan:>10.2f} {1e3 * t_full:>9.2f} {1e3 * t_loop:>9.2f} {t_loop / t_full:>8.1f}x "
                  f"{t_status:>9.3f} {cpu_status:>6.2f} {t_status / t_floor:>7.1f}x {t_cold:>7.3f} "
                  f"{1e3 * t_app:>10.2f} {1e3 * t_sql:>10.3f} {t_app / t_sql:>6.0f}x")
    print(f"floor: {t_floor:.3f} s for an interpreter that imports numpy and exits")
    print("targets: replay 100k <= 50 ms; status 20k <= 0.6 s; append at 20k <= 60 ms")


if __name__ == "__main__":
    main()
