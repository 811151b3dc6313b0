"""Warnings for a burn that executes a plan: never a refusal (an executed burn is always recorded).

Worked out once, from the ledger as it stood just before the burn, and stored on the burn entry
(``plan_warnings``) so the command, ``status`` and the entry itself say the same thing later.
"""
from __future__ import annotations

import math
from typing import Any, Mapping

from ..core.craft import Craft
from ..core.entries import APPROVE
from .ledger import Snapshot
from .timefmt import iso

DEFAULT_DV_REL = 0.10
DEFAULT_DV_ABS_M_S = 0.05
"""Achieved delta-v may differ from the plan's by max(10 % of the plan, 0.05 m/s) before a warning;
settable in the craft file's ``operations: plan_dv_tolerance: {relative, absolute}``."""
FUTURE_SLACK_S = 60.0
"""A burn time more than this far ahead of the clock is in the future."""


def dv_tolerance(craft: Craft) -> tuple[float, float]:
    """(relative, absolute m/s) for achieved against planned delta-v."""
    tol = (craft.extra or {}).get("plan_dv_tolerance") or {}
    return float(tol.get("relative", DEFAULT_DV_REL)), float(tol.get("absolute_m_s", DEFAULT_DV_ABS_M_S))


def achieved_dv(snap: Snapshot, payload: Mapping[str, Any]) -> float | None:
    """The burn's delta-v: as logged, else from its duration or propellant at nominal thrust and Isp,
    flown from the mass on board now (Tsiolkovsky)."""
    if payload.get("dv") is not None:
        return float(payload["dv"])
    e = snap.craft.engine_index(payload["engine"])
    eng = snap.craft.engines[e]
    if payload.get("duration") is not None:
        p = eng.mass_flow * float(payload["duration"])
    elif payload.get("propellant") is not None:
        p = float(payload["propellant"])
    else:
        return None
    m = snap.state.mass_kg
    ve = eng.ve * (eng.pulse_isp_factor if payload.get("pulses") is not None else 1.0)  # pulse-mode Isp
    return ve * math.log(m / (m - p)) if 0 < p < m else None


def _approval(snap: Snapshot, seq: int) -> str | None:
    """Why the plan's approval does not stand (rejected, never approved, stale), or None if it does."""
    from . import uncertainty, views  # noqa: PLC0415

    d = snap.resolved.decisions.get(seq)
    if d is None:
        return f"plan #{seq} was never approved"
    if d.kind != APPROVE:
        return f"plan #{seq} was rejected (entry #{d.seq}, by {d.by})"
    then = dict(d.get("check") or {})
    head = int((d.get("head") or {}).get("seq", d.seq - 1))
    if not uncertainty._changed_since(snap, head):
        return None
    now = views.check(snap, snap.resolved.effective[seq].get("engine"), float(snap.resolved.effective[seq].get("dv")),
                      exclude_plan=seq)
    was = float(then.get("dv_free_after_m_s", 0.0))
    moved = abs(now["dv_free_after_m_s"] - was)
    tol = max(uncertainty.STALE_DV_ABS_M_S, uncertainty.STALE_DV_REL * abs(was))
    if now["verdict"] == "infeasible" and then.get("verdict") != "infeasible":
        return f"plan #{seq}'s approval (entry #{d.seq}) is stale: its check is now infeasible"
    if moved > tol:
        return (f"plan #{seq}'s approval (entry #{d.seq}) is stale: dv free after moved {moved:.3f} m/s "
                f"since (tolerance {tol:.3f})")
    return None


def plan_warnings(snap: Snapshot, payload: Mapping[str, Any], at: float, now: float) -> list[str]:
    """Every way this burn contradicts the plan it executes (``payload['plan']``)."""
    seq = int(payload["plan"])
    res = snap.resolved
    plan = res.effective[seq]
    out = []
    if payload.get("engine") != plan.get("engine"):
        out.append(f"engine {payload.get('engine')} differs from plan #{seq}'s engine {plan.get('engine')}")
    if seq in res.executed_by:
        out.append(f"plan #{seq} was already executed by entry #{res.executed_by[seq]}")
    if seq in res.withdrawn:
        out.append(f"plan #{seq} was withdrawn")
    why = _approval(snap, seq)
    if why:
        out.append(why)
    planned = float(plan.get("dv"))
    done = achieved_dv(snap, payload)
    rel, abs_m_s = dv_tolerance(snap.craft)
    tol = max(rel * abs(planned), abs_m_s)
    if done is not None and abs(done - planned) > tol:
        out.append(f"achieved dv {done:.3f} m/s differs from plan #{seq}'s {planned:.3f} m/s by more than "
                   f"{tol:.3f} m/s ({rel:.0%} or {abs_m_s:g} m/s)")
    first = min((e.at for e in res.events), default=None)
    if first is not None and at < first:
        out.append(f"burn time {iso(at)} is before the ledger's first event ({iso(first)})")
    if at > now + FUTURE_SLACK_S:
        out.append(f"burn time {iso(at)} is in the future")
    return out
