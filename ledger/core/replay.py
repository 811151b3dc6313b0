"""Replay of the ledger as prefix scans.

Every event is an affine step on the craft's mass: a burn given by delta-v scales it by exp(-dv/ve), a
burn or use given by duration or propellant subtracts, a mass change adds. Composing affine steps is a
cumulative product and a cumulative sum, so the whole history replays in a few numpy calls instead of
a Python loop per entry; ``replay_loop`` is the plain reference the tests and benchmarks compare with.

A re-baseline sets one tank to an adopted value, so its step depends on the state (mass changes by
adopted minus bookkeeping). The history is therefore cut at re-baselines into segments, each one scan;
a ledger holds few re-baselines, so the loop over segments costs nothing measurable.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from .craft import Craft
from .entries import BURN, MASS, REBASELINE, USE, Entry

STEP_SCALE, STEP_DRAW, STEP_MASS, STEP_REBASE = 0, 1, 2, 3


@dataclass(frozen=True)
class Steps:
    """Events as arrays: step type, engine index (-1 for mass changes) and the SI amount."""

    kind: np.ndarray      # int8, STEP_*
    engine: np.ndarray    # int32
    amount: np.ndarray    # float64: dv (m/s) for SCALE, kg for DRAW, signed kg for MASS, adopted kg for REBASE
    is_burn: np.ndarray   # bool: a burn (delivers delta-v) rather than a use or mass change
    tank: np.ndarray | None = None  # int32: the re-baselined tank for REBASE steps, -1 otherwise
    isp_factor: np.ndarray | None = None  # float64: pulse-mode Isp share of a pulse train's step, 1 otherwise


_NAN = float("nan")
_KIND_CODE = {BURN: 0, MASS: 2, REBASELINE: 3}  # anything else (a use) draws: 1


def _column(datas: Sequence[Mapping[str, Any]], key: str) -> np.ndarray:
    """One stored field of every event as floats (NaN where the event has none)."""
    return np.fromiter((_NAN if (v := d.get(key)) is None else v for d in datas), dtype=float, count=len(datas))


def steps_from_events(craft: Craft, events: Sequence[Entry]) -> Steps:
    """Turn resolved events into step arrays; a duration becomes propellant through the mass flow.

    Field by field over all events (one list comprehension per field, then whole-array choices), not
    event by event: at 100k entries this is the larger part of a replay, and a Python call per event
    cost several times more. The rules, per event: a mass change adds its delta; a re-baseline sets a
    tank; a burn with a delta-v scales the mass; otherwise a duration (at the engine's mass flow) or a
    propellant mass is drawn."""
    n = len(events)
    if n == 0:
        empty = np.empty(0)
        return Steps(np.empty(0, np.int8), np.empty(0, np.int32), empty, np.empty(0, bool), np.empty(0, np.int32))
    index = {e.id: i for i, e in enumerate(craft.engines)}
    tanks = {t.id: i for i, t in enumerate(craft.tanks)}
    datas = [ev.data for ev in events]
    code = np.fromiter((_KIND_CODE.get(ev.kind, 1) for ev in events), dtype=np.int8, count=n)
    is_mass, is_rebase, is_burn = code == 2, code == 3, code == 0
    engine = np.fromiter((index.get(d.get("engine"), -1) for d in datas), dtype=np.int32, count=n)
    engine[is_mass | is_rebase] = -1
    unknown = np.flatnonzero((engine < 0) & ~(is_mass | is_rebase))
    if unknown.size:
        raise KeyError(f"engine {datas[int(unknown[0])].get('engine')!r} of entry {events[int(unknown[0])].seq}")
    dv, duration = _column(datas, "dv"), _column(datas, "duration")
    pulse_scale = pulse_duration_scale(craft, datas, engine)
    if pulse_scale is not None:  # pulse trains of impulse-bit engines: their steady-state equivalent on-time
        duration = duration * pulse_scale
    scale = is_burn & ~np.isnan(dv)
    timed = ~(is_mass | is_rebase | scale) & ~np.isnan(duration)
    by_mass = ~(is_mass | is_rebase | scale | timed)
    amount = np.zeros(n)
    amount[scale] = dv[scale]
    amount[timed] = duration[timed] * craft.mass_flows()[engine[timed]]
    for mask, key in ((by_mass, "propellant"), (is_mass, "delta"), (is_rebase, "remaining_kg")):
        if mask.any():
            picked = np.flatnonzero(mask)
            values = np.array([datas[i][key] for i in picked.tolist()], dtype=float)  # KeyError if missing
            amount[picked] = values
    kind = np.full(n, STEP_DRAW, dtype=np.int8)
    kind[scale], kind[is_mass], kind[is_rebase] = STEP_SCALE, STEP_MASS, STEP_REBASE
    tank = np.full(n, -1, dtype=np.int32)
    for i in np.flatnonzero(is_rebase).tolist():
        tank[i] = tanks[datas[i]["tank"]]
    return Steps(kind, engine, amount, is_burn, tank, pulse_isp_factors(craft, datas, engine))


def pulse_isp_factors(craft: Craft, datas: Sequence[Mapping[str, Any]], engine: np.ndarray) -> np.ndarray | None:
    """Per step, the share of steady-state Isp a pulse train delivers (engine ``pulse_isp_factor``), else 1.

    Interpretation (issue 12, point 3): a pulse train of N pulses of on-time T is stored as a timed firing
    of duration N x T (core.entries.PULSE_FIELDS), so it draws N x T x mass flow like any timed firing (the
    flow the valve passes while open: thrust/(Isp g0) at steady state, or the feed-pressure model's where
    one is given); an engine with an impulse-bit table draws N x I_bit(T) / (Isp_pulse g0) instead
    (``pulse_duration_scale``). The impulse that flow delivers is lower in pulse mode, so a pulse *burn* delivers
    delta-v = isp_factor x ve x ln(m_before/m_after). None when the ledger holds no pulse train."""
    if not any(d.get("pulses") is not None for d in datas):
        return None
    factors = np.array([e.pulse_isp_factor for e in craft.engines] + [1.0])
    pulsed = np.fromiter((d.get("pulses") is not None for d in datas), dtype=bool, count=len(datas))
    return np.where(pulsed, factors[engine], 1.0)


def pulse_duration_scale(craft: Craft, datas: Sequence[Mapping[str, Any]], engine: np.ndarray) -> np.ndarray | None:
    """Per event, the factor that turns a pulse train's stored total on-time N x T into the steady-state
    on-time that draws its propellant (``Engine.pulse_on_time_scale``); 1 for every other event. None (no
    work) when no engine has an impulse-bit table or the ledger holds no pulse train. Applied wherever a
    duration becomes propellant (this replay, core.blowdown, core.segments, the reference loops)."""
    if not craft.has_impulse_bits or not any(d.get("pulses") is not None for d in datas):
        return None
    out = np.ones(len(datas))
    for e, eng in enumerate(craft.engines):
        if eng.impulse_bit is None:
            continue
        sel = np.flatnonzero((np.asarray(engine) == e)
                             & np.fromiter((d.get("pulses") is not None for d in datas), dtype=bool, count=len(datas)))
        if sel.size:
            on_time = np.array([float(datas[i]["on_time"]) for i in sel.tolist()])
            out[sel] = eng.pulse_on_time_scale(on_time)
    return out


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
    adjusted: np.ndarray | None = None  # (n, tanks) kg a re-baseline added (adopted - bookkeeping), else 0


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


def _scan(m: float, rem: np.ndarray, a: np.ndarray, b: np.ndarray, kind: np.ndarray, engine: np.ndarray,
          fractions: np.ndarray) -> tuple[np.ndarray, ...]:
    """One segment without re-baselines: masses after, propellant, drawn and remaining per tank."""
    after = mass_scan(m, a, b)
    before = np.concatenate(([m], after[:-1])) if len(after) else np.empty(0)
    prop = np.where(kind == STEP_MASS, 0.0, before - after)
    drawn = prop[:, None] * fractions[engine]  # engine -1 picks the zero row
    return after, prop, drawn, rem - np.cumsum(drawn, axis=0), np.zeros(drawn.shape)


def replay(craft: Craft, events: Sequence[Entry], steps: Steps | None = None) -> Replay:
    steps = steps if steps is not None else steps_from_events(craft, events)
    ve = craft.ve()
    a, b = _affine(steps, ve)
    return replay_affine(craft, steps, a, b, ve[np.maximum(steps.engine, 0)])


def replay_affine(craft: Craft, steps: Steps, a: np.ndarray, b: np.ndarray, ve_event: np.ndarray) -> Replay:
    """The replay given every step's affine (a, b) and the exhaust velocity its delta-v is counted at
    (``core.blowdown`` calls it with draws it found by integration, one call per fixed-point pass)."""
    m0 = craft.initial_mass_kg
    loads = craft.loads()
    n, n_tanks = len(steps.kind), len(craft.tanks)
    fractions = np.vstack([craft.feed_fractions(), np.zeros((1, n_tanks))])
    cuts = np.flatnonzero(steps.kind == STEP_REBASE) if steps.tank is not None else ()
    if len(cuts) == 0:
        after, prop, drawn, remaining, adjusted = _scan(m0, loads, a, b, steps.kind, steps.engine, fractions)
    else:
        parts, m, rem, start = [], m0, loads, 0
        for stop in [*cuts.tolist(), n]:
            if stop > start:  # one scan over the affine steps between re-baselines
                seg = slice(start, stop)
                parts.append(_scan(m, rem, a[seg], b[seg], steps.kind[seg], steps.engine[seg], fractions))
                m, rem = float(parts[-1][0][-1]), parts[-1][3][-1]
            if stop < n:  # the re-baseline: the tank takes the adopted value, the craft mass the difference
                t = int(steps.tank[stop])
                adjusted = np.zeros((1, n_tanks))
                adjusted[0, t] = float(steps.amount[stop]) - float(rem[t])
                m += adjusted[0, t]
                rem = rem.copy()
                rem[t] = steps.amount[stop]
                parts.append((np.array([m]), np.zeros(1), np.zeros((1, n_tanks)), rem[None, :], adjusted))
            start = stop + 1
        after, prop, drawn, remaining, adjusted = (np.concatenate(x) for x in zip(*parts))
    before = np.concatenate(([m0], after[:-1])) if n else np.empty(0)
    with np.errstate(divide="ignore", invalid="ignore"):
        dv = np.where(steps.is_burn, ve_event * np.log(before / after), 0.0)
    if steps.isp_factor is not None:  # pulse trains deliver the pulse-mode Isp (pulse_isp_factors)
        dv = dv * steps.isp_factor
    final_mass = float(after[-1]) if n else m0
    final_remaining = remaining[-1].copy() if n else loads.copy()
    return Replay(before, after, prop, dv, drawn, remaining, final_mass, final_remaining, adjusted)


def replay_loop(craft: Craft, events: Sequence[Entry]) -> tuple[float, np.ndarray]:
    """Plain per-entry reference replay (final mass, remaining per tank); used to check the scan."""
    m = craft.initial_mass_kg
    remaining = craft.loads().copy()
    fractions = craft.feed_fractions()
    ve = craft.ve()
    flows = craft.mass_flows()
    index = {e.id: i for i, e in enumerate(craft.engines)}
    tanks = {t.id: i for i, t in enumerate(craft.tanks)}
    for ev in events:
        d = ev.data
        if ev.kind == MASS:
            m += d["delta"]
            continue
        if ev.kind == REBASELINE:
            t = tanks[d["tank"]]
            m += d["remaining_kg"] - remaining[t]
            remaining = remaining.copy()
            remaining[t] = d["remaining_kg"]
            continue
        e = index[d["engine"]]
        if ev.kind == BURN and d.get("dv") is not None:
            p = m * (1.0 - np.exp(-d["dv"] / ve[e]))
        elif d.get("duration") is not None:
            p = flows[e] * d["duration"]
            if d.get("pulses") is not None:  # a pulse train: its steady-state equivalent on-time
                p *= float(craft.engines[e].pulse_on_time_scale(d["on_time"]))
        else:
            p = d["propellant"]
        m -= p
        remaining = remaining - p * fractions[e]
    return m, remaining


__all__ = ["Replay", "Steps", "replay", "replay_loop", "steps_from_events", "replay_affine", "mass_scan", "scan_log", "USE",
           "pulse_duration_scale"]
