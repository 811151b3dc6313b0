"""Blowdown figures: a 20k-entry ledger whose two hydrazine blowdown tanks feed two engines with
performance tables against feed pressure, against the same ledger with constant performance (today's
prefix scan) in the same process.

Run:  python benchmarks/blowdown_bench.py [--entries 20000] [--samples 10000]
Targets (issue 12 point 6): status <= 0.6 s warm; the 10,000-sample Monte Carlo <= 3 s and <= 1 GB.
The blowdown ledger's Monte Carlo is ``core.mcblowdown`` (each sample's feedback through its own feed
pressure, linearised on the nominal path); the constant one is today's ``core.montecarlo``. Wall times on a
shared machine move from run to run: compare the CPU seconds and the ratios.
"""
from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from dataclasses import replace

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from ledger.core.codec import craft_to_dict  # noqa: E402
from ledger.core.craft import Craft, Engine, Performance, Pressurant, Reserve, Tank  # noqa: E402
from ledger.services.records import make_record  # noqa: E402
from ledger.store.ledgerfile import LedgerFile  # noqa: E402
from core_bench import best_child  # noqa: E402  (best wall and its CPU, as in the core benchmark)

T0 = 1_700_000_000.0
OCM = Performance((5.5e5, 10e5, 15e5, 22e5), (22.4, 41.4, 61.3, 88.0), (204.5, 218.3, 226.4, 231.5))
RCS = Performance((5.5e5, 10e5, 15e5, 22e5), (0.51, 0.94, 1.39, 2.0), (185.5, 198.0, 205.4, 210.0))


def craft(tables: bool) -> Craft:
    from ledger import realgas  # CoolProp, once, to tabulate the pressurant (as `propledger init` does)

    tanks = []
    for tid, p in (("hz-1", 22.0e5), ("hz-2", 21.8e5)):
        t = Tank(tid, "hydrazine", 57.0, 1.9, 0.079, Pressurant("helium", p, 293.15), load_sigma_kg=0.06)
        tanks.append(replace(t, gas_table=realgas.gas_table(t)))
    feeds = {"hz-1": 1.0, "hz-2": 1.0}
    ocm = Engine("ocm", 231.5, 88.0, feeds, cant_deg=10.0, isp_sigma_s=3.0, performance=OCM if tables else None,
                 qualified_pressure_pa=(5.5e5, 24e5))
    rcs = Engine("rcs", 210.0, 2.0, feeds, isp_sigma_s=10.0, performance=RCS if tables else None)
    return Craft("Blowdown bench", 226.4, tuple(tanks), (ocm, rcs), (Reserve("disposal", "ocm", 28.0),))


def history(n: int) -> list[tuple[str, dict]]:
    """Attitude firings by duration and by propellant, small orbit burns by dv and by duration, rare
    mass changes: about 60 kg of the 114 kg loaded over 20k entries."""
    out = []
    for i in range(n):
        r = i % 10
        if r < 4:
            out.append(("use", {"engine": "rcs", "duration": 0.5 + 0.25 * (i % 5)}))
        elif r < 6:
            out.append(("use", {"engine": "rcs", "propellant": 0.002}))
        elif r < 8:
            out.append(("burn", {"engine": "ocm", "dv": 0.02 + 0.002 * (i % 7)}))
        elif r < 9:
            out.append(("burn", {"engine": "ocm", "duration": 0.1 + 0.02 * (i % 5)}))
        else:
            out.append(("mass", {"delta": -0.0005}))
    return out


def build(folder: str, name: str, c: Craft, n: int) -> str:
    path = os.path.join(folder, f"{name}.json")
    LedgerFile.create(path, craft_to_dict(c), "2023-01-01T00:00:00Z", "bench")
    recs = [make_record(k, T0 + 600.0 * i, T0 + 600.0 * i, "bench", "", d) for i, (k, d) in enumerate(history(n))]
    LedgerFile(path).append_many(recs)
    return path


