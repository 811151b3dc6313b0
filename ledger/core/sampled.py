"""What the Monte Carlo samples say: checks, capability and reserves per sample, and low bounds.

Every function runs the same vectorised maths as the nominal figures (``capability.*_many``) with one
row per sample and each sample's own exhaust velocities.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .capability import EPS_KG, dv_available_many, dv_free_many, fly_many
from .craft import Craft
from .lastaxis import all_last
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
    free, _, _ = dv_free_many(craft, m1, r1, e, ve=s.ve, frac=s.frac)
    avail, _ = dv_available_many(craft, m1, r1, e, ve=s.ve, frac=s.frac)
    burn_ok = all_last(r1 - craft.residuals() >= -EPS_KG)
    return SampleCheck(intact, np.where(intact & burn_ok, np.minimum(free, avail), 0.0))


def capability_samples(craft: Craft, s: Samples) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Usable per tank (S, tanks), dv available and dv free per engine (S, engines) for every sample."""
    usable = np.maximum(0.0, s.remaining_kg - craft.residuals())
    avail = np.empty(s.ve.shape)
    free = np.empty(s.ve.shape)
    for e in range(len(craft.engines)):
        avail[:, e], _ = dv_available_many(craft, s.mass_kg, s.remaining_kg, e, ve=s.ve, frac=s.frac)
        f, _, _ = dv_free_many(craft, s.mass_kg, s.remaining_kg, e, ve=s.ve, frac=s.frac)
        free[:, e] = np.minimum(f, avail[:, e])
    return usable, avail, free


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
