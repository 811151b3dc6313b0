"""Mixture ratio as flown: per-sample feed shares, and the propellant a bipropellant pair strands.

An engine with two feeds draws them at its mixture ratio r (first feed's mass parts over the second's):
shares r/(1+r) and 1/(1+r). Flown, r drifts from its nominal value; a one-sigma ``mixture_ratio_sigma``
makes the Monte Carlo draw r once per sample and engine (a systematic error, like Isp), so the tanks
it leaves and the draws it still has to make both follow the drawn ratio. Whatever the ratio, the pair
stops when one tank is empty; what the other still holds then is stranded (the "mixture-ratio outage").
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .craft import Craft

MIN_RATIO_SHARE = 1e-6
"""A drawn ratio is kept above this share of its nominal value (a Gaussian tail cannot make it negative)."""


def ratio_sigmas(craft: Craft) -> np.ndarray:
    """(engines,) one-sigma mixture ratio per engine; 0 where none is given."""
    return np.array([e.mixture_ratio_sigma or 0.0 for e in craft.engines], dtype=float)


def drifts(craft: Craft) -> bool:
    """Whether any engine's mixture ratio is uncertain (else the feed shares are the nominal ones)."""
    return bool(ratio_sigmas(craft).any())


def flown_fractions(craft: Craft, rng: np.random.Generator, n: int) -> np.ndarray | None:
    """(n, engines, tanks) feed shares per sample at each engine's drawn ratio, or None when no engine
    has a ratio sigma (nothing drawn then, so existing streams and answers are unchanged)."""
    sig = ratio_sigmas(craft)
    if not sig.any():
        return None
    frac = np.broadcast_to(craft.feed_fractions(), (n, len(craft.engines), len(craft.tanks))).copy()
    z = rng.standard_normal((n, len(craft.engines)))
    ids = craft.tank_ids
    for e, eng in enumerate(craft.engines):
        if sig[e] == 0.0:
            continue
        first, second = (ids.index(t) for t in eng.feeds)
        r0 = eng.mixture_ratio
        r = np.maximum(MIN_RATIO_SHARE * r0, r0 + sig[e] * z[:, e])
        frac[:, e, first] = r / (1.0 + r)
        frac[:, e, second] = 1.0 / (1.0 + r)
    return frac


@dataclass(frozen=True)
class Pair:
    """Two tanks of different fluids fed together by at least one engine (a bipropellant pair)."""

    engine: int   # the first engine in the craft file that feeds this pair: the outage is computed for it
    first: int    # tank index of the engine's first feed
    second: int   # tank index of its second feed


def pairs(craft: Craft) -> list[Pair]:
    """Every bipropellant pair once, in the order of the first engine that feeds it."""
    ids, out, seen = craft.tank_ids, [], set()
    for e, eng in enumerate(craft.engines):
        if len(eng.feeds) != 2:
            continue
        a, b = (ids.index(t) for t in eng.feeds)
        if craft.tanks[a].fluid.strip().lower() == craft.tanks[b].fluid.strip().lower():
            continue  # two tanks of one propellant (e.g. two hydrazine tanks): no mixture ratio
        key = frozenset((a, b))
        if key not in seen:
            seen.add(key)
            out.append(Pair(e, a, b))
    return out


def stranded(craft: Craft, remaining, pair: Pair, frac=None) -> tuple[np.ndarray, np.ndarray]:
    """Kilograms stranded and the tank index holding them, when the pair's engine draws its usable
    propellant (remaining less residual) at its feed shares until one tank is empty.

    ``remaining`` is (tanks,) or (S, tanks); ``frac`` the craft's nominal shares (engines, tanks) or
    per-sample ones (S, engines, tanks). Burnable x = min(u1/f1, u2/f2); each tank keeps u - x·f, one of
    the two is zero, the other is stranded.
    """
    fr = craft.feed_fractions() if frac is None else np.asarray(frac, dtype=float)
    u = np.maximum(0.0, np.asarray(remaining, dtype=float) - craft.residuals())
    ua, ub = u[..., pair.first], u[..., pair.second]
    fa, fb = fr[..., pair.engine, pair.first], fr[..., pair.engine, pair.second]
    x = np.minimum(ua / fa, ub / fb)
    left_a, left_b = np.maximum(0.0, ua - x * fa), np.maximum(0.0, ub - x * fb)
    tank = np.where(left_a >= left_b, pair.first, pair.second)
    return left_a + left_b, tank
