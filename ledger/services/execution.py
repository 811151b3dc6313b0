"""Warnings for a burn that executes a plan: never a refusal (an executed burn is always recorded).

Worked out once, from the ledger as it stood just before the burn, and stored on the burn entry
(``plan_warnings``) so the command, ``status`` and the entry itself say the same thing later.
"""
from __future__ import annotations

import math
from typing import Any, Mapping

import numpy as np

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


def mass_before(snap: Snapshot, at: float) -> float:
    """The craft's mass just before an event at ``at`` added to ``snap``: after every replayed event at or
    before that time (replay order is (at, seq), and a new entry has the highest seq), else the loaded mass.
    A back-dated burn flies from the mass it had then, not from the mass on board now."""
    events = snap.resolved.events
    ats = np.fromiter((e.at for e in events), dtype=float, count=len(events))
    k = int(np.searchsorted(ats, float(at), side="right"))
    return float(snap.replay.mass_after[k - 1]) if k else float(snap.craft.initial_mass_kg)


def achieved_dv(snap: Snapshot, payload: Mapping[str, Any], at: float | None = None) -> float | None:
    """The burn's delta-v: as logged, else from its duration or propellant at nominal thrust and Isp,
    flown from the mass at the burn's time ``at`` (the mass on board now when no time is given) by the
    rocket equation dv = ve ln(m0 / (m0 - mp))."""
    if payload.get("dv") is not None:
        return float(payload["dv"])
    e = snap.craft.engine_index(payload["engine"])
    eng = snap.craft.engines[e]
    view = snap.blowdown
    pulsed = payload.get("pulses") is not None
    duration = payload.get("duration")
    if duration is not None and pulsed:  # a pulse train: its steady-state equivalent on-time (impulse bit)
        duration = float(duration) * float(eng.pulse_on_time_scale(payload["on_time"]))
    if view is not None and e in view.model.perf:  # performance against the falling feed pressure
        from ..core import blowdown as bd  # noqa: PLC0415

        r0, temps, m = snap.state.remaining_kg[None, :], view.temperature_k[None, :], snap.state.mass_kg
        if duration is not None:
            p = float(bd.timed_draw(view.model, e, r0, temps, float(duration))[0])
        else:
            p = float(payload.get("propellant") or 0.0)
        factor = eng.pulse_isp_factor if pulsed else 1.0  # pulse-mode Isp, as the replay counts it
        return factor * float(bd.dv_over_draw(view.model, e, m, r0, temps, p)[0]) if 0 < p < m else None
    if duration is not None:
        p = eng.mass_flow * float(duration)
    elif payload.get("propellant") is not None:
        p = float(payload["propellant"])
    else:
        return None
    m = snap.state.mass_kg if at is None else mass_before(snap, at)
    ve = eng.ve * (eng.pulse_isp_factor if payload.get("pulses") is not None else 1.0)  # pulse-mode Isp
    return ve * math.log(m / (m - p)) if 0 < p < m else None


def _approval(snap: Snapshot, seq: int) -> str | None:
    """Why the plan's approval does not stand (rejected, never approved, stale, too few distinct approvers under
    the craft's approval rule), or None if it does."""
    from . import approvalrule  # noqa: PLC0415

    d = snap.resolved.decisions.get(seq)
    if d is None:
        return f"plan #{seq} was never approved"
    if d.kind != APPROVE:
        return f"plan #{seq} was rejected (entry #{d.seq}, by {d.by})"
    plan = snap.resolved.effective[seq]
    need = approvalrule.needed(snap.craft, plan)
    if need <= 1:
        return _stale(snap, seq, d)
    t = approvalrule.tally(approvalrule.by_plan(snap.entries).get(seq, []), need, lambda a: _stale(snap, seq, a))
    if t["approval"] == "approved":
        return None
    rule = approvalrule.rule(snap.craft)
    why = (f"plan #{seq} has {approvalrule.words(dict(t, approval=approvalrule.PARTIAL))} (the craft's approval "
           f"rule needs {need} distinct names above {float(rule['above_dv_m_s']):g} m/s)")
    if t["stale_approvers"]:
        why += "; stale: " + "; ".join(t["stale_approvers"].values())
    return why