MC_CHILD = """
import json, resource, sys, time
sys.path.insert(0, {root!r})
from ledger.services.ledger import Ledger
from ledger.services import uncertainty
t = time.perf_counter(); snap = Ledger({path!r}).snapshot(); t_snap = time.perf_counter() - t
passes = snap.blowdown.flown.passes if snap.blowdown is not None and snap.blowdown.flown is not None else 0
t = time.perf_counter(); c = time.process_time()
s = uncertainty.run(snap, samples={samples})
wall, cpu = time.perf_counter() - t, time.process_time() - c
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
import tracemalloc
tracemalloc.start(); snap2 = Ledger({path!r}).snapshot(); tracemalloc.reset_peak()
uncertainty.run(snap2, samples={samples}); mc_peak = tracemalloc.get_traced_memory()[1] / 2**20; tracemalloc.stop()
err = None
if passes:  # the linearisation against the exact replay of {exact} perturbed samples (core.mcblowdown.exact_sample)
    import numpy as np
    from ledger.core import mcblowdown as mb
    from ledger.core.montecarlo import _globals
    v, c = snap.blowdown, snap.craft
    lin = mb.linearise(c, v.model, v.events, snap.replay, v.flown)
    rng = np.random.default_rng(1)
    dry, loads, isp, thrust = _globals(c, rng, {exact})
    phi, psi = mb.factors(c, isp, thrust)
    ds0 = np.hstack([(dry - c.dry_mass_kg + (loads - c.loads()).sum(axis=1))[:, None], loads - c.loads()])
    z = rng.standard_normal(({exact}, len(v.events)))
    got = lin.final(ds0, phi, psi, z)
    err = []
    for k in range({exact}):
        r = mb.exact_sample(c, v.events, v.flown.temperatures, ds0[k], thrust[k] / [e.thrust_n for e in c.engines],
                            isp[k] / [e.isp_s for e in c.engines], z[k])
        exact = np.concatenate([[r.mass_kg], r.remaining_kg])
        err.append([float(np.abs(got[k] - exact).max()), float(np.abs(exact - lin.nominal).max())])
print(json.dumps({{"snapshot_s": t_snap, "mc_s": wall, "mc_cpu_s": cpu, "passes": passes, "rss_mb": rss,
                   "mc_peak_mb": mc_peak, "err": err,
                   "low_kg": float(sorted(s.remaining_kg[:, 0])[len(s) // 100])}}))
"""


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--entries", type=int, default=20000)
    ap.add_argument("--samples", type=int, default=10000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--exact", type=int, default=3, help="samples replayed exactly to measure the linearisation")
    args = ap.parse_args()
    env = dict(os.environ, PYTHONPATH=ROOT)
    env.pop("PYTHONDONTWRITEBYTECODE", None)
    rows = {}
    with tempfile.TemporaryDirectory() as folder:
        for name, tables in (("constant", False), ("blowdown", True)):
            path = build(folder, name, craft(tables), args.entries)
            cmd = [sys.executable, "-m", "ledger", "--ledger", path, "status", "--json"]
            first = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True)  # runs + caches the MC
            status = json.loads(first.stdout)
            wall, cpu = best_child(cmd, env, args.repeat)
            mc = json.loads(subprocess.run([sys.executable, "-c", MC_CHILD.format(root=ROOT, path=path,
                                                                               samples=args.samples, exact=args.exact)],
                                           env=env, capture_output=True, text=True, check=True).stdout)
            rows[name] = dict(status_s=wall, status_cpu_s=cpu, warnings=len(status["warnings"]),
                              remaining=status["tanks"]["hz-1"]["remaining_kg"],
                              pressure=status["tanks"]["hz-1"].get("pressure_pa"), **mc)
    print(f"{args.entries} entries, {args.samples} samples; load average {os.getloadavg()[0]:.1f} "
          f"(a shared machine: compare the ratios, measured back to back)")
    print(f"{'ledger':>9} {'status s':>9} {'cpu s':>6} {'snapshot s':>10} {'passes':>6} {'MC s':>6} {'MC cpu s':>8} "
          f"{'peak MB':>8} {'hz-1 kg':>8} {'hz-1 bar':>8}")
    for name, r in rows.items():
        print(f"{name:>9} {r['status_s']:>9.3f} {r['status_cpu_s']:>6.2f} {r['snapshot_s']:>10.3f} {r['passes']:>6} "
              f"{r['mc_s']:>6.2f} {r['mc_cpu_s']:>8.2f} {r['rss_mb']:>8.0f} {r['remaining']:>8.3f} "
              f"{(r['pressure'] or 0) / 1e5:>8.2f}")
    b, c = rows["blowdown"], rows["constant"]
    print(f"ratios blowdown/constant: status {b['status_s'] / c['status_s']:.2f}x, snapshot "
          f"{b['snapshot_s'] / c['snapshot_s']:.2f}x, Monte Carlo {b['mc_s'] / c['mc_s']:.2f}x wall, "
          f"{b['mc_cpu_s'] / c['mc_cpu_s']:.2f}x CPU")
    print(f"hz-1 remaining, 1 % low bound: constant {c['low_kg']:.3f} kg, blowdown {b['low_kg']:.3f} kg "
          f"(blowdown: each sample's draws move its own feed pressure, core/mcblowdown.py)")
    print(f"Monte Carlo peak traced memory (numpy arrays included): constant {c['mc_peak_mb']:.0f} MB, "
          f"blowdown {b['mc_peak_mb']:.0f} MB")
    if b["err"]:
        e, d = np.array(b["err"]).T
        print(f"blowdown linearisation against the exact replay of {len(e)} perturbed samples: worst "
              f"{e.max() * 1000:.1f} g, mean {e.mean() * 1000:.1f} g, on deviations of {d.min():.2f}-{d.max():.2f} kg")
    print("targets: status <= 0.6 s warm; Monte Carlo of 10,000 samples <= 3 s and <= 1 GB")


if __name__ == "__main__":
    main()
