"""A ledger kept open: the last snapshot, brought up to date incrementally when the file changes.

The console polls the file and redraws after every append. A full ``Ledger.snapshot()`` re-parses every
record and re-hashes the whole chain (about 0.8 s at 20k entries); the ledger is append-only, so when the
records already read are unchanged (compared by value) only the new ones are parsed and their links
verified. Anything else (a record edited, removed or reordered, a new craft definition) falls back to a
full rebuild, so the answer is always the one ``Ledger.snapshot()`` gives.
"""
from __future__ import annotations

import os
import threading
from dataclasses import replace
from typing import Any, Mapping, Sequence

import numpy as np

from ..bulk import paused_gc
from ..core.codec import craft_from_dict
from ..core.entries import BURN, CORRECT, DECISIONS, MASS, PLAN, REBASELINE, USE, WITHDRAW, Entry, Resolved, resolve
from ..core.replay import Replay, replay
from ..errors import StoreError
from ..store.chain import Break, digest
from .ledger import Ledger, Snapshot, assemble
from .records import entries_from_records


def file_key(path: str) -> tuple[int, int, int] | None:
    """(inode, size, mtime_ns): an atomic replace changes the inode, an append the size and mtime."""
    try:
        st = os.stat(path)
    except OSError:
        return None
    return (st.st_ino, st.st_size, st.st_mtime_ns)


class ChainCheck:
    """Hash-chain verification that resumes where it stopped (same result as ``verify_chain``)."""

    def __init__(self, meta: Mapping[str, Any]):
        self.meta = meta
        self.count = 0
        self.brk: Break | None = None
        if meta.get("hash") != digest(meta):
            self.brk = Break(0, "stored hash does not match the craft definition's contents")
        self.prev = meta.get("hash")

    def feed(self, records: Sequence[Mapping[str, Any]]) -> Break | None:
        """Verify ``records[self.count:]``; returns the first break found so far."""
        for rec in records[self.count:]:
            if self.brk is not None:
                break
            expected = self.count + 1
            seq = rec.get("seq")
            if seq != expected:
                self.brk = Break(expected, f"sequence jumps from {expected - 1} to {seq}")
            elif rec.get("prev") != self.prev:
                self.brk = Break(seq, "link to the previous entry does not match its hash")
            elif rec.get("hash") != digest(rec):
                self.brk = Break(seq, "stored hash does not match the entry's contents")
            else:
                self.prev = rec["hash"]
                self.count += 1
        return self.brk


class LiveLedger(Ledger):
    """``Ledger`` whose ``snapshot()`` reuses the previous one; writes (record, correct) go through it too.

    Thread-safe: the console reloads in a worker thread while a form may write from the UI thread.
    """

    def __init__(self, path: str):
        super().__init__(path)
        self._lock = threading.RLock()
        self._key: tuple[int, int, int] | None = None
        self._meta: Mapping[str, Any] | None = None
        self._craft = None
        self._records: list[Mapping[str, Any]] = []
        self._entries: list[Entry] = []
        self._chain: ChainCheck | None = None
        self._snap: Snapshot | None = None
        self.full_rebuilds = 0

    def changed(self) -> bool:
        """Has the ledger changed since the last snapshot (cheap: one stat, or a database notification)?"""
        return self.file.change_key() != self._key

    def store_note(self) -> str | None:
        """A line for the console when the store cannot be reached (the database connection is lost), else None."""
        note = getattr(self.file, "live_note", None)
        return note() if note is not None else None

    @property
    def verified(self) -> bool:
        """True when every record of the last snapshot has had its chain link checked."""
        with self._lock:
            return self._chain is not None and (self._chain.brk is not None
                                                or self._chain.count == len(self._records))

    def snapshot(self, verify: bool = True) -> Snapshot:
        """The ledger now. ``verify=False`` skips hashing records not yet checked (first paint of a big
        ledger); the snapshot's integrity is then None until ``snapshot()`` is called again."""
        with self._lock:
            key = self.file.change_key()
            if self._snap is not None and key == self._key and (self.verified or not verify):
                return self._snap
            meta, records = self.file.read()
            try:
                with paused_gc():
                    return self._update(key, meta, records, verify)
            except (KeyError, TypeError, ValueError) as exc:
                self._snap, self._key = None, None
                raise StoreError(f"{self.path}: ledger contents malformed ({type(exc).__name__}: {exc})") from None

    def _update(self, key, meta, records, verify: bool) -> Snapshot:
        m = len(self._records)
        same = (self._meta is not None and meta == self._meta and len(records) >= m
                and records[:m] == self._records)
        if not same:
            self.full_rebuilds += 1
            self._meta, self._craft = meta, craft_from_dict(meta["craft"])
            self._records, self._entries = [], []
            self._chain = ChainCheck(meta)
            m = 0
        new = entries_from_records(records[m:])
        self._entries.extend(new)
        self._records = list(records)
        integrity = self._chain.feed(self._records) if verify else self._chain.brk
        craft = self._craft
        entries = tuple(self._entries)
        grown = extend(craft, self._snap, new) if same and self._snap is not None else None
        resolved, rep = grown if grown is not None else (None, None)
        if resolved is None:
            resolved = resolve(entries)
            rep = replay(craft, resolved.events)
        self._snap = assemble(self.path, craft, meta, records, entries, resolved, rep, integrity)
        self._key = key
        return self._snap

    def record_of(self, seq: int) -> Mapping[str, Any] | None:
        """The stored record (with host, program, hash) behind entry ``seq`` of the last snapshot."""
        with self._lock:
            if 1 <= seq <= len(self._records) and self._records[seq - 1].get("seq") == seq:
                return self._records[seq - 1]
            return next((r for r in self._records if r.get("seq") == seq), None)


