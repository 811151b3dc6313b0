"""The Monte Carlo's CPU per craft (issue 15, point 4): the package's sampler against the previous one, same run.

Run:  python benchmarks/mc_speed_bench.py [--entries 2000 20000] [--samples 10000] [--repeat 5]
      [--ledger PATH ...] [--rows DIR ...]

A cold fleet row spends most of its CPU in the 10,000-sample Monte Carlo behind the low bounds. This script
times ``core.montecarlo.simulate`` as the fleet's worker processes run it (one thread) on the core_bench mix
(the ledgers benchmarks/fleet_bench.py generates) and, with --ledger, on ledger files (their flight craft and
events, as ``services.uncertainty.run`` hands them over), against the sampler as it was before this change
(``_old_run`` below, kept here and not in the package), in the same process, runs interleaved, CPU time
(time.process_time: the machine is shared). It also prints how far the two answers are apart: the same
draws in the same order, so only rounding (relative 1e-12 or less), and the 1 % quantiles of the final mass
and of each tank, with the Monte Carlo's own standard error of that quantile for scale. With delta-v burns on
several engines the sampler draws other random numbers than before (``montecarlo._engines``): there the
relative difference is that of two independent runs and the quantile move, in standard errors, is the check.

--rows DIR (a folder of ledgers, e.g. made by benchmarks/fleet_bench.py's ``generate``) copies the folder
and times whole cold fleet rows (``services.fleet.row_for_path`` with the side caches removed before each,
one thread as in a fleet worker), before and after, interleaved; the figures are per row.
"""
from __future__ import annotations

import argparse
import contextlib
import os
import platform
import statistics
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

from ledger.core import montecarlo as mc  # noqa: E402
from ledger.core.segments import Plan, parts  # noqa: E402

from core_bench import CRAFT, entries  # noqa: E402  (the craft and mix of the fleet benchmark's ledgers)


# ---- the sampler before this change (montecarlo.py at de4dff8), for the baseline only -------------------
def _old_one_engine(p: Plan, m0, flow, kept, rng):
    n, m, nd = len(m0), p.split.shape[1], p.dur_engines.size
    drawn = p.drawn_const + flow * p.seconds
    total = p.b_const.sum() - flow @ p.seconds
    acc = m0
    if p.b_const.size:
        inv = 1.0 / kept[:, p.ns_before]
        cols = inv @ p.weights
        acc = m0 + cols[:, 0] - np.einsum("ij,ij->i", flow[:, p.dur_engines], cols[:, 1:1 + nd])
    final = kept[:, -1] * acc
    if p.b_sd.any():
        z = rng.standard_normal((n, m + 2))
        yg = z[:, 1:] @ p.total_root.T
        c = np.empty((n, m + 1))
        c[:, 0] = cols[:, 1 + nd]
        c[:, 1:] = -cols[:, 2 + nd:]
        k = c @ p.total_pinv
        var_x = np.einsum("ij,ij,j->i", inv, inv, p.weights[:, 1 + nd]) - np.einsum("ij,ij->i", k, c)
        x = np.einsum("ij,ij->i", k, yg) + np.sqrt(np.maximum(var_x, 0.0)) * z[:, 0]
        final = final + kept[:, -1] * x
        total = total + yg[:, 0]
        drawn = drawn + yg[:, 1:] + rng.standard_normal((n, m)) @ p.resid.T
    if p.single is not None:
        drawn[:, p.single] += m0 + total - final
    return final, drawn


def _old_scaling(p: Plan, ve, rng, n: int):
    ks = p.sc.size
    kept = np.zeros((n, ks + 1))
    log_a = None
    if ks:
        log_a = rng.standard_normal((n, ks)) if p.dv_sd.any() else np.zeros((n, ks))
        log_a *= p.dv_sd
        log_a += p.dv
        one = p.single
        log_a *= (-1.0 / ve[:, one:one + 1]) if one is not None else (-1.0 / ve)[:, p.eng]
        np.cumsum(log_a, axis=1, out=kept[:, 1:])
    np.exp(kept, out=kept)
    return log_a, kept


