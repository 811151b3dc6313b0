"""Ledger entries and how corrections, withdrawals and plan links resolve into the events replayed.

Entries are never edited: a correction is a new entry naming the one it supersedes, a withdrawal names a
plan, an approval or rejection names a plan too. ``resolve`` turns the append-only list into what actually
counts, so every consumer (replay, check, log, reports) sees the same answer.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Iterable, Mapping

BURN, PLAN, MASS, USE, WITHDRAW, CORRECT = "burn", "plan", "mass", "use", "withdraw", "correct"
APPROVE, REJECT = "approve", "reject"
KINDS = (BURN, PLAN, MASS, USE, WITHDRAW, CORRECT, APPROVE, REJECT)
DECISIONS = (APPROVE, REJECT)
PROPULSIVE = (BURN, USE)
AMOUNT_FIELDS = ("dv", "duration", "propellant")
"""Fields of a burn or use in SI: dv in m/s, duration in s, propellant in kg (exactly one is set)."""


@dataclass(frozen=True)
class Entry:
    """One appended fact. ``at`` and ``recorded`` are POSIX seconds (UTC); ``data`` holds SI values."""

    seq: int
    kind: str
    at: float
    recorded: float
    by: str
    note: str = ""
    data: Mapping[str, Any] = field(default_factory=dict)

    @property
    def id(self) -> int:
        return self.seq

    def get(self, key: str, default: Any = None) -> Any:
        return self.data.get(key, default)


@dataclass(frozen=True)
class Resolved:
    """The ledger after corrections: events to replay, plans still pending, and what was superseded."""

    events: tuple[Entry, ...]
    """Burns, uses and mass changes with corrections applied, in replay order (at, seq)."""
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
                for other in AMOUNT_FIELDS:
                    data.pop(other, None)
            data[key] = value
    return replace(entry, at=at, note=note, data=data)


def resolve(entries: Iterable[Entry]) -> Resolved:
    entries = sorted(entries, key=lambda e: e.seq)
    by_seq = {e.seq: e for e in entries}
    effective: dict[int, Entry] = {e.seq: e for e in entries if e.kind != CORRECT}
    superseded: set[int] = set()
    for e in entries:
        if e.kind != CORRECT:
            continue
        target = int(e.data["entry"])
        superseded.add(target)
        root = _root(target, by_seq)
        effective[root] = apply_correction(effective[root], e.data.get("changes", {}))
    executed_by: dict[int, int] = {}
    withdrawn: set[int] = set()
    decisions: dict[int, Entry] = {}
    for seq, e in effective.items():
        if e.kind == BURN and e.get("plan") is not None:
            executed_by[int(e.get("plan"))] = seq
        elif e.kind == WITHDRAW:
            withdrawn.add(int(e.get("plan")))
        elif e.kind in DECISIONS:
            decisions[int(e.get("plan"))] = e  # effective is in seq order: the latest decision stays
    events = sorted((e for e in effective.values() if e.kind in (BURN, USE, MASS)), key=lambda e: (e.at, e.seq))
    pending = sorted(
        (e for s, e in effective.items() if e.kind == PLAN and s not in executed_by and s not in withdrawn),
        key=lambda e: (e.at, e.seq),
    )
    return Resolved(tuple(events), tuple(pending), frozenset(superseded), effective, executed_by, frozenset(withdrawn),
                    decisions)
