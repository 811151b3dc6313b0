"""Ledger entries and how corrections, withdrawals and plan links resolve into the events replayed.

Entries are never edited: a correction is a new entry naming the one it supersedes, a withdrawal names a
plan, an approval or rejection names a plan too. ``resolve`` turns the append-only list into what actually
counts, so every consumer (replay, check, log, reports) sees the same answer.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, NamedTuple

import numpy as np

BURN, PLAN, MASS, USE, WITHDRAW, CORRECT = "burn", "plan", "mass", "use", "withdraw", "correct"
HANDOVER = "handover"
"""A shift handover: who handed over to whom and the window covered (data: from, to, window_start,
window_end in POSIX seconds). It changes no state; it marks where the next "since last" window starts."""
GAUGE, REBASELINE = "gauge", "rebaseline"
APPROVE, REJECT = "approve", "reject"
KINDS = (BURN, PLAN, MASS, USE, WITHDRAW, CORRECT, HANDOVER, GAUGE, REBASELINE, APPROVE, REJECT)
DECISIONS = (APPROVE, REJECT)
PROPULSIVE = (BURN, USE)
EVENT_KINDS = frozenset((BURN, USE, MASS, REBASELINE))
"""Entries the replay steps through. A gauge reading is a record, not an event (it changes nothing by
itself); a re-baseline sets one tank's bookkeeping to an adopted value from its ``at`` on."""
AMOUNT_FIELDS = ("dv", "duration", "propellant")
"""Fields of a burn or use in SI: dv in m/s, duration in s, propellant in kg (exactly one is set)."""
PULSE_FIELDS = ("pulses", "on_time")
"""A pulse train: pulse count and on-time per pulse (s). It is stored with ``duration`` = pulses x on_time,
so every consumer of durations treats it as a timed firing; the pulse fields add the count (thruster
life) and the pulse-mode Isp for the delta-v it delivers (core.replay)."""


class Entry(NamedTuple):
    """One appended fact. ``at`` and ``recorded`` are POSIX seconds (UTC); ``data`` holds SI values.

    A NamedTuple rather than a dataclass: immutable all the same, and a ledger of 100k entries builds
    five times faster, which the status command feels on every call.
    """

    seq: int
    kind: str
    at: float
    recorded: float
    by: str
    note: str = ""
    data: Mapping[str, Any] = {}

    @property
    def id(self) -> int:
        return self.seq

    def get(self, key: str, default: Any = None) -> Any:
        return self.data.get(key, default)


@dataclass(frozen=True)
class Resolved:
    """The ledger after corrections: events to replay, plans still pending, and what was superseded."""

    events: tuple[Entry, ...]
    """Burns, uses, mass changes and re-baselines with corrections applied, in replay order (at, seq)."""
    pending: tuple[Entry, ...]
    """Plans neither executed nor withdrawn (corrected values applied), in order of planned time."""
    superseded: frozenset[int]
    """Seqs of entries replaced by a later correction."""
    effective: Mapping[int, Entry]
    """Every original entry's current form (after all corrections), by seq."""
    executed_by: Mapping[int, int]
    """plan seq -> seq of the burn that executed it."""
    withdrawn: frozenset[int]
    decisions: Mapping[int, Entry] = field(default_factory=dict)
    """plan seq -> the latest approve or reject entry naming it (a later decision replaces an earlier one)."""

    @property
    def last_event_at(self) -> float | None:
        """When the latest replayed event happened (events are in replay order), None before any."""
        return self.events[-1].at if self.events else None


def _root(seq: int, by_seq: Mapping[int, Entry]) -> int:
    """Follow a chain of corrections back to the original entry."""
    seen = set()
    while by_seq[seq].kind == CORRECT:
        if seq in seen:
            raise ValueError(f"correction cycle at entry {seq}")
        seen.add(seq)
        seq = int(by_seq[seq].data["entry"])
    return seq


