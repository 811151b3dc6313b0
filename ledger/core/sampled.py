"""What the Monte Carlo samples say: checks, capability and reserves per sample, and low bounds.

Every function runs the same vectorised maths as the nominal figures (``capability.*_many``) with one
row per sample and each sample's own exhaust velocities.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .capability import EPS_KG, fly_many
from .craft import Craft
from .lastaxis import all_last, any_last, argmin_last, max_last, min_last
from .montecarlo import Samples


@dataclass(frozen=True)
class SampleCheck:
    intact: np.ndarray          # (S,) bool: every reserve still flyable after the commitments and the burn
    dv_free_after: np.ndarray   # (S,) m/s for the burn's engine (0 where a tank goes short)

    @property
    def probability(self) -> float:
        return float(self.intact.mean())

    @property
    def standard_error(self) -> float:
        p = self.probability
        return math.sqrt(max(p * (1.0 - p), 0.0) / len(self.intact))


def check_samples(craft: Craft, s: Samples, engine_id: str, dv: float,
                  commitments: Sequence[tuple[str, float]] = ()) -> SampleCheck:
    """``capability.check`` for every sample: fly commitments, the burn, then the reserves."""
    m1, r1, _ = fly_many(craft, s.mass_kg, s.remaining_kg, list(commitments) + [(engine_id, dv)], ve=s.ve, frac=s.frac)
    _, r2, _ = fly_many(craft, m1, r1, [(r.engine, r.dv_m_s) for r in craft.reserves], ve=s.ve, frac=s.frac)
    intact = all_last(r2 - craft.residuals() >= -EPS_KG)
    e = craft.engine_index(engine_id)
    after = _TankMajor(craft, m1, r1, s.ve, s.frac)  # dv_free_many / dv_available_many, tank-major
    free, avail = after.dv_free(e), after.dv_available(e)
    burn_ok = all_last(r1 - craft.residuals() >= -EPS_KG)
    return SampleCheck(intact, np.where(intact & burn_ok, np.minimum(free, avail), 0.0))


def capability_samples(craft: Craft, s: Samples) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Usable per tank (S, tanks), dv available and dv free per engine (S, engines) for every sample.

    The figures of ``capability.dv_available_many`` and ``dv_free_many`` (exactly: the same operations on
    the same numbers), worked tank-major (``_TankMajor``): over a few tanks numpy broadcasts an (S, tanks)
    array against a per-tank row one sample at a time, several times slower than over rows of S."""
    t = _TankMajor(craft, s.mass_kg, s.remaining_kg, s.ve, s.frac)
    avail = np.empty(s.ve.shape)
    free = np.empty(s.ve.shape)
    for e in range(len(craft.engines)):
        avail[:, e] = t.dv_available(e)
        free[:, e] = np.minimum(t.dv_free(e), avail[:, e])
    return np.ascontiguousarray(np.maximum(0.0, t.spare).T), avail, free


