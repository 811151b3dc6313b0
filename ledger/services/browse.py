"""Browsing a large ledger: the log in windows, filters and search, one entry in full, a plan checked.

``views.log`` builds a row for every entry (about 0.6 s at 20k entries); a screen shows a few dozen. A
``LogIndex`` holds the replay order and the lookups ``views.log`` computes once per snapshot, so rows are
built only for the window on screen, each exactly as ``views.log`` would build it.
"""
from __future__ import annotations

import bisect
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

from ..core import capability as cap
from ..core.entries import BURN, CORRECT, GAUGE, MASS, PLAN, REBASELINE, USE, Entry
from ..errors import InputError
from .ledger import Snapshot
from .timefmt import iso
from . import views
from .views import _amount


@dataclass(frozen=True)
class LogIndex:
    """Replay order of all entries and the lookups a row needs (built once per snapshot)."""

    order: tuple[int, ...]          # entry seqs in log order
    keys: tuple[tuple[float, int], ...]  # their sort keys (time shown, seq)
    entries: tuple[Entry, ...]      # the snapshot's entries, in seq order
    by_seq: Mapping[int, Entry]
    effect: Mapping[int, int]       # event seq -> replay index
    roots: Mapping[int, int]        # correction seq -> original entry seq
    last_fix: Mapping[int, int]     # original seq -> latest correction seq
    hay: dict[int, tuple[Entry, str]] = field(default_factory=dict)  # search text, filled lazily

    def __len__(self) -> int:
        return len(self.order)


def index(snap: Snapshot, prev: LogIndex | None = None) -> LogIndex:
    """Build the index; from ``prev`` when the ledger only grew by entries other than corrections (the
    new rows are inserted in order), and search text already made for unchanged entries is kept."""
    grown = _grow(snap, prev) if prev is not None else None
    if grown is not None:
        return grown
    by_seq = {e.seq: e for e in snap.entries}
    roots: dict[int, int] = {}
    for e in snap.entries:
        if e.kind == CORRECT:
            r = int(e.data["entry"])
            while by_seq[r].kind == CORRECT:
                r = int(by_seq[r].data["entry"])
            roots[e.seq] = r
    last_fix: dict[int, int] = {}
    for c, r in roots.items():
        last_fix[r] = max(c, last_fix.get(r, 0))
    effect = {ev.seq: i for i, ev in enumerate(snap.resolved.events)}

    def key(e: Entry) -> tuple[float, int]:
        if e.kind == CORRECT and last_fix[roots[e.seq]] == e.seq:
            return (snap.resolved.effective[roots[e.seq]].at, e.seq)
        return (e.at, e.seq)

    ranked = sorted((key(e) for e in snap.entries))
    order = tuple(k[1] for k in ranked)
    return LogIndex(order, tuple(ranked), tuple(snap.entries), by_seq, effect, roots, last_fix,
                    dict(prev.hay) if prev is not None else {})


def _grow(snap: Snapshot, prev: LogIndex) -> LogIndex | None:
    n = len(prev.entries)
    if len(snap.entries) < n or snap.entries[:n] != prev.entries:  # same objects: a fast C comparison
        return None
    new = snap.entries[n:]
    if any(e.kind == CORRECT for e in new):
        return None
    keys = list(prev.keys)
    order = list(prev.order)
    for e in new:
        k = (e.at, e.seq)
        if not keys or k > keys[-1]:
            keys.append(k)
            order.append(e.seq)
        else:
            i = bisect.bisect(keys, k)
            keys.insert(i, k)
            order.insert(i, e.seq)
    by_seq = dict(prev.by_seq)
    by_seq.update((e.seq, e) for e in new)
    events = snap.resolved.events
    m = len(prev.effect)
    if len(events) >= m and (m == 0 or prev.effect.get(events[m - 1].seq) == m - 1):
        effect = dict(prev.effect)  # events only appended: the old replay indices hold
        effect.update((ev.seq, i) for i, ev in enumerate(events[m:], start=m))
    else:
        effect = {ev.seq: i for i, ev in enumerate(events)}
    return LogIndex(tuple(order), tuple(keys), tuple(snap.entries), by_seq, effect, prev.roots,
                    prev.last_fix, prev.hay)


def row(snap: Snapshot, ix: LogIndex, seq: int) -> dict[str, Any]:
    """One ``views.log`` row for entry ``seq``."""
    e = ix.by_seq[seq]
    rep = snap.replay
    shown = e
    out: dict[str, Any] = {"id": e.seq, "kind": e.kind, "recorded": iso(e.recorded), "by": e.by,
                           "superseded": e.seq in snap.resolved.superseded or e.seq in ix.last_fix}
    carrier = e.seq not in ix.last_fix
    key_seq = e.seq
    if e.kind == CORRECT:
        root = ix.roots[e.seq]
        carrier = ix.last_fix[root] == e.seq
        out.update(corrects=e.data.get("entry"), reason=e.data.get("reason"),
                   changes=", ".join(f"{k}={v}" for k, v in e.data.get("changes", {}).items()))
        shown = snap.resolved.effective[root] if carrier else e
        out["applies_to_kind"] = snap.resolved.effective[root].kind
        key_seq = root
    out.update(at=iso(shown.at), note=shown.note if e.kind != CORRECT else e.note,
               engine=shown.get("engine"), amount=_amount(shown.data))
    out["late"] = e.kind in (BURN, USE, MASS) and e.recorded - e.at > views.LATE_AFTER_S
    if e.kind in (GAUGE, REBASELINE):
        out.update(tank=e.get("tank"), reason=e.get("reason") or None)
        if e.kind == REBASELINE:
            out["gauge"] = e.get("gauge")
    if shown.get("plan") is not None and e.kind != CORRECT:
        out["plan"] = shown.get("plan")
    if e.kind == PLAN:
        out["state"] = ("executed" if e.seq in snap.resolved.executed_by else
                        "withdrawn" if e.seq in snap.resolved.withdrawn else "pending")
    i = ix.effect.get(key_seq) if carrier else None
    if i is not None:
        out["mass_after_kg"] = float(rep.mass_after[i])
        out["propellant_kg"] = float(rep.propellant[i])
        out["dv_m_s"] = float(rep.dv[i])
        out["drawn_kg"] = {t: float(rep.drawn[i, k]) for k, t in enumerate(snap.craft.tank_ids)
                           if rep.drawn[i, k] != 0}
        if rep.adjusted is not None and rep.adjusted[i].any():
            out["adjusted_kg"] = {t: float(rep.adjusted[i, k]) for k, t in enumerate(snap.craft.tank_ids)
                                  if rep.adjusted[i, k] != 0}
    return out


