"""Fleet figures (issue 15, point 4): `propledger fleet --json` over 500 craft x 2,000 entries and 50 craft x
20,000 entries, cold and cached, with peak memory, against opening the craft one by one.

Run:  python benchmarks/fleet_bench.py [--small] [--folder DIR] [--sample 10]
Targets: the fleet table <= 2 s when every row is cached and unchanged; <= 30 s cold on 2 cores; memory
<= 1 GB. The ledgers are generated once into DIR (default a temporary folder, removed afterwards; with
--folder they are kept and reused). Each measured run is a fresh `propledger fleet --json` process.

States measured:
  cold        no cache of any kind: every ledger is parsed, its chain verified and its 10,000-sample Monte
              Carlo run (in 2 worker processes)
  rows cold   the fleet cache removed, each ledger's own side caches (verified mark, Monte Carlo) kept:
              what the fleet costs on top of ledgers whose status was already read
  cached      every row from the fleet cache (the SHA-256 of every ledger file is still taken)
Baseline: `propledger status --json` run once per craft (one process each), timed on --sample craft in the
same two states and scaled to the whole fleet; ratio = baseline / fleet.
"""
from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import replace

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

from core_bench import CRAFT, T0, history  # noqa: E402
from ledger.core.codec import craft_to_dict  # noqa: E402
from ledger.services.fleet import CACHE_NAME, FolderSource  # noqa: E402
from ledger.services.records import make_record  # noqa: E402
from ledger.store.ledgerfile import LedgerFile  # noqa: E402

SIDE = (".key", ".verified", ".confidence-cache.json")
RUNNER = """
import json, os, resource, sys, threading, time

def pss_kb(pid):
    try:
        with open(f"/proc/{pid}/smaps_rollup") as fh:
            return sum(int(line.split()[1]) for line in fh if line.startswith("Pss:"))
    except OSError:
        return 0

def tree(root):
    pids = [root]
    for name in os.listdir("/proc"):
        if name.isdigit():
            try:
                with open(f"/proc/{name}/stat") as fh:
                    if int(fh.read().rsplit(")", 1)[1].split()[1]) == root:
                        pids.append(int(name))
            except (OSError, ValueError, IndexError):
                pass
    return pids

peak = [0]
done = threading.Event()
def sample():
    me = os.getpid()
    while not done.wait(0.1):
        peak[0] = max(peak[0], sum(pss_kb(p) for p in tree(me)))
threading.Thread(target=sample, daemon=True).start()
t = time.perf_counter()
from ledger.cli import main
import io, contextlib
buf = io.StringIO()
with contextlib.redirect_stdout(buf):
    code = main(sys.argv[1:])
wall = time.perf_counter() - t
done.set()
me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
print(json.dumps({"code": code, "wall": wall, "peak_kb": peak[0],
                  "cpu": me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime, "bytes": len(buf.getvalue())}))
"""


def env() -> dict:
    e = dict(os.environ, PYTHONPATH=ROOT)
    e.pop("PYTHONDONTWRITEBYTECODE", None)  # compiled bytecode cached, as an installed program runs
    return e


def ledgers(folder: str) -> list[str]:
    return FolderSource(folder).members() if os.path.isdir(folder) else []


def generate(folder: str, craft: int, entries: int) -> None:
    """``craft`` ledgers of ``entries`` entries each (skipped when already there)."""
    os.makedirs(folder, exist_ok=True)
    have = len(ledgers(folder))
    if have == craft:
        return
    t = time.perf_counter()
    steps = history(entries)
    for c in range(have, craft):
        path = os.path.join(folder, f"craft-{c:04d}.json")
        lf = LedgerFile.create(path, craft_to_dict(replace(CRAFT, name=f"Bench {c:04d}")),
                               "2023-11-14T00:00:00Z", "bench")
        lf.append_many([make_record(k, T0 + 600.0 * i, T0 + 600.0 * i, "bench", None, d)
                        for i, (k, d) in enumerate(steps)])
    from ledger.store import durable  # noqa: PLC0415

    durable._CACHE.clear()  # the documents just written: not to be carried into the measured processes
    print(f"  generated {craft - have} ledgers of {entries} entries in {time.perf_counter() - t:.0f} s", flush=True)


