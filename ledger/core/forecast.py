"""Lifetime forecast: when an engine's delta-v free runs out at its routine spending rate.

Delta-v is additive for one engine (c·ln(m0/m1) + c·ln(m1/m2) = c·ln(m0/m2)) and dv free already holds
the reserves back, so spending r m/s a year from dv free D leaves exactly D - r·t: the date is
t0 + D/r, and the projection is a straight line. That holds while no other routine engine draws on the
same tanks; ``shared_tanks`` names the pairs where it does not, so callers can say so.
Times are POSIX seconds supplied by the caller: the core has no clock.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import capability as cap
from .craft import Craft
from .replay import Replay

YEAR_S = 365.25 * 86400.0
"""Julian year (IAU): the year the routine rates are quoted per."""
HORIZON_YEARS = 1000.0
"""Beyond this a run-out date means nothing (and overflows calendar types): reported as None."""


@dataclass(frozen=True)
class Lifetime:
    """How long dv free lasts at a routine rate, counted from ``start``."""

    engine: str
    dv_per_year_m_s: float
    dv_free_m_s: float
    start: float
    years: float
    """math.inf when the rate is zero."""
    runs_out: float | None
    """POSIX seconds; None when beyond HORIZON_YEARS or never."""


def routine_rates(craft: Craft) -> dict[str, float]:
    """Routine delta-v per year by engine; several lines for one engine (north-south and east-west
    station keeping on the same thrusters) add up."""
    rates: dict[str, float] = {}
    for r in craft.routine:
        rates[r.engine] = rates.get(r.engine, 0.0) + r.dv_per_year_m_s
    return rates


def lifetime(engine: str, dv_free_m_s: float, dv_per_year_m_s: float, start: float) -> Lifetime:
    """Years until dv free is spent at the rate, and the date: start + (dv free / rate) years."""
    free = max(0.0, float(dv_free_m_s))
    rate = float(dv_per_year_m_s)
    years = math.inf if rate <= 0.0 else free / rate
    runs_out = None if years > HORIZON_YEARS else start + years * YEAR_S
    return Lifetime(engine, rate, free, start, years, runs_out)


def projection(life: Lifetime, max_figures: int = 7) -> tuple[np.ndarray, np.ndarray]:
    """Dv free at whole-year steps from the start to the run-out date (that date included).

    The step grows (1, 2, 3 ... years) so at most ``max_figures`` points come out; with no run-out date
    inside the horizon the line runs flat or falling over ten years.
    """
    years = life.years if life.runs_out is not None else 10.0
    step = max(1, math.ceil(years / max(1, max_figures - 1)))
    grid = list(np.arange(0.0, years, step, dtype=float))
    if not grid or grid[-1] < years:
        grid.append(years)
    t = np.asarray(grid)
    dv = np.maximum(0.0, life.dv_free_m_s - life.dv_per_year_m_s * t)
    return life.start + t * YEAR_S, dv


def sample_indices(n: int, max_points: int) -> np.ndarray:
    """At most ``max_points`` evenly spread indices of 0..n-1, always keeping the first and last."""
    if n <= max_points:
        return np.arange(n)
    return np.unique(np.linspace(0, n - 1, max_points).round().astype(int))


def dv_free_history(craft: Craft, rep: Replay, engine: int, indices: Sequence[int]) -> np.ndarray:
    """Dv free of ``engine`` after each chosen event of a replay (capped by dv available, as status does)."""
    out = np.empty(len(indices))
    for k, i in enumerate(indices):
        state = cap.State(float(rep.mass_after[i]), rep.remaining[i])
        free, _, _ = cap.dv_free(craft, state, engine)
        avail, _ = cap.dv_available(craft, state, engine)
        out[k] = min(free, avail)
    return out


def dv_free_initial(craft: Craft, engine: int) -> float:
    """Dv free of ``engine`` as loaded, before any event."""
    state = cap.State(craft.initial_mass_kg, craft.loads())
    free, _, _ = cap.dv_free(craft, state, engine)
    avail, _ = cap.dv_available(craft, state, engine)
    return min(free, avail)


def shared_tanks(craft: Craft, engines: Sequence[str]) -> list[tuple[str, str, tuple[str, ...]]]:
    """Pairs of the given engines that draw on a common tank: their run-out dates are each optimistic,
    because each assumes only its own routine spend empties those tanks."""
    frac = craft.feed_fractions()
    out = []
    ids = list(engines)
    for a in range(len(ids)):
        for b in range(a + 1, len(ids)):
            fa, fb = frac[craft.engine_index(ids[a])], frac[craft.engine_index(ids[b])]
            common = tuple(t for t, x, y in zip(craft.tank_ids, fa, fb) if x > 0 and y > 0)
            if common:
                out.append((ids[a], ids[b], common))
    return out