def rows(snap: Snapshot, ix: LogIndex, seqs: Iterable[int]) -> list[dict[str, Any]]:
    return [row(snap, ix, s) for s in seqs]


def _haystack(e: Entry) -> str:
    d = e.data
    parts = [str(e.seq), e.kind, e.by, e.note, str(d.get("engine") or ""), str(d.get("reason") or ""),
             str(d.get("tank") or ""), str(d.get("from") or ""), str(d.get("to") or ""), iso(e.at)]
    return " ".join(parts).lower()


def select(ix: LogIndex, kinds: Sequence[str] | None = None, text: str = "") -> tuple[int, ...]:
    """Seqs in log order whose kind is in ``kinds`` (all when None) and whose id, kind, by, note, engine,
    reason or time contain every word of ``text`` (case-insensitive)."""
    words = text.lower().split()
    if not words and not kinds:
        return ix.order
    wanted = set(kinds) if kinds else None
    out = []
    for s in ix.order:
        e = ix.by_seq[s]
        if wanted is not None and e.kind not in wanted:
            continue
        if words:
            cached = ix.hay.get(s)
            if cached is None or cached[0] is not e:
                cached = ix.hay[s] = (e, _haystack(e))
            hay = cached[1]
            if not all(w in hay for w in words):
                continue
        out.append(s)
    return tuple(out)


def tanks(snap: Snapshot) -> list[dict[str, Any]]:
    """Per tank: load, remaining, residual, usable, and the part of usable the reserves would draw if
    flown now (reserve share; the rest is free), all in kg. With performance tables the reserves are flown
    last instead, at the lowest pressures (``core.blowcap.reserve_held``)."""
    from .views import blowdown_keys  # noqa: PLC0415 - views builds on this module

    craft = snap.craft
    usable = snap.usable_kg
    view = snap.blowdown
    if view is not None and view.flown is not None:  # performance tables: the reserves flown last, integrated
        from ..core.blowcap import reserve_held  # noqa: PLC0415

        held = reserve_held(view.model, snap.state, view.temperature_k)
    else:
        held = cap.reserve_draw_per_kg(snap.flight_craft) * max(snap.state.mass_kg, 0.0)
    out = []
    for i, t in enumerate(craft.tanks):
        reserve = float(min(max(held[i], 0.0), usable[i]))
        out.append({"id": t.id, "fluid": t.fluid, "load_kg": t.load_kg, "residual_kg": t.residual_kg,
                    "remaining_kg": float(snap.state.remaining_kg[i]), "usable_kg": float(usable[i]),
                    "reserve_kg": reserve, "free_kg": float(usable[i]) - reserve, **blowdown_keys(snap.blowdown, i)})
    return out


def detail(snap: Snapshot, ix: LogIndex, seq: int, stored: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Everything about one entry: its row, its data in SI, who and when, the chain fields, corrections."""
    if seq not in ix.by_seq:
        raise InputError(f"no entry {seq} in this ledger")
    e = ix.by_seq[seq]
    out = row(snap, ix, seq)
    out["data"] = dict(e.data)
    out["note"] = e.note
    out["at"] = iso(e.at)
    out["corrected_by"] = sorted(c for c, r in ix.roots.items() if r == (ix.roots.get(seq, seq)) and c != seq)
    if e.kind == PLAN and seq in snap.resolved.executed_by:
        out["executed_by"] = snap.resolved.executed_by[seq]
    if e.kind != CORRECT and seq in snap.resolved.effective and seq in ix.last_fix:
        out["now_counts_as"] = _amount(snap.resolved.effective[seq].data)
    if stored:
        for k in ("host", "program", "hash", "prev"):
            if k in stored:
                out[k] = stored[k]
    return out


def check_plan(snap: Snapshot, plan_seq: int) -> dict[str, Any]:
    """Check a pending plan as the burn: the other pending plans are flown first, this one is the burn."""
    plan = next((p for p in snap.resolved.pending if p.seq == plan_seq), None)
    if plan is None:
        raise InputError(f"entry {plan_seq} is not a pending plan")
    return views.check(snap, plan.get("engine"), float(plan.get("dv")), exclude_plan=plan_seq)


def check(snap: Snapshot, engine: str, dv: float) -> dict[str, Any]:
    """``views.check`` (every pending plan flown first), with the engine validated first."""
    if engine not in snap.craft.engine_ids:
        raise InputError(f"unknown engine '{engine}' (engines: {', '.join(snap.craft.engine_ids)})")
    return views.check(snap, engine, dv)