def clear(folder: str, side: bool, fleet_cache: bool, only: list[str] | None = None) -> None:
    for path in only or ledgers(folder):
        if side:
            for suffix in SIDE:
                if os.path.exists(path + suffix):
                    os.unlink(path + suffix)
    if fleet_cache:
        for p in (os.path.join(folder, CACHE_NAME), os.path.join(folder, CACHE_NAME + ".key")):
            if os.path.exists(p):
                os.unlink(p)


def measure(args: list[str]) -> dict:
    load = os.getloadavg()[0]
    proc = subprocess.run([sys.executable, "-c", RUNNER, *args], capture_output=True, text=True, env=env(),
                          cwd=ROOT)
    if proc.returncode != 0:
        raise SystemExit(proc.stderr)
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    out["load"] = (load + os.getloadavg()[0]) / 2  # the machine's load average around the run
    return out


def timed_cli(args: list[str]) -> float:
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "ledger", *args], capture_output=True, check=True, env=env(), cwd=ROOT)
    return time.perf_counter() - t


def one_fleet(folder: str, craft: int, entries: int, sample: int) -> dict:
    generate(folder, craft, entries)
    cmd = ["fleet", "--fleet", folder, "--json"]
    clear(folder, side=True, fleet_cache=True)
    cold = measure(cmd)
    clear(folder, side=False, fleet_cache=True)
    rows_cold = measure(cmd)
    cached = min((measure(cmd) for _ in range(3)), key=lambda r: r["wall"])
    table = min(timed_cli(["fleet", "--fleet", folder, "--print"]) for _ in range(3))
    picks = ledgers(folder)[:sample]
    clear(folder, side=True, fleet_cache=False, only=picks)
    one_cold = sum(timed_cli(["--ledger", p, "status", "--json"]) for p in picks) / len(picks)
    one_warm = sum(timed_cli(["--ledger", p, "status", "--json"]) for p in picks) / len(picks)
    return {"craft": craft, "entries": entries, "cold": cold, "rows_cold": rows_cold, "cached": cached,
            "table_s": table, "one_cold": one_cold * craft, "one_warm": one_warm * craft}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small", action="store_true", help="20 x 2,000 and 4 x 20,000 entries (a quick look)")
    ap.add_argument("--folder", help="keep the generated ledgers here and reuse them next time")
    ap.add_argument("--sample", type=int, default=10, help="craft timed one by one for the baseline")
    a = ap.parse_args()
    sizes = [(20, 2000), (4, 20000)] if a.small else [(500, 2000), (50, 20000)]
    base = a.folder or tempfile.mkdtemp(prefix="propledger-fleet-bench-")
    print(f"Python {sys.version.split()[0]}, {os.cpu_count()} cores, load {os.getloadavg()[0]:.1f}; ledgers in {base}")
    results = []
    try:
        for craft, entries in sizes:
            results.append(one_fleet(os.path.join(base, f"{craft}x{entries}"), craft, entries, min(a.sample, craft)))
    finally:
        if not a.folder:
            shutil.rmtree(base, ignore_errors=True)
    print("wall s of one `propledger fleet --json` process; cpu s = its processor time with its workers;")
    print("MB = peak proportional set size (PSS, shared pages split) of the process and its workers, sampled every")
    print("0.1 s; one-by-one = `status --json` once per craft (timed on a sample, scaled to the fleet)")
    print("load = 1-minute load average around the run (2 cores: above 2, the wall time waits for the cores)")
    print("  craft  entries  state      wall s   cpu s      MB  load  one-by-one s   ratio")
    for r in results:
        for state, one in (("cold", r["one_cold"]), ("rows cold", r["one_warm"]), ("cached", r["one_warm"])):
            m = r[state.replace(" ", "_")]
            mb = m["peak_kb"] / 1024
            print(f"  {r['craft']:5d}  {r['entries']:7d}  {state:9s} {m['wall']:7.2f} {m['cpu']:7.1f} {mb:7.0f} "
                  f"{m['load']:5.1f} "
                  f"{one:13.1f} {one / m['wall']:6.1f}x")
        print(f"  {r['craft']:5d}  {r['entries']:7d}  text table (whole command, cached) {r['table_s']:.2f} s")
    print("targets: cached <= 2 s; cold <= 30 s on 2 cores; memory <= 1 GB")


if __name__ == "__main__":
    main()
