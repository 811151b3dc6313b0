"""Console benchmark: open a 20k-entry ledger to first full paint, add one entry from a form and time
until every panel is redrawn, and the peak resident memory. Prints the figures (and writes them as
Markdown with --out FILE).

Targets (issue 4): first paint <= 1.5 s; form -> all panels <= 100 ms at 20k entries; RSS <= 300 MB.
Also timed: the low bounds (a 10,000-sample Monte Carlo in a worker, issue 5) after the first paint and
after an entry is added; the forms are used while that worker runs, as they would be.
The form latency is timed inside the app (``LedgerConsole.timings``), because a Pilot key press plus
pause costs about 85 ms by itself. Each run happens in a fresh interpreter so imports are counted.

    python benchmarks/console_bench.py [--entries 20000] [--adds 5] [--out docs/console-bench.md]
"""
from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

CRAFT_YAML = """\
# Benchmark craft (invented): biprop apogee engine on two tanks, hydrazine thrusters on a third.
craft: {name: Bench-20k, dry_mass: 1450 kg}
tanks:
  - {id: ox, fluid: MON-3, load: 620 kg, residual: 6 kg}
  - {id: fuel, fluid: MMH, load: 380 kg, residual: 4 kg}
  - {id: hyd, fluid: hydrazine, load: 90 kg, residual: 1.5 kg}
engines:
  - {id: lae, isp: 318 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
  - {id: rcs, isp: 220 s, thrust: 10 N, feeds: {hyd: 1}, cant: 15 deg}
reserves:
  - {id: disposal, engine: lae, dv: 11 m/s}
  - {id: safe-hold, engine: rcs, dv: 4 m/s}
"""


def build(folder: str, n: int) -> str:
    """A ledger of n entries: thruster pulses with a station-keeping burn every 100th, a few plans."""
    from ledger.services import craftfile
    from ledger.services.ledger import Ledger, create
    from ledger.services.records import make_record

    craft_path = os.path.join(folder, "craft.yaml")
    with open(craft_path, "w", encoding="utf-8") as fh:
        fh.write(CRAFT_YAML)
    path = os.path.join(folder, "bench.ledger.json")
    create(path, craftfile.load_craft(craft_path), by="bench")
    t0 = time.time() - 86400.0 - n * 1800.0  # history ends yesterday: a new entry is logged after it
    recs = []
    for i in range(n - 3):
        t = t0 + i * 1800.0
        if i % 100 == 0:
            recs.append(make_record("burn", t, t, "bench", "station keeping", {"engine": "lae", "dv": 0.05}))
        else:
            recs.append(make_record("use", t, t, "bench", "pulse", {"engine": "rcs", "duration": 0.2}))
    for k in range(3):
        t = t0 + (n + k) * 1800.0
        recs.append(make_record("plan", t, t, "bench", "planned", {"engine": "lae", "dv": 1.0 + k}))
    Ledger(path).file.append_many(recs)
    return path


CHILD = r"""
import asyncio, json, resource, sys, time
T0 = time.perf_counter()
sys.path.insert(0, ROOT)
from ledger.tui.app import make_app
from ledger.tui.dialogs.base import FormDialog
T_IMPORTED = time.perf_counter()

async def main():
    app = make_app(PATH)
    out = {}
    async with app.run_test(size=(160, 48)) as pilot:
        while "first_paint_at" not in app.timings:
            await pilot.pause(0.01)
        out["first_paint_s"] = app.timings["first_paint_at"] - T0
        out["first_paint_cpu_s"] = time.process_time()  # CPU the process used so far: load-independent
        out["import_s"] = T_IMPORTED - T0
        out["mounted_s"] = app.timings["mounted_at"] - T0
        out["first_read_s"] = app.timings["first_read_s"]
        out["read_done_s"] = app.timings["first_read_done_at"] - T0
        while not app.live.verified:
            await pilot.pause(0.02)
        await pilot.pause(0.05)
        out["chain_verified_s"] = time.perf_counter() - T0
        out["entries"] = len(app.snap.entries)
        while app.lows.result is None and app.lows.error is None:
            await pilot.pause(0.02)
        out["lows_ready_s"] = time.perf_counter() - T0
        out["lows_compute_s"] = app.lows.seconds
        out["lows_error"] = app.lows.error
        adds = []
        for k in range(ADDS):
            await pilot.press("u")
            await pilot.pause(0.05)
            assert isinstance(app.screen, FormDialog)
            await pilot.press(*"2", "space", "s")
            await pilot.press("ctrl+s")
            await pilot.pause(0.05)
            assert not isinstance(app.screen, FormDialog), "form did not close"
            adds.append({k: app.timings[k] for k in ("write_s", "apply_s", "record_to_panels_s")})
        out["adds"] = adds
        out["entries_after"] = len(app.snap.entries)
        while app.lows.result is None and app.lows.error is None:
            await pilot.pause(0.02)
        out["lows_after_add_s"] = app.lows.shown_at - app.lows.asked_at  # timed in the app
        out["lows_runs"] = app.lows.runs
        # another process appends: time until the console shows it
        from ledger.services.ledger import Ledger
        other = Ledger(PATH)
        t = time.perf_counter()
        other.record("use", {"engine": "rcs", "duration": 0.3}, by="other")
        written = time.perf_counter()
        while len(app.snap.entries) < out["entries_after"] + 1:
            await pilot.pause(0.01)
        out["outside_append_shown_s"] = time.perf_counter() - written
        out["outside_write_s"] = written - t
    out["peak_rss_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print("RESULT " + json.dumps(out))

asyncio.run(main())
"""