def _stale(snap: Snapshot, seq: int, d) -> str | None:
    """Why approval ``d`` of plan ``seq`` is stale by the nominal check now, or None if it still holds."""
    from . import uncertainty, views  # noqa: PLC0415

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
    done = achieved_dv(snap, payload, at)
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


def preview(snap: Snapshot, data: Mapping[str, Any], at: float | None = None) -> list[str]:
    """The warnings recording this burn would store, worked out on ``snap``, nothing written (the console's
    burn form shows them before it records). Raises InputError for data the ledger would refuse."""
    from ..core.entries import BURN  # noqa: PLC0415
    from .records import validate_data  # noqa: PLC0415
    from .timefmt import now  # noqa: PLC0415

    if data.get("plan") is None:
        return []
    payload = validate_data(snap.craft, snap.resolved, BURN, data)
    t = now()
    return plan_warnings(snap, payload, t if at is None else float(at), t)


def before(snap: Snapshot, seq: int, plan: Any = None) -> Snapshot:
    """The ledger as it stood just before entry ``seq`` was appended: its earlier entries, replayed. With
    ``plan`` (an effective plan entry), that plan reads as given instead of as it stood then: a burn's plan
    warnings are judged against the plan as corrected, never against content a correction has replaced."""
    from ..core.entries import CORRECT, _root, resolve  # noqa: PLC0415 - _root: corrections back to their entry
    from ..core.replay import replay  # noqa: PLC0415
    from .ledger import assemble  # noqa: PLC0415

    entries = tuple(e for e in snap.entries if e.seq < seq)
    if plan is not None:
        by_seq = {e.seq: e for e in snap.entries}
        entries = tuple(plan if e.seq == plan.seq else e for e in entries
                        if not (e.kind == CORRECT and _root(int(e.data["entry"]), by_seq) == plan.seq))
    resolved = resolve(entries)
    return assemble(snap.path, snap.craft, snap.meta, [], entries, resolved, replay(snap.craft, resolved.events),
                    None)


def corrected_warnings(snap: Snapshot, burn_seq: int, corrected: Any) -> list[str]:
    """The plan warnings for a burn's corrected content: worked out as when the burn was recorded (the
    ledger before it, the clock at its recording, the plan as corrected so far), with the corrected engine,
    amount, time and plan."""
    original = next(e for e in snap.entries if e.seq == burn_seq)
    payload = {k: v for k, v in corrected.data.items() if k != "plan_warnings"}
    plan_seq = payload.get("plan")
    plan = snap.resolved.effective.get(int(plan_seq)) if plan_seq is not None else None
    return plan_warnings(before(snap, burn_seq, plan), payload, corrected.at, original.recorded)


def executed_warnings(snap: Snapshot, plan_seq: int, corrected_plan: Any) -> dict[str, Any] | None:
    """For a correction of a plan a burn has already executed: that burn's plan warnings re-worked against
    the corrected plan (``{"burn": seq, "plan_warnings": [...]}``), or None when no burn executed it. Stored
    on the plan's correction, so the burn's warnings say the same in every screen after the correction."""
    burn_seq = snap.resolved.executed_by.get(int(plan_seq))
    if burn_seq is None:
        return None
    burn = snap.resolved.effective[burn_seq]
    original = next(e for e in snap.entries if e.seq == burn_seq)
    payload = {k: v for k, v in burn.data.items() if k != "plan_warnings"}
    found = plan_warnings(before(snap, burn_seq, corrected_plan), payload, burn.at, original.recorded)
    return {"burn": int(burn_seq), "plan_warnings": found}