def _old_run(p: Plan, m0, ve, flow, rng, dense: bool = False):
    n, ks, ka = len(m0), p.sc.size, p.b_const.size
    log_a, kept = _old_scaling(p, ve, rng, n)
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        if (ks == 0 or p.single is not None) and not dense:
            final, used = _old_one_engine(p, m0, flow, kept, rng)
            if np.all(np.isfinite(final)) and np.all(np.isfinite(used)):
                return final, used
            return _old_run(p, m0, ve, flow, rng, dense=True)
        acc = np.empty((n, ka + 1))
        acc[:, 0] = m0
        b, drawn = None, np.zeros(flow.shape)
        if ka:
            b, drawn = mc._additive(p, flow, rng)
            np.divide(b, kept[:, p.ns_before], out=acc[:, 1:])
            np.cumsum(acc, axis=1, out=acc)
        final = kept[:, -1] * acc[:, -1]
        burnt = mc._burned(p, kept, acc) if ks else np.zeros(flow.shape)
    if not (np.all(np.isfinite(final)) and np.all(np.isfinite(burnt))):
        final, burned = mc._sequential(p, m0, log_a, b)
        burnt = burned @ p.onehot
    return final, drawn + burnt
# ---------------------------------------------------------------------------------------------------------


@contextlib.contextmanager
def old_sampler():
    """``simulate`` with the previous per-run step (``_chunk`` looks ``_run`` up in the module each time)."""
    new = mc._run
    mc._run = _old_run
    try:
        yield
    finally:
        mc._run = new


def main_first(events: list) -> list:
    """The ledger with its first 25 delta-v burns flown by the main engine (a craft whose apogee engine flew
    early, its thrusters since): several engines on delta-v burns, ``montecarlo._engines``."""
    out, moved = [], 0
    for e in events:
        if e.kind == "burn" and e.data.get("dv") is not None and moved < 25:
            e, moved = e._replace(data={**e.data, "engine": "main"}), moved + 1
        out.append(e)
    return out


def from_ledger(path: str):
    from ledger.services.ledger import Ledger  # noqa: PLC0415

    snap = Ledger(path).snapshot()
    return snap.flight_craft, list(snap.flight_events)


def cold_rows(folder: str, repeat: int) -> dict:
    """Median CPU of one cold fleet row with the previous and the present sampler, on a copy of ``folder``."""
    import glob  # noqa: PLC0415
    import shutil  # noqa: PLC0415
    import tempfile  # noqa: PLC0415

    from ledger.services import fleet  # noqa: PLC0415

    fleet._worker_init()  # as a fleet worker: the row modules loaded, one Monte Carlo thread
    with tempfile.TemporaryDirectory() as tmp:
        copy = os.path.join(tmp, "fleet")
        shutil.copytree(folder, copy)
        paths = sorted(glob.glob(os.path.join(copy, "*.json")))
        paths = [q for q in paths if not q.endswith(".confidence-cache.json")]

        inside = [0.0]
        simulate = mc.simulate

        def timed_simulate(*a, **k):  # the Monte Carlo's own CPU inside the row
            t = time.process_time()
            try:
                return simulate(*a, **k)
            finally:
                inside[0] += time.process_time() - t

        def row(path: str) -> tuple[float, dict]:
            for side in (".key", ".verified", ".confidence-cache.json"):
                with contextlib.suppress(FileNotFoundError):
                    os.remove(path + side)
            out = {}
            return cpu(lambda: out.update(fleet.row_for_path(path))), out

        row(paths[0])
        with old_sampler():
            row(paths[0])
        old_t, new_t, old_mc, new_mc, same = [], [], [], [], 0.0
        mc.simulate = timed_simulate
        try:
            for i in range(repeat):
                path = paths[i % len(paths)]
                inside[0] = 0.0
                with old_sampler():
                    t_old, a = row(path)
                old_mc.append(inside[0])
                inside[0] = 0.0
                t_new, b = row(path)
                new_mc.append(inside[0])
                old_t.append(t_old)
                new_t.append(t_new)
                same = max(same, row_difference(a, b))
        finally:
            mc.simulate = simulate
        entries_ = len(json_entries(paths[0]))
    return {"name": os.path.basename(folder.rstrip("/")), "entries": entries_, "old": statistics.median(old_t),
            "new": statistics.median(new_t), "old_mc": statistics.median(old_mc), "new_mc": statistics.median(new_mc),
            "same": same}


def row_difference(a, b) -> float:
    """Largest relative difference between two rows' numbers (the same draws: rounding only); inf when
    anything else (a text, a verdict, a count, the rows' shape) differs."""
    if isinstance(a, dict) and isinstance(b, dict):
        return max([row_difference(a[k], b[k]) for k in a], default=0.0) if a.keys() == b.keys() else float("inf")
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return max(map(row_difference, a, b), default=0.0) if len(a) == len(b) else float("inf")
    if isinstance(a, float) and isinstance(b, float):
        return 0.0 if a == b else abs(a - b) / max(abs(a), abs(b))
    return 0.0 if a == b else float("inf")


def json_entries(path: str) -> list:
    import json  # noqa: PLC0415

    with open(path, encoding="utf-8") as fh:
        doc = json.load(fh)
    return doc.get("entries", doc.get("records", []))