def run_child(path: str, adds: int) -> dict:
    code = CHILD.replace("ROOT", repr(ROOT)).replace("PATH", repr(path)).replace("ADDS", str(adds))
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)  # as an installed program runs: compiled bytecode cached
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env)
    for line in proc.stdout.splitlines():
        if line.startswith("RESULT "):
            return json.loads(line[7:])
    raise SystemExit(f"benchmark child failed:\n{proc.stdout[-2000:]}\n{proc.stderr[-4000:]}")


def report(r: dict, n: int, runs: int) -> str:
    def med(key):
        return statistics.median(a[key] for a in r["adds"]) * 1000.0

    rows = [
        ("entries in the ledger", f"{r['entries']:,}", ""),
        ("start to first full paint (fresh interpreter, imports included)", f"{r['first_paint_s']:.2f} s", "<= 1.5 s"),
        ("  CPU time the process had used by then (what the machine's load cannot inflate)",
         f"{r['first_paint_cpu_s']:.2f} s", ""),
        ("  of which: imports (textual, numpy, the console)", f"{r['import_s']:.2f} s", ""),
        ("  of which: reading and replaying the ledger", f"{r['first_read_s']:.2f} s", ""),
        ("  of which: after the read, drawing every panel", f"{r['first_paint_s'] - r['read_done_s']:.2f} s", ""),
        ("start to hash chain verified (background, after first paint)", f"{r['chain_verified_s']:.2f} s", ""),
        ("form submit -> every panel redrawn (median of "
         f"{len(r['adds'])})", f"{med('record_to_panels_s'):.0f} ms", "<= 100 ms"),
        ("  of which: service write (validate, append, fsync, incremental snapshot)", f"{med('write_s'):.0f} ms", ""),
        ("  of which: redraw of all panels from the new snapshot", f"{med('apply_s'):.0f} ms", ""),
        ("start to low bounds on screen (Monte Carlo worker, after the chain)", f"{r['lows_ready_s']:.2f} s", ""),
        ("  of which: the Monte Carlo run itself (10,000 samples)", f"{r['lows_compute_s']:.2f} s", ""),
        ("low bounds back on screen after the last form's entry (timed in the app)",
         f"{r['lows_after_add_s']:.2f} s", ""),
        ("another process's append shown after", f"{r['outside_append_shown_s'] * 1000:.0f} ms", "<= 2 s"),
        ("peak resident memory", f"{r['peak_rss_mb']:.0f} MB", "<= 300 MB"),
    ]
    lines = ["| measure | value | target |", "|---|---|---|"]
    lines += [f"| {a} | {b} | {c} |" for a, b, c in rows]
    return "\n".join(lines)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--entries", type=int, default=20000)
    ap.add_argument("--adds", type=int, default=5)
    ap.add_argument("--runs", type=int, default=3, help="fresh-interpreter runs; the median run is reported")
    ap.add_argument("--out", help="also write the table as Markdown to this file")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        t = time.perf_counter()
        path = build(folder, args.entries)
        built = time.perf_counter() - t
        size = os.path.getsize(path)
        results = []
        for _ in range(args.runs):
            snap_path = os.path.join(folder, f"run{len(results)}.json")
            with open(path, "rb") as src, open(snap_path, "wb") as dst:
                dst.write(src.read())  # each run starts from the same 20k entries
            results.append(run_child(snap_path, args.adds))
    results.sort(key=lambda r: r["first_paint_s"])
    r = results[len(results) // 2]
    table = report(r, args.entries, args.runs)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    paints = ", ".join(f"{x['first_paint_s']:.2f}" for x in results)
    head = (f"Console benchmark, {time.strftime('%Y-%m-%d')}: Python {platform.python_version()}, "
            f"{os.cpu_count()} cores, load average {load:.1f} at the end; ledger file {size / 1e6:.1f} MB "
            f"(built in {built:.1f} s); median of {args.runs} fresh-interpreter runs (by first paint); "
            f"first paint of each run: {paints} s (best {results[0]['first_paint_s']:.2f} s).")
    print(head)
    print()
    print(table)
    if args.out:
        with open(args.out, "w", encoding="utf-8") as fh:
            fh.write("# Console benchmark\n\n")
            fh.write("Measured with `python benchmarks/console_bench.py --out docs/console-bench.md`.\n\n")
            fh.write(head + "\n\n" + table + "\n")


if __name__ == "__main__":
    main()
