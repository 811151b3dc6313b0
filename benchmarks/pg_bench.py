"""The PostgreSQL store beside the ledger file: one append to a large craft, and `propledger status`.

Run:  python benchmarks/pg_bench.py [--append-size 100000] [--status-size 20000] [--appends 30]
Starts a throwaway cluster (tests/pg/cluster.py: initdb/pg_ctl in a temporary folder, Unix socket only,
as the postgres user when run as root) and removes it at the end.
Targets (issue 13): an append to a 100k-entry craft in the database <= 5 ms median; `status` at 20k
entries no slower than the file store. The floor is a plain INSERT ... COMMIT of the same row into a table
without triggers, on the same server, in the same run.
"""
from __future__ import annotations

import argparse
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "tests", "pg"))

from cluster import OWNER, start_cluster  # noqa: E402

from benchmarks.core_bench import CRAFT, T0, best, best_child, history  # noqa: E402
from ledger import __version__  # noqa: E402
from ledger.core.codec import craft_to_dict  # noqa: E402
from ledger.services.records import make_record  # noqa: E402
from ledger.store import pgschema  # noqa: E402
from ledger.store.chain import GENESIS_PREV, digest  # noqa: E402
from ledger.store.ledgerfile import SCHEMA, LedgerFile  # noqa: E402
from ledger.store.pgstore import PgStore  # noqa: E402


def chain(n: int) -> tuple[dict, list[dict]]:
    """A craft link and n linked entries, as the stores write them."""
    meta = {"schema": SCHEMA, "program": f"propledger {__version__}", "created": "2023-01-01T00:00:00Z",
            "by": "bench", "craft": craft_to_dict(CRAFT), "prev": GENESIS_PREV}
    meta["hash"] = prev = digest(meta)
    host, program = socket.gethostname(), f"propledger {__version__}"
    out = []
    for i, (k, d) in enumerate(history(n)):
        rec = make_record(k, T0 + 600.0 * i, T0 + 600.0 * i, "bench", "", d)
        rec.update(seq=i + 1, prev=prev, host=host, program=program)
        rec["hash"] = prev = digest(rec)
        out.append(rec)
    return meta, out


def median_append(store, count: int) -> float:
    rec = make_record("use", T0, T0, "bench", "", {"engine": "cg", "propellant": 0.0004})
    times = []
    for _ in range(count):
        t = time.perf_counter()
        store.append(rec)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def median_floor(conninfo: str, count: int) -> float:
    """A plain INSERT ... COMMIT of the same row (no triggers, no chain, no lock), synchronous commit on."""
    import orjson  # noqa: PLC0415
    import psycopg  # noqa: PLC0415

    rec = make_record("use", T0, T0, "bench", "", {"engine": "cg", "propellant": 0.0004})
    body = orjson.dumps(dict(rec, seq=1, prev="0" * 64, hash="0" * 64)).decode()
    with psycopg.connect(conninfo, autocommit=True) as conn:
        conn.execute("SET synchronous_commit = on")
        conn.execute("CREATE TABLE IF NOT EXISTS bench_floor (seq bigserial PRIMARY KEY, body json NOT NULL)")
        times = []
        for _ in range(count):
            t = time.perf_counter()
            with conn.transaction():
                conn.execute("INSERT INTO bench_floor (body) VALUES (%s::json)", [body])
            times.append(time.perf_counter() - t)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--append-size", type=int, default=100_000)
    ap.add_argument("--status-size", type=int, default=20_000)
    ap.add_argument("--appends", type=int, default=30)
    args = ap.parse_args()
    cluster = start_cluster()
    try:
        url0 = cluster.url(user=OWNER, craft="setup")
        PgStore.adopt(url0, *chain(0))
        cluster.psql(pgschema.GRANTS.format(role="pl_ops"), user=OWNER)
        with tempfile.TemporaryDirectory() as folder:
            rows = []
            for label, n in (("append", args.append_size), ("status", args.status_size)):
                meta, records = chain(n)
                path = os.path.join(folder, f"{label}-{n}.ledger.json")
                url = cluster.url(craft=f"{label}{n}")
                t = time.perf_counter()
                LedgerFile.adopt(path, meta, records)
                t_file = time.perf_counter() - t
                t = time.perf_counter()
                PgStore.adopt(url, meta, records)
                t_db = time.perf_counter() - t
                rows.append((label, n, path, url, t_file, t_db))
            print(f"{'':34} {'file':>10} {'database':>10} {'floor':>10} {'db/file':>8} {'db/floor':>9}")
            for label, n, path, url, t_file, t_db in rows:
                print(f"{'copy in ' + format(n, ',') + ' entries, s':34} {t_file:>10.2f} {t_db:>10.2f}")
            label, n, path, url, *_ = rows[0]
            a_file = median_append(LedgerFile(path), max(5, args.appends // 3))
            store = PgStore(url)
            store.append(make_record("mass", T0, T0, "bench", "", {"delta": -0.001}))  # connect, warm
            a_db = median_append(store, args.appends)
            floor = median_floor(PgStore(url0).conninfo, args.appends)  # the owner may create a plain table
            print(f"{'append at ' + format(n, ',') + ', median ms':34} {1e3 * a_file:>10.2f} {1e3 * a_db:>10.2f} "
                  f"{1e3 * floor:>10.2f} {a_db / a_file:>7.3f}x {a_db / floor:>8.1f}x")
            label, n, path, url, *_ = rows[1]
            env = dict(os.environ, PYTHONPATH=ROOT)
            env.pop("PYTHONDONTWRITEBYTECODE", None)
            times = {}
            for name, where in (("file", path), ("database", url)):
                cmd = [sys.executable, "-m", "ledger", "--ledger", where, "status", "--json"]
                subprocess.run(cmd, env=env, capture_output=True, check=True)  # Monte Carlo cached, marks sealed
                times[name] = best_child(cmd, env, repeat=5)
            (f_wall, f_cpu), (d_wall, d_cpu) = times["file"], times["database"]
            print(f"{'status --json at ' + format(n, ',') + ', best s':34} {f_wall:>10.3f} {d_wall:>10.3f} "
                  f"{'':>10} {d_wall / f_wall:>7.2f}x")
            print(f"{'  its cpu s':34} {f_cpu:>10.3f} {d_cpu:>10.3f}")
            from ledger.store import durable  # noqa: PLC0415

            def read_file():  # as a fresh process reads it: without this process's cache of the parsed file
                durable._CACHE.clear()
                LedgerFile(path).read()
            t_rf = best(read_file)
            dbs = PgStore(url)
            dbs.read()
            t_rd = best(lambda: dbs.read())
            print(f"{'  read in-process, best ms':34} {1e3 * t_rf:>10.1f} {1e3 * t_rd:>10.1f} {'':>10} "
                  f"{t_rd / t_rf:>7.2f}x")
            t_bare, c_bare = best_child([sys.executable, "-c", "pass"], env, repeat=5)
            t_imp, c_imp = best_child([sys.executable, "-c", "import psycopg"], env, repeat=5)
            print(f"{'  importing psycopg, s (cpu)':34} {'':>10} {t_imp - t_bare:>10.3f} ({c_imp - c_bare:.3f} cpu)")
        print(f"targets: database append at {args.append_size:,} <= 5 ms median "
              f"({'met' if a_db <= 0.005 else 'NOT met'}); status at {args.status_size:,} no slower than the file "
              f"({'met' if d_wall <= f_wall * 1.05 else 'NOT met'}, 5% allowed for noise)")
    finally:
        cluster.destroy()


if __name__ == "__main__":
    main()