def apply_correction(entry: Entry, changes: Mapping[str, Any]) -> Entry:
    """An entry with corrected fields; a new amount replaces the old one (dv, duration or propellant).

    A sigma belongs to the amount it was given with: it is dropped when the amount changes to another
    field (unless the correction gives a new sigma), kept when the same field is re-stated."""
    data = dict(entry.data)
    at = entry.at
    note = entry.note
    for key, value in changes.items():
        if key == "at":
            at = float(value)
        elif key == "note":
            note = str(value)
        else:
            if key in AMOUNT_FIELDS:
                if data.get(key) is None and "sigma" not in changes:
                    data.pop("sigma", None)
                for other in AMOUNT_FIELDS + PULSE_FIELDS:
                    data.pop(other, None)
            if key in PULSE_FIELDS:  # a pulse train replaces another amount; its total on-time follows
                for other in AMOUNT_FIELDS:
                    data.pop(other, None)
            data[key] = value
    if any(k in PULSE_FIELDS for k in changes) and data.get("pulses") is not None and data.get("on_time") is not None:
        data["duration"] = int(data["pulses"]) * float(data["on_time"])
    return entry._replace(at=at, note=note, data=data)


def _by_time(entries: list[Entry]) -> tuple[Entry, ...]:
    """Entries ordered by (at, seq); ``entries`` must already be in seq order (a stable sort keeps it)."""
    if not entries:
        return ()
    at = np.fromiter((e.at for e in entries), dtype=float, count=len(entries))
    if (at[1:] >= at[:-1]).all():  # already in time order (as entries are usually recorded): the stable order
        return tuple(entries)
    order = np.argsort(at, kind="stable")
    return tuple(entries[i] for i in order)


def resolve(entries: Iterable[Entry]) -> Resolved:
    entries = list(entries)
    if any(entries[i].seq > entries[i + 1].seq for i in range(len(entries) - 1)):
        entries.sort(key=lambda e: e.seq)
    by_seq = {e.seq: e for e in entries}
    effective: dict[int, Entry] = {e.seq: e for e in entries if e.kind != CORRECT}
    superseded: set[int] = set()
    for e in entries:
        if e.kind != CORRECT:
            continue
        target = int(e.data["entry"])
        superseded.add(target)
        root = _root(target, by_seq)
        fixed = apply_correction(effective[root], e.data.get("changes", {}))
        if "plan_warnings" in e.data:  # a corrected burn's plan warnings, re-worked when it was corrected
            fixed = fixed._replace(data={**fixed.data, "plan_warnings": list(e.data["plan_warnings"])})
        effective[root] = fixed
        redo = e.data.get("executed")  # a corrected plan: its executing burn's plan warnings, re-worked
        if isinstance(redo, dict) and int(redo.get("burn", -1)) in effective:
            b = int(redo["burn"])
            effective[b] = effective[b]._replace(data={**effective[b].data,
                                                       "plan_warnings": list(redo.get("plan_warnings") or [])})
    executed_by: dict[int, int] = {}
    withdrawn: set[int] = set()
    events, plans = [], []
    decisions: dict[int, Entry] = {}
    for seq, e in effective.items():  # insertion order is seq order
        kind = e.kind
        if kind in EVENT_KINDS:
            events.append(e)
            if kind == BURN and e.data.get("plan") is not None:
                executed_by[int(e.data["plan"])] = seq
        elif kind == PLAN:
            plans.append(e)
        elif kind == WITHDRAW:
            withdrawn.add(int(e.data["plan"]))
        elif kind in DECISIONS:
            decisions[int(e.data["plan"])] = e  # effective is in seq order: the latest decision stays
    pending = [p for p in plans if p.seq not in executed_by and p.seq not in withdrawn]
    return Resolved(_by_time(events), _by_time(pending), frozenset(superseded), effective, executed_by,
                    frozenset(withdrawn), decisions)
