"""Propellant and delta-v free over time, sampled from the replay for a terminal chart.

dv free at a past moment needs the capability calculation at that state, which costs a few tens of
microseconds per engine; a chart a terminal wide cannot show more than a few hundred points anyway, so
the history is sampled evenly (always keeping the loaded start and the latest state).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..core import capability as cap
from .ledger import Snapshot

MAX_POINTS = 300


@dataclass(frozen=True)
class Trend:
    """Samples in time order. ``t[0]`` is the loaded state, placed at the first event's time."""

    t: np.ndarray                       # POSIX seconds
    total_kg: np.ndarray                # propellant remaining, all tanks
    tanks: dict[str, np.ndarray]        # remaining per tank id
    dv_free: dict[str, np.ndarray]      # dv free per engine id (m/s)
    events: int                         # events replayed (before sampling)


def sample_indices(n: int, max_points: int = MAX_POINTS) -> np.ndarray:
    """Indices into n events, evenly spaced, at most ``max_points``, always including the last."""
    if n <= max_points:
        return np.arange(n)
    return np.unique(np.linspace(0, n - 1, max_points).round().astype(int))


def trend(snap: Snapshot, max_points: int = MAX_POINTS) -> Trend:
    craft, rep = snap.craft, snap.replay
    events = snap.resolved.events
    n = len(events)
    idx = sample_indices(n, max(2, max_points) - 1)
    at = np.array([events[i].at for i in idx], dtype=float)
    t0 = at[0] if n else 0.0
    t = np.concatenate(([t0], at))
    remaining = np.vstack([craft.loads()[None, :], rep.remaining[idx]]) if n else craft.loads()[None, :]
    mass = np.concatenate(([craft.initial_mass_kg], rep.mass_after[idx]))
    dv = {e.id: np.empty(len(t)) for e in craft.engines}
    view = snap.blowdown
    if view is not None and view.flown is not None:  # performance tables: the falling Isp integrated
        from ..core import blowcap  # noqa: PLC0415
        from ..core import blowdown as bd  # noqa: PLC0415

        loading = bd.event_temperatures(craft, np.array([-np.inf]), ())[0]
        temps = np.vstack([loading[None, :], view.flown.temperatures[idx]]) if n else loading[None, :]
        for j, e in enumerate(craft.engines):
            dv[e.id] = blowcap.dv_free_states(view.model, mass, remaining, temps, j)
        tanks = {tid: remaining[:, i].copy() for i, tid in enumerate(craft.tank_ids)}
        return Trend(t, remaining.sum(axis=1), tanks, dv, n)
    for k in range(len(t)):
        state = cap.State(float(mass[k]), remaining[k])
        for j, e in enumerate(craft.engines):
            free, _, _ = cap.dv_free(craft, state, j)
            avail, _ = cap.dv_available(craft, state, j)
            dv[e.id][k] = min(free, avail)
    tanks = {tid: remaining[:, i].copy() for i, tid in enumerate(craft.tank_ids)}
    return Trend(t, remaining.sum(axis=1), tanks, dv, n)