def cpu(fn) -> float:
    t = time.process_time()
    fn()
    return time.process_time() - t


def compare(name: str, craft, events, samples: int, repeat: int) -> dict:
    cut = parts(craft, events)
    run = lambda: mc.simulate(craft, events, samples=samples, seg=cut)  # noqa: E731 - one thread, as a fleet worker
    old_t, new_t = [], []
    run()  # warm both (imports, allocator)
    with old_sampler():
        run()
    for _ in range(repeat):  # interleaved, so a change in the machine's load hits both alike
        with old_sampler():
            old_t.append(cpu(run))
        new_t.append(cpu(run))
    with old_sampler():
        a = run()
    b = run()
    rel = max(float(np.max(np.abs(a.mass_kg - b.mass_kg) / np.abs(a.mass_kg))),
              float(np.max(np.abs(a.remaining_kg - b.remaining_kg)) / np.max(np.abs(a.remaining_kg))))
    q = 0.01
    moves, ses = [], []
    for x, y in [(a.mass_kg, b.mass_kg)] + [(a.remaining_kg[:, t], b.remaining_kg[:, t]) for t in range(a.remaining_kg.shape[1])]:
        qa, qb = np.quantile(x, q), np.quantile(y, q)
        # standard error of an empirical quantile: sqrt(q(1-q)/n) / density, the density from the samples'
        # spread around it (common practice: order-statistic asymptotics with a finite-difference density)
        lo, hi = np.quantile(x, [max(q - 0.005, 0.0), q + 0.005])
        se = np.sqrt(q * (1 - q) / samples) * (hi - lo) / 0.01
        moves.append(abs(qa - qb))
        ses.append(se)
    return {"name": name, "entries": len(events), "segments": len(cut), "chunk": mc.chunk_size(cut.widest),
            "old": statistics.median(old_t), "new": statistics.median(new_t), "old_best": min(old_t),
            "new_best": min(new_t), "rel": rel, "move_over_se": max(m / s if s > 0 else 0.0 for m, s in zip(moves, ses))}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--entries", type=int, nargs="*", default=[2000, 20000])
    ap.add_argument("--samples", type=int, default=mc.DEFAULT_SAMPLES)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--ledger", nargs="*", default=[], help="ledger files to measure as well (read only)")
    ap.add_argument("--rows", nargs="*", default=[], help="folders of ledgers: whole cold fleet rows (copied first)")
    args = ap.parse_args()
    load0 = os.getloadavg()
    cases = [(f"core_bench mix, {n} entries", CRAFT, entries(n)) for n in args.entries]
    cases += [(f"same, first 25 dv burns on main, {n}", CRAFT, main_first(entries(n))) for n in args.entries]
    cases += [(os.path.basename(p), *from_ledger(p)) for p in args.ledger]
    results = [compare(name, craft, ev, args.samples, args.repeat) for name, craft, ev in cases]
    rows = [cold_rows(folder, args.repeat) for folder in args.rows]
    load1 = os.getloadavg()
    print(f"Monte Carlo CPU per craft, {args.samples} samples, one thread, median of {args.repeat} interleaved runs")
    print(f"{'ledger':<34} {'entries':>7} {'segs':>5} {'chunk':>5} {'before s':>9} {'after s':>8} {'ratio':>6} "
          f"{'max rel diff':>12} {'q1% move/SE':>11}")
    for r in results:
        print(f"{r['name']:<34} {r['entries']:>7} {r['segments']:>5} {r['chunk']:>5} {r['old']:>9.3f} {r['new']:>8.3f} "
              f"{r['old'] / r['new']:>5.2f}x {r['rel']:>12.1e} {r['move_over_se']:>11.1e}")
    print(f"(best of runs: " + ", ".join(f"{r['old_best']:.3f} -> {r['new_best']:.3f} s" for r in results) + ")")
    for r in rows:
        print(f"cold fleet row, {r['name']} ({r['entries']} records): {r['old']:.3f} s CPU before, {r['new']:.3f} s "
              f"after ({r['old'] / r['new']:.2f}x); its Monte Carlo {r['old_mc']:.3f} s -> {r['new_mc']:.3f} s "
              f"({r['old_mc'] / r['old']:.0%} -> {r['new_mc'] / r['new']:.0%} of the row); rows before and after: "
              f"largest relative difference {r['same']:.1e}")
    print(f"machine: Python {platform.python_version()}, numpy {np.__version__}, {os.cpu_count()} cores; load average "
          f"{load0[0]:.1f} before, {load1[0]:.1f} after (shared machine: CPU seconds, ratios from the same run)")


if __name__ == "__main__":
    main()
