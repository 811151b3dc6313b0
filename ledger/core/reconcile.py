"""Reconciliation of a gauged mass with the book-keeping mass, and re-baselining.

Why separate: book-keeping error grows with every burn (integral of flow-model bias) while a
PVT gauge has its own, different error; comparing them in units of their combined sigma is
how a leak, a drifting sensor or a bad flow model shows up (docs/sources.md §4).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np


def _positive(name: str, value: float) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0.0):
        raise ValueError(f"{name} must be a finite number > 0; got {value!r}")
    return v


@dataclass(frozen=True)
class Reconciliation:
    """Gauge against book-keeping: their difference, how many sigma apart, a re-baseline."""

    difference_kg: float  # gauge minus book
    combined_sigma_kg: float  # root-sum-square of the two sigmas (independent estimates)
    difference_sigmas: float  # signed difference / combined sigma
    beyond_limit: bool  # |difference_sigmas| > limit_sigmas: investigate before combining
    limit_sigmas: float
    rebaseline_kg: float  # inverse-variance weighted mean
    rebaseline_sigma_kg: float

    def as_dict(self) -> dict[str, float | bool]:
        return asdict(self)


def inverse_variance(values: list[float], sigmas: list[float]) -> tuple[float, float]:
    """Inverse-variance weighted mean and its sigma for independent estimates."""
    if len(values) != len(sigmas) or not values:
        raise ValueError("inverse_variance needs one sigma per value and at least one value")
    for s in sigmas:
        _positive("sigma", s)
    w = np.array([1.0 / float(s) ** 2 for s in sigmas])
    x = np.array([float(v) for v in values])
    if not np.all(np.isfinite(x)):
        raise ValueError("values must be finite numbers")
    return float(np.sum(w * x) / np.sum(w)), float(1.0 / math.sqrt(np.sum(w)))


def reconcile(
    gauge_kg: float, gauge_sigma: float, book_kg: float, book_sigma: float,
    limit_sigmas: float = 3.0,
) -> Reconciliation:
    """Compare a gauged mass with the book-keeping mass; flag beyond limit_sigmas (3 sigma).

    The re-baseline (inverse-variance mean) is only sound when the flag is down: two
    estimates that disagree beyond 3 sigma point to a leak, a sensor or a model error.
    """
    g, b = float(gauge_kg), float(book_kg)
    if not (math.isfinite(g) and math.isfinite(b)):
        raise ValueError("gauge and book masses must be finite numbers")
    sg, sb = _positive("gauge sigma", gauge_sigma), _positive("book sigma", book_sigma)
    limit = _positive("limit in sigmas", limit_sigmas)
    diff = g - b
    combined = math.hypot(sg, sb)
    n_sigma = diff / combined
    value, sigma = inverse_variance([g, b], [sg, sb])
    return Reconciliation(
        difference_kg=diff, combined_sigma_kg=combined, difference_sigmas=n_sigma,
        beyond_limit=abs(n_sigma) > limit, limit_sigmas=limit,
        rebaseline_kg=value, rebaseline_sigma_kg=sigma,
    )