class _TankMajor:
    """One sample set with tanks on the first axis: ``spare`` and the feed shares are (tanks, S) rows, so
    every per-tank operation runs over S contiguous values. The reductions over tanks take the (S, tanks)
    views of these rows (``lastaxis`` walks them a row at a time)."""

    def __init__(self, craft: Craft, mass: np.ndarray, remaining: np.ndarray, ve: np.ndarray,
                 frac: np.ndarray | None):
        self.craft, self.mass, self.ve = craft, mass, ve
        self.fractions = craft.feed_fractions()
        self.spare = np.ascontiguousarray(remaining.T) - craft.residuals()[:, None]  # may be negative
        # feed shares per engine: (engines, tanks, 1), or (engines, tanks, S) per sample (drawn mixture ratios)
        self.frac = (self.fractions[:, :, None] if frac is None
                     else np.ascontiguousarray(np.moveaxis(np.asarray(frac, dtype=float), 0, -1)))
        c = np.zeros((len(craft.tanks), len(mass)))  # ``capability.reserve_draw_per_kg``, tank-major
        carried = np.ones(len(mass))
        for r in craft.reserves:
            e = craft.engine_index(r.engine)
            step = np.exp(-r.dv_m_s / self.ve[:, e])
            c = c + self.frac[e] * (carried * (1.0 - step))
            carried = carried * step
        self.c = c

    def dv_available(self, engine: int) -> np.ndarray:
        """``capability.dv_available_many`` (its dv)."""
        mass = self.mass
        fed = np.flatnonzero(self.fractions[engine] > 0)
        per_feed = self.spare[fed] / self.frac[engine][fed]
        k = argmin_last(per_feed.T)
        x = np.maximum(0.0, np.take_along_axis(per_feed, k[None, :], axis=0)[0])
        ok = (mass > 0) & (mass - x > 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(ok, self.ve[:, engine] * np.log(mass / (mass - x)), 0.0)

    def dv_free(self, engine: int) -> np.ndarray:
        """``capability.dv_free_many`` (its dv): alpha + beta E per tank, the bounds on E, the closed form."""
        mass, c = self.mass, self.c
        frac = self.frac[engine]
        alpha = self.spare - frac * mass
        beta = (frac - c) * mass
        with np.errstate(divide="ignore", invalid="ignore"):
            bound = -alpha / beta
        lower, upper = beta > 0, beta < 0
        flat = ~(lower | upper) & ((frac > 0) | (c > 0))
        flat_short = flat & (alpha < -EPS_KG)
        lo_bound = np.where(lower, bound, -np.inf)
        up_bound = np.where(upper, bound, np.inf)
        has_lower = any_last(lower.T)
        e_min = np.where(has_lower, max_last(lo_bound.T), 0.0)
        e_max = np.minimum(np.where(any_last(upper.T), min_last(up_bound.T), 1.0), 1.0)
        empty = (e_min > e_max + 1e-12) | (e_min > 1.0 + 1e-12)
        short = any_last(flat_short.T)
        met = ~empty & ~short & (mass > 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            dv = np.maximum(0.0, -self.ve[:, engine] * np.log(np.clip(e_min, 1e-300, 1.0)))
        return np.where(met, dv, 0.0)


def reserves_intact(craft: Craft, s: Samples) -> np.ndarray:
    """(S,) bool: the reserves can be flown from each sample's state as it stands."""
    _, r, _ = fly_many(craft, s.mass_kg, s.remaining_kg, [(r.engine, r.dv_m_s) for r in craft.reserves], ve=s.ve,
                       frac=s.frac)
    return all_last(r - craft.residuals() >= -EPS_KG)


def outage_samples(craft: Craft, s: Samples) -> list[tuple[object, np.ndarray, np.ndarray]]:
    """Per bipropellant pair (``core.mixture.pairs``): (pair, kg stranded per sample, tank holding it),
    each sample's engine drawing its usable propellant at its own drawn mixture ratio."""
    from .mixture import pairs, stranded  # noqa: PLC0415

    return [(p, *stranded(craft, s.remaining_kg, p, s.frac)) for p in pairs(craft)]


def low_bound(values: np.ndarray, confidence: float) -> float:
    """The value exceeded with probability ``confidence`` (the lower empirical quantile, one-sided).

    ``np.quantile(values, 1 - confidence, method="lower")`` for a 1-d float array, without its general
    machinery (a status takes a dozen of these over 10,000 samples): the same order statistic, index
    floor((n - 1) q), from one partition, and NaN when any sample is NaN, as there. A zero is taken from
    ``np.quantile`` itself: +0 and -0 tie, and which of them lands at the index depends on the partition."""
    a = np.asarray(values)
    q = 1.0 - confidence
    if a.ndim != 1 or a.dtype != np.float64 or not len(a) or not 0.0 <= q <= 1.0:
        return float(np.quantile(values, q, method="lower"))
    if np.isnan(a).any():
        return math.nan
    k = math.floor((len(a) - 1) * q)
    low = float(np.partition(a, k)[k])
    return low if low != 0.0 else float(np.quantile(a, q, method="lower"))
