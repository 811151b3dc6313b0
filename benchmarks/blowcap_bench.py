"""dv free with the falling Isp integrated (core.blowcap) against the average-ve closed form it replaces,
on the bundled lunar orbiter (two table engines on two blowdown tanks, one reserve), in the same process.

Run:  python benchmarks/blowcap_bench.py [--repeat 50]
Prints CPU milliseconds per status-time capability (all engines) and per forecast history (up to 400
states), and the ratio against the closed form; the status target is issue 12 point 6 (<= 0.6 s warm).
"""
from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

import numpy as np  # noqa: E402

from ledger.core import blowcap as bc  # noqa: E402
from ledger.core import capability as cap  # noqa: E402
from ledger.core import forecast as fc  # noqa: E402
from ledger.services import scenario  # noqa: E402


def cpu_ms(fn, repeat: int) -> float:
    fn()
    t = time.process_time()
    for _ in range(repeat):
        fn()
    return (time.process_time() - t) / repeat * 1e3


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=50)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        snap = scenario.build(scenario.bundled()["lunar-orbiter"], os.path.join(folder, "l.json")).snapshot()
    view, state = snap.blowdown, snap.state
    closed = cpu_ms(lambda: cap.capability(view.craft_eq, state), args.repeat)
    integ = cpu_ms(lambda: bc.capability(view.model, view.craft_eq, state, view.temperature_k), args.repeat)
    idx = fc.sample_indices(len(snap.resolved.events), 400)
    rep = snap.replay
    mass, rem, temps = rep.mass_after[idx], rep.remaining[idx], view.flown.temperatures[idx]
    e = snap.craft.engine_index("ocm")
    hist_closed = cpu_ms(lambda: fc.dv_free_history(view.craft_eq, rep, e, idx), max(1, args.repeat // 10))
    hist_integ = cpu_ms(lambda: bc.dv_free_states(view.model, mass, rem, temps, e), max(1, args.repeat // 10))
    print(f"lunar orbiter, {len(snap.resolved.events)} events, {len(idx)} history states (CPU ms)")
    print(f"capability (all engines): closed form {closed:8.2f}  integrated {integ:8.2f}  ratio {integ / closed:6.1f}x")
    print(f"forecast history (ocm):   closed form {hist_closed:8.2f}  integrated {hist_integ:8.2f}  "
          f"ratio {hist_integ / hist_closed:6.1f}x")
    free = {c.engine: c.dv_free_m_s for c in cap.capability(view.craft_eq, state)}
    now = {c.engine: c.dv_free_m_s for c in bc.capability(view.model, view.craft_eq, state, view.temperature_k)}
    print("dv free m/s, average-ve stand-in -> integrated:",
          ", ".join(f"{k} {free[k]:.4f} -> {now[k]:.4f}" for k in free))
    assert np.isfinite(list(now.values())).all()


if __name__ == "__main__":
    main()
