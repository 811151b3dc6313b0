"""Replay of the ledger as one prefix scan.

Every event is an affine step on the craft's mass: a burn given by delta-v scales it by exp(-dv/ve), a
burn or use given by duration or propellant subtracts, a mass change adds. Composing affine steps is a
cumulative product and a cumulative sum, so the whole history replays in a few numpy calls instead of
a Python loop per entry; ``replay_loop`` is the plain reference the tests and benchmarks compare with.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .craft import Craft
from .entries import BURN, MASS, USE, Entry

STEP_SCALE, STEP_DRAW, STEP_MASS = 0, 1, 2


@dataclass(frozen=True)
class Steps:
    """Events as arrays: step type, engine index (-1 for mass changes) and the SI amount."""

    kind: np.ndarray      # int8, STEP_*
    engine: np.ndarray    # int32
    amount: np.ndarray    # float64: dv (m/s) for SCALE, kg for DRAW, signed kg for MASS
    is_burn: np.ndarray   # bool: a burn (delivers delta-v) rather than a use or mass change


def steps_from_events(craft: Craft, events: Sequence[Entry]) -> Steps:
    """Turn resolved events into step arrays; a duration becomes propellant through the mass flow."""
    n = len(events)
    kind = np.empty(n, dtype=np.int8)
    engine = np.full(n, -1, dtype=np.int32)
    amount = np.empty(n, dtype=float)
    is_burn = np.zeros(n, dtype=bool)
    index = {e.id: i for i, e in enumerate(craft.engines)}
    flows = craft.mass_flows()
    for i, ev in enumerate(events):
        d = ev.data
        if ev.kind == MASS:
            kind[i], amount[i] = STEP_MASS, d["delta"]
            continue
        e = index[d["engine"]]
        engine[i] = e
        is_burn[i] = ev.kind == BURN
        if ev.kind == BURN and d.get("dv") is not None:
            kind[i], amount[i] = STEP_SCALE, d["dv"]
        elif d.get("duration") is not None:
            kind[i], amount[i] = STEP_DRAW, flows[e] * d["duration"]
        else:
            kind[i], amount[i] = STEP_DRAW, d["propellant"]
    return Steps(kind, engine, amount, is_burn)


@dataclass(frozen=True)
class Replay:
    """Mass and tank state after every event, plus the final state."""

    mass_before: np.ndarray   # (n,)
    mass_after: np.ndarray    # (n,)
    propellant: np.ndarray    # (n,) kg drawn by each event (0 for mass changes)
    dv: np.ndarray            # (n,) delta-v delivered (0 for uses and mass changes)
    drawn: np.ndarray         # (n, tanks) kg drawn from each tank by each event
    remaining: np.ndarray     # (n, tanks) kg left in each tank after each event
    mass_kg: float
    remaining_kg: np.ndarray  # (tanks,)


def _affine(steps: Steps, ve: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per-step (a, b) with m_after = a * m_before + b."""
    a = np.ones(len(steps.kind))
    b = np.zeros(len(steps.kind))
    scale = steps.kind == STEP_SCALE
    a[scale] = np.exp(-steps.amount[scale] / ve[steps.engine[scale]])
    draw = steps.kind == STEP_DRAW
    b[draw] = -steps.amount[draw]
    massc = steps.kind == STEP_MASS
    b[massc] = steps.amount[massc]
    return a, b


def mass_scan(m0, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Masses after each affine step, by prefix scan: m_k = A_k (m0 + sum_j b_j / A_j).

    Works along the last axis, so a (samples, steps) batch with one m0 per sample scans in one call."""
    with np.errstate(divide="ignore"):
        return scan_log(m0, np.log(a), b)


def scan_log(m0, log_a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``mass_scan`` given log(a) directly (the Monte Carlo has -dv/ve already and skips an exp/log pair)."""
    log_a, b = np.asarray(log_a, dtype=float), np.asarray(b, dtype=float)
    if log_a.shape[-1] == 0:
        return np.empty(log_a.shape)
    m0 = np.asarray(m0, dtype=float)[..., None]
    cum = np.cumsum(log_a, axis=-1)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        m = np.exp(cum) * (m0 + np.cumsum(b * np.exp(-cum), axis=-1))
    if not np.all(np.isfinite(m)):
        # Extreme histories (mass ratios beyond float range) fall back to the sequential form.
        a = np.exp(log_a)
        m = np.empty(np.broadcast_shapes(log_a.shape, b.shape))
        cur = m0[..., 0]
        for i in range(log_a.shape[-1]):
            cur = a[..., i] * cur + b[..., i]
            m[..., i] = cur
    return m


def replay(craft: Craft, events: Sequence[Entry], steps: Steps | None = None) -> Replay:
    steps = steps if steps is not None else steps_from_events(craft, events)
    ve = craft.ve()
    m0 = craft.initial_mass_kg
    loads = craft.loads()
    a, b = _affine(steps, ve)
    after = mass_scan(m0, a, b)
    before = np.concatenate(([m0], after[:-1])) if len(after) else np.empty(0)
    prop = np.where(steps.kind == STEP_MASS, 0.0, before - after)
    fractions = np.vstack([craft.feed_fractions(), np.zeros((1, len(craft.tanks)))])
    drawn = prop[:, None] * fractions[steps.engine]  # engine -1 picks the zero row
    remaining = loads - np.cumsum(drawn, axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        dv = np.where(steps.is_burn, ve[np.maximum(steps.engine, 0)] * np.log(before / after), 0.0)
    final_mass = float(after[-1]) if len(after) else m0
    final_remaining = remaining[-1].copy() if len(after) else loads.copy()
    return Replay(before, after, prop, dv, drawn, remaining, final_mass, final_remaining)


def replay_loop(craft: Craft, events: Sequence[Entry]) -> tuple[float, np.ndarray]:
    """Plain per-entry reference replay (final mass, remaining per tank); used to check the scan."""
    m = craft.initial_mass_kg
    remaining = craft.loads().copy()
    fractions = craft.feed_fractions()
    ve = craft.ve()
    flows = craft.mass_flows()
    index = {e.id: i for i, e in enumerate(craft.engines)}
    for ev in events:
        d = ev.data
        if ev.kind == MASS:
            m += d["delta"]
            continue
        e = index[d["engine"]]
        if ev.kind == BURN and d.get("dv") is not None:
            p = m * (1.0 - np.exp(-d["dv"] / ve[e]))
        elif d.get("duration") is not None:
            p = flows[e] * d["duration"]
        else:
            p = d["propellant"]
        m -= p
        remaining = remaining - p * fractions[e]
    return m, remaining


__all__ = ["Replay", "Steps", "replay", "replay_loop", "steps_from_events", "mass_scan", "scan_log", "USE"]
