"""The Monte Carlo's reference: the same model as ``core.montecarlo``, one sample and one entry at a time.

Slow and obvious on purpose: the tests check the fast sampler's distribution against it, the benchmark
measures the speed-up against it.
"""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .craft import G0, Craft
from .entries import BURN, MASS, REBASELINE, Entry
from .montecarlo import DEFAULT_SEED, Samples, _globals, generator, mixture_draws
from .sigmas import entry_sigma


def simulate_loop(craft: Craft, events: Sequence[Entry], samples: int, seed: int = DEFAULT_SEED) -> Samples:
    """Reference: the same model, one sample and one entry at a time in plain Python (slow, obvious)."""
    rng = generator(seed)
    dry, loads, isp, thrust = _globals(craft, rng, samples)
    flown = mixture_draws(craft, seed, samples)  # (S, engines, tanks) or None: the nominal shares
    index = {e.id: i for i, e in enumerate(craft.engines)}
    tanks = {t.id: i for i, t in enumerate(craft.tanks)}
    cos = np.cos(np.radians([e.cant_deg for e in craft.engines]))
    nominal_flow = craft.mass_flows()
    mass = np.empty(samples)
    remaining = np.empty((samples, len(craft.tanks)))
    ve_all = isp * G0 * cos
    nominal = craft.feed_fractions()
    for s in range(samples):
        frac = nominal if flown is None else flown[s]
        m, rem = dry[s] + loads[s].sum(), loads[s].copy()
        for ev in events:
            d = ev.data
            if ev.kind == MASS:
                m += d["delta"] + entry_sigma(d, "delta") * rng.standard_normal()
                continue
            if ev.kind == REBASELINE:  # the tank takes a fresh draw, the mass the difference
                t = tanks[d["tank"]]
                adopted = d["remaining_kg"] + (d.get("sigma_kg") or 0.0) * rng.standard_normal()
                m += adopted - rem[t]
                rem[t] = adopted
                continue
            e = index[d["engine"]]
            if ev.kind == BURN and d.get("dv") is not None:
                dv = d["dv"] + entry_sigma(d, "dv") * rng.standard_normal()
                p = -m * math.expm1(-dv / ve_all[s, e])
            elif d.get("duration") is not None:
                flow = thrust[s, e] / (isp[s, e] * G0)
                k = float(craft.engines[e].pulse_on_time_scale(d["on_time"])) if d.get("pulses") is not None else 1.0
                p = (flow * d["duration"] + nominal_flow[e] * entry_sigma(d, "duration") * rng.standard_normal()) * k
            else:
                p = d["propellant"] + entry_sigma(d, "propellant") * rng.standard_normal()
            m -= p
            rem -= p * frac[e]
        mass[s], remaining[s] = m, rem
    return Samples(mass, remaining, ve_all, seed, len(events), flown)
