"""The entries of a handover window as plain rows: executed burns (planned against achieved) and the rest.

An entry belongs to the window when its event time or its recording time falls in (start, end], or when
a correction of it was recorded in the window. A burn, use or mass change recorded in the window about an
event before the window's start, or more than an hour after the event, is marked as logged late.
"""
from __future__ import annotations

from typing import Any, Mapping

from ..core.entries import BURN, CORRECT, HANDOVER, MASS, PLAN, USE, WITHDRAW, Entry
from .ledger import Snapshot
from .timefmt import iso
from .views import LATE_AFTER_S

UNITS = {"dv": "m/s", "duration": "s", "propellant": "kg", "delta": "kg"}


def _inside(t: float, start: float, end: float) -> bool:
    return start < t <= end


def _root(seq: int, by_seq: Mapping[int, Entry]) -> int:
    while by_seq[seq].kind == CORRECT:
        seq = int(by_seq[seq].data["entry"])
    return seq


def window_entries(snap: Snapshot, start: float, end: float, skip: int | None = None
                   ) -> tuple[list[Entry], dict[int, list[int]]]:
    """Original (non-correction) entries and corrections in the window, and root seq -> corrections of it."""
    by_seq = {e.seq: e for e in snap.entries}
    fixes: dict[int, list[int]] = {}
    for e in snap.entries:
        if e.kind == CORRECT:
            fixes.setdefault(_root(e.seq, by_seq), []).append(e.seq)
    chosen = []
    for e in snap.entries:
        if e.seq == skip:
            continue
        shown = snap.resolved.effective.get(e.seq, e)
        fixed_inside = any(_inside(by_seq[c].recorded, start, end) for c in fixes.get(e.seq, []))
        if _inside(shown.at, start, end) or _inside(e.recorded, start, end) or fixed_inside:
            chosen.append(e)
    return chosen, fixes


def is_late(e: Entry, shown: Entry, start: float, end: float) -> bool:
    """Logged during the window about an event before it, or more than LATE_AFTER_S after the event."""
    if e.kind not in (BURN, USE, MASS) or not _inside(e.recorded, start, end):
        return False
    return shown.at <= start or e.recorded - shown.at > LATE_AFTER_S


def _source(data: Mapping[str, Any]) -> str:
    if data.get("dv") is not None:
        return "logged dv"
    if data.get("pulses") is not None and data.get("duration") is not None:
        return f"from {int(data['pulses'])} pulses of {data['on_time']:.3f} s (pulse-mode Isp)"
    if data.get("duration") is not None:
        return f"from duration {data['duration']:.3f} s"
    return f"from propellant {data['propellant']:.4f} kg"


def burn_row(snap: Snapshot, e: Entry, index: Mapping[int, int], fixes: Mapping[int, list[int]],
             start: float, end: float) -> dict[str, Any]:
    """Planned against achieved. Achieved dv is the logged dv, else the replay's dv for the logged duration or
    propellant (nominal thrust and Isp). Ratio = achieved / planned."""
    shown = snap.resolved.effective[e.seq]
    i = index.get(e.seq)
    achieved = shown.get("dv") if shown.get("dv") is not None else (float(snap.replay.dv[i]) if i is not None else None)
    plan_seq = shown.get("plan")
    planned = None
    if plan_seq is not None and int(plan_seq) in snap.resolved.effective:
        planned = snap.resolved.effective[int(plan_seq)].get("dv")
    ratio = achieved / planned if achieved is not None and planned else None
    return {"id": e.seq, "at": iso(shown.at), "recorded": iso(e.recorded), "engine": shown.get("engine"),
            "plan": None if plan_seq is None else int(plan_seq), "planned_dv_m_s": planned,
            "achieved_dv_m_s": achieved, "achieved_from": _source(shown.data), "ratio": ratio,
            "propellant_kg": float(snap.replay.propellant[i]) if i is not None else None,
            "by": e.by, "note": shown.note, "late": is_late(e, shown, start, end),
            "corrected_by": list(fixes.get(e.seq, []))}


def _change_text(key: str, value: Any) -> str:
    if key == "at" and isinstance(value, (int, float)):
        return f"at {iso(float(value))}"
    if key in UNITS and isinstance(value, (int, float)):
        return f"{key} {value:g} {UNITS[key]}"
    return f"{key} {value}"


def summary(snap: Snapshot, e: Entry, index: Mapping[int, int]) -> str:
    """One line saying what a non-burn entry did (user text inside: renderers escape it)."""
    shown = snap.resolved.effective.get(e.seq, e)
    d = shown.data
    if e.kind == PLAN:
        state = ("executed by #%d" % snap.resolved.executed_by[e.seq] if e.seq in snap.resolved.executed_by else
                 "withdrawn" if e.seq in snap.resolved.withdrawn else "pending")
        return f"plan {d.get('engine')} {d.get('dv', 0.0):.3f} m/s for {iso(shown.at)} ({state})"
    if e.kind == USE:
        i = index.get(e.seq)
        used = f"{snap.replay.propellant[i]:.4f} kg" if i is not None else "?"
        return f"use {d.get('engine')} {used} ({_source(d)})"
    if e.kind == MASS:
        return f"mass change {d.get('delta', 0.0):+.3f} kg"
    if e.kind == WITHDRAW:
        return f"withdraws plan #{d.get('plan')}"
    if e.kind == CORRECT:
        changes = ", ".join(_change_text(k, v) for k, v in (d.get("changes") or {}).items())
        return f"corrects #{d.get('entry')}: {changes}; reason: {d.get('reason', '')}"
    if e.kind == HANDOVER:
        return f"handover {d.get('from')} -> {d.get('to')}"
    return e.kind


def other_row(snap: Snapshot, e: Entry, index: Mapping[int, int], start: float, end: float) -> dict[str, Any]:
    shown = snap.resolved.effective.get(e.seq, e)
    return {"id": e.seq, "kind": e.kind, "at": iso(shown.at), "recorded": iso(e.recorded),
            "summary": summary(snap, e, index), "by": e.by, "note": shown.note if e.kind != CORRECT else e.note,
            "late": is_late(e, shown, start, end)}


def entry_rows(snap: Snapshot, start: float, end: float, skip: int | None = None
               ) -> tuple[list[dict[str, Any]], list[dict[str, Any]]]:
    """(executed burns, other entries) of the window, each in event-time order."""
    chosen, fixes = window_entries(snap, start, end, skip)
    index = {ev.seq: i for i, ev in enumerate(snap.resolved.events)}
    order = sorted(chosen, key=lambda e: (snap.resolved.effective.get(e.seq, e).at, e.seq))
    burns = [burn_row(snap, e, index, fixes, start, end) for e in order if e.kind == BURN]
    others = [other_row(snap, e, index, start, end) for e in order if e.kind != BURN]
    return burns, others
