"""The fleet over a PostgreSQL database: the one listing query, and `propledger fleet --json` cold and cached.

Run:  python benchmarks/pg_fleet_bench.py [--craft 500] [--entries 2000] [--table-craft 50]
Starts a throwaway cluster (tests/pg/cluster.py) and removes it at the end. Every craft holds the same
generated chain (benchmarks/pg_bench.chain) copied in with COPY.

Figures (issue 15, point 4, for a database fleet):
  listing     the one query giving every craft's name and chain head (store/pgfleet.heads), best of 5,
              against the same heads read with one query per craft on the same connection (the baseline)
  cold        `propledger fleet --json` over --table-craft craft with no cache of any kind (every chain read,
              verified and its 10,000-sample Monte Carlo run, in 2 worker processes with their own connections)
  cached      the same command again: every row from the fleet cache (the listing query still runs)
CPU seconds include the child processes (resource.getrusage RUSAGE_CHILDREN), for a loaded machine.
"""
from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "tests", "pg"))

from cluster import OWNER, start_cluster  # noqa: E402

from benchmarks.pg_bench import chain  # noqa: E402
from ledger.store import pgfleet, pgschema  # noqa: E402
from ledger.store.pgstore import PgStore  # noqa: E402


def fill(cluster, db: str, craft: int, entries: int) -> str:
    """A database of ``craft`` craft of ``entries`` entries each; returns the fleet address (alice)."""
    cluster.psql(f"CREATE DATABASE {db} OWNER {OWNER}", db="postgres")
    meta, records = chain(entries)
    PgStore.adopt(cluster.url(db=db, user=OWNER, craft="c0000"), meta, records)
    cluster.psql(pgschema.GRANTS.format(role="pl_ops"), db=db, user=OWNER)
    for i in range(1, craft):
        PgStore.adopt(cluster.url(db=db, user=OWNER, craft=f"c{i:04d}"), meta, records)
    cluster.psql("ANALYZE", db=db)
    return f"postgresql://alice@/{db}?host={cluster.sock}"


def best(fn, repeat: int = 5) -> tuple[float, float]:
    """(best wall s, its CPU s in this process)."""
    out = []
    for _ in range(repeat):
        c, t = time.process_time(), time.perf_counter()
        fn()
        out.append((time.perf_counter() - t, time.process_time() - c))
    return min(out)


def one_by_one(conn, names: list[str]) -> None:
    for n in names:
        conn.execute("SELECT seq, hash FROM propledger.entries WHERE craft = %s ORDER BY seq DESC LIMIT 1",
                     [n]).fetchone()


def timed_fleet(url: str, env: dict) -> tuple[float, float]:
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "ledger", "fleet", "--fleet", url, "--json"], env=env, check=True,
                   capture_output=True)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return wall, (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--craft", type=int, default=500)
    ap.add_argument("--entries", type=int, default=2000)
    ap.add_argument("--table-craft", type=int, default=50)
    args = ap.parse_args()
    cluster = start_cluster()
    try:
        t = time.perf_counter()
        url = fill(cluster, "fleetbig", args.craft, args.entries)
        print(f"copied in {args.craft} craft x {args.entries:,} entries in {time.perf_counter() - t:.1f} s")
        conninfo, shown = pgfleet.parse_fleet_address(url)
        names = sorted(pgfleet.heads(conninfo, shown))
        with pgfleet.connect(conninfo, shown) as conn:
            one = best(lambda: pgfleet.heads_on(conn, shown))
            base = best(lambda: one_by_one(conn, names))  # the same connection: no connect in either
        print(f"{'':42} {'wall ms':>9} {'cpu ms':>8} {'baseline ms':>12} {'ratio':>7}")
        print(f"{'listing of ' + str(len(names)) + ' craft, one query':42} {1e3 * one[0]:>9.1f} {1e3 * one[1]:>8.1f} "
              f"{1e3 * base[0]:>12.1f} {base[0] / one[0]:>6.1f}x")
        small = url if args.table_craft >= args.craft else fill(cluster, "fleettable", args.table_craft, args.entries)
        with tempfile.TemporaryDirectory() as cache:
            env = dict(os.environ, PYTHONPATH=ROOT, XDG_CACHE_HOME=cache)
            env.pop("PYTHONDONTWRITEBYTECODE", None)
            env.pop("PROPLEDGER_FLEET", None)
            cold = timed_fleet(small, env)
            cached = min(timed_fleet(small, env) for _ in range(3))
        print(f"{'':42} {'wall s':>9} {'cpu s':>8}")
        print(f"{'fleet --json, ' + str(args.table_craft) + ' craft, cold':42} {cold[0]:>9.2f} {cold[1]:>8.2f}")
        print(f"{'fleet --json, ' + str(args.table_craft) + ' craft, cached':42} {cached[0]:>9.2f} {cached[1]:>8.2f}"
              f"   cold/cached {cold[0] / cached[0]:.1f}x")
        print(f"load average at the end: {os.getloadavg()[0]:.1f} (a shared machine: compare CPU and ratios)")
    finally:
        cluster.destroy()


if __name__ == "__main__":
    main()