def extend(craft, prev: Snapshot, new: Sequence[Entry]) -> tuple[Resolved, Replay] | None:
    """``resolve`` and ``replay`` of prev's entries plus ``new``, reusing prev's, when the new entries
    only append: no corrections or re-baselines, and events dated at or after the last event replayed.
    Otherwise None (the caller resolves and replays everything). Replaying the new events alone from prev's final
    state is the same prefix scan, started where the old one ended."""
    res = prev.resolved
    if not new:
        return res, prev.replay
    last = (res.events[-1].at, res.events[-1].seq) if res.events else None
    effective = dict(res.effective)
    executed_by = dict(res.executed_by)
    withdrawn = set(res.withdrawn)
    decisions = dict(res.decisions)
    plans = list(res.pending)
    events: list[Entry] = []
    for e in new:
        if e.kind in (CORRECT, REBASELINE):
            return None
        effective[e.seq] = e
        if e.kind in (BURN, USE, MASS):
            if last is not None and (e.at, e.seq) < last:
                return None  # back-dated: everything after it replays again
            last = (e.at, e.seq)
            events.append(e)
            if e.kind == BURN and e.get("plan") is not None:
                executed_by[int(e.get("plan"))] = e.seq
        elif e.kind == PLAN:
            plans.append(e)
        elif e.kind == WITHDRAW:
            withdrawn.add(int(e.get("plan")))
        elif e.kind in DECISIONS:
            decisions[int(e.get("plan"))] = e
    pending = sorted((p for p in plans if p.seq not in executed_by and p.seq not in withdrawn),
                     key=lambda p: (p.at, p.seq))
    resolved = Resolved(res.events + tuple(events), tuple(pending), res.superseded, effective, executed_by,
                        frozenset(withdrawn), decisions)
    if not events:
        return resolved, prev.replay
    old = prev.replay
    # the craft as it stands after the old events: same engines, tanks loaded with what remains
    now = replace(craft, dry_mass_kg=old.mass_kg - float(old.remaining_kg.sum()),
                  tanks=tuple(replace(t, load_kg=float(r)) for t, r in zip(craft.tanks, old.remaining_kg)))
    part = replay(now, events)
    rep = Replay(np.concatenate((old.mass_before, part.mass_before)),
                 np.concatenate((old.mass_after, part.mass_after)),
                 np.concatenate((old.propellant, part.propellant)), np.concatenate((old.dv, part.dv)),
                 np.vstack((old.drawn.reshape(-1, len(craft.tanks)), part.drawn)),
                 np.vstack((old.remaining.reshape(-1, len(craft.tanks)), part.remaining)),
                 part.mass_kg, part.remaining_kg,
                 None if old.adjusted is None else np.vstack((old.adjusted, np.zeros(part.drawn.shape))))
    return resolved, rep
