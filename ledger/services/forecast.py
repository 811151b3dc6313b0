"""Lifetime forecast as plain data, shared by status, the handover and the console.

The run-out date counts from the last recorded event, the moment the dv free describes, not from now:
routine drift keeps accruing after the last burn whether or not the next one has been logged, so the
delta-v owed since then is spent in effect (the conservative reading for an up-to-date ledger). With no
event recorded yet it counts from now. The low-bound date appears when the status passed in carries
``dv_free_low_m_s`` for the engine (the uncertainty work), with the status's ``confidence``.
"""
from __future__ import annotations

import math
from typing import Any, Mapping

from ..core import forecast as fc
from .ledger import Snapshot
from .timefmt import iso, now as clock

HISTORY_POINTS = 400


def _years(value: float) -> float | None:
    return None if math.isinf(value) else value


def _life_row(life: fc.Lifetime) -> dict[str, Any]:
    times, dvs = fc.projection(life)
    return {"dv_free_m_s": life.dv_free_m_s, "years_left": _years(life.years),
            "runs_out": None if life.runs_out is None else iso(round(life.runs_out)),
            "figures": [{"at": iso(float(round(t))), "dv_free_m_s": float(d)} for t, d in zip(times, dvs)]}


def reference_time(snap: Snapshot, now: float | None = None) -> tuple[float, str]:
    """The time the forecast counts from, and why."""
    if snap.resolved.events:
        return snap.resolved.last_event_at, "last recorded event"
    return (clock() if now is None else now), "now (no event recorded yet)"


def forecast(snap: Snapshot, status: Mapping[str, Any] | None = None, *, now: float | None = None,
             series: bool = False, history_points: int = HISTORY_POINTS) -> dict[str, Any]:
    """Run-out date of dv free for every engine with a routine rate (nominal, and low where known).

    ``series`` adds history (dv free after past events, sampled) and projection lines for a chart.
    """
    craft = snap.craft
    rates = fc.routine_rates(craft)
    start, basis = reference_time(snap, now)
    engines_status = (status or {}).get("engines") or {}
    free_now = {e.engine: e.dv_free_m_s for e in snap.engines}
    out: dict[str, Any] = {"reference": iso(start), "reference_basis": basis,
                           "confidence": (status or {}).get("confidence"), "engines": [], "notes": []}
    if not rates:
        out["notes"].append("no routine operations in the craft file (operations: routine)")
    lives: dict[str, tuple[fc.Lifetime, fc.Lifetime | None]] = {}
    for engine, rate in rates.items():
        life = fc.lifetime(engine, free_now[engine], rate, start)
        row: dict[str, Any] = {"engine": engine, "dv_per_year_m_s": rate}
        row.update(_life_row(life))
        low_dv = (engines_status.get(engine) or {}).get("dv_free_low_m_s")
        low = fc.lifetime(engine, float(low_dv), rate, start) if low_dv is not None else None
        if low is not None:
            row["low"] = _life_row(low)
        lives[engine] = (life, low)
        out["engines"].append(row)
    for a, b, tanks in fc.shared_tanks(craft, list(rates)):
        out["notes"].append(f"routine engines {a} and {b} both draw on {', '.join(tanks)}: each date assumes only "
                            "its own routine spend, so both are optimistic")
    if series:
        out["series"] = {engine: _series(snap, engine, life, low, history_points)
                         for engine, (life, low) in lives.items()}
    return out


def _series(snap: Snapshot, engine: str, life: fc.Lifetime, low: fc.Lifetime | None,
            points: int) -> dict[str, list[float]]:
    """Chart lines in POSIX seconds and m/s: dv free after past events, then the straight projections."""
    craft, events = snap.flight_craft, snap.flight_events
    e = craft.engine_index(engine)
    hist_t: list[float] = []
    hist_dv: list[float] = []
    if events:
        idx = fc.sample_indices(len(events), points)
        hist_t = [events[0].at] + [events[int(i)].at for i in idx]
        if snap.blowdown is not None and snap.blowdown.flown is not None:
            hist_dv = _table_history(snap, e, idx)
        else:
            hist_dv = [fc.dv_free_initial(craft, e)] + [float(x) for x in fc.dv_free_history(craft, snap.replay, e, idx)]
    end = life.runs_out if life.runs_out is not None else life.start + 10 * fc.YEAR_S
    out = {"history_t": hist_t, "history_dv": hist_dv,
           "projection_t": [life.start, end],
           "projection_dv": [life.dv_free_m_s, max(0.0, life.dv_free_m_s - life.dv_per_year_m_s * (end - life.start)
                                                   / fc.YEAR_S)]}
    if low is not None:
        low_end = low.runs_out if low.runs_out is not None else end
        out["low_t"] = [low.start, low_end]
        out["low_dv"] = [low.dv_free_m_s, max(0.0, low.dv_free_m_s - low.dv_per_year_m_s * (low_end - low.start)
                                              / fc.YEAR_S)]
    return out


def _table_history(snap: Snapshot, e: int, idx) -> list[float]:
    """Dv free as loaded and after the chosen events, the falling Isp integrated (``core.blowcap``), each
    state at its own event's tank temperatures: one vectorised search over all the states."""
    import numpy as np  # noqa: PLC0415

    from ..core import blowcap  # noqa: PLC0415
    from ..core import blowdown as bd  # noqa: PLC0415

    view, craft, rep = snap.blowdown, snap.craft, snap.replay
    idx = np.asarray(idx, dtype=int)
    loading = bd.event_temperatures(craft, np.array([-np.inf]), ())[0]  # no reading yet: loading temperatures
    mass = np.concatenate(([craft.initial_mass_kg], rep.mass_after[idx]))
    remaining = np.vstack([craft.loads()[None, :], rep.remaining[idx]])
    temps = np.vstack([np.asarray(loading, dtype=float)[None, :], view.flown.temperatures[idx]])
    return [float(x) for x in blowcap.dv_free_states(view.model, mass, remaining, temps, e)]
