"""Open a ledger, record entries, and compute its state: the use cases every shell shares."""
from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from ..core import capability as cap
from ..core.codec import craft_from_dict, craft_to_dict
from ..core.craft import Craft
from ..core.entries import BURN, CORRECT, DECISIONS, MASS, PLAN, USE, Entry, Resolved, apply_correction, resolve
from ..core.replay import Replay, replay
from ..errors import InputError, StoreError
from ..store.chain import Break
from ..store.ledgerfile import LedgerFile
from .records import clean_text, entry_from_record, make_record, validate_data
from .timefmt import iso, now

CORRECTABLE = ("at", "note", "engine", "dv", "duration", "propellant", "delta", "sigma")


@dataclass(frozen=True)
class Snapshot:
    """Everything known about the ledger at one moment: inputs, replay and derived capability."""

    path: str
    craft: Craft
    meta: Mapping[str, Any]
    entries: tuple[Entry, ...]
    resolved: Resolved
    replay: Replay
    state: cap.State
    engines: tuple[cap.EngineCapability, ...]
    integrity: Break | None
    warnings: tuple[str, ...] = field(default_factory=tuple)
    head: tuple[int, str] = (0, "")
    """(seq, hash) of the chain's last link in the records this snapshot was built from."""

    @property
    def usable_kg(self) -> np.ndarray:
        return cap.usable(self.craft, self.state)


def create(path: str, craft: Craft, by: str | None = None) -> LedgerFile:
    return LedgerFile.create(path, craft_to_dict(craft), iso(now()), clean_text(by, "--by") or "unknown")


def _warnings(craft: Craft, events: Sequence[Entry], rep: Replay, state: cap.State,
              engines: Sequence[cap.EngineCapability], integrity: Break | None) -> list[str]:
    out = []
    if integrity is not None:
        out.append(f"INTEGRITY: {integrity}")
    ids = craft.tank_ids
    residuals = craft.residuals()
    for t, tank_id in enumerate(ids):
        if len(events) == 0:
            break
        col = rep.remaining[:, t]
        below = np.flatnonzero(col < -1e-9)
        if below.size:
            first = events[int(below[0])]
            out.append(f"tank {tank_id}: bookkeeping below zero ({col.min():.3f} kg) from entry {first.seq} on;"
                       " the recorded burns exceed what was loaded")
        elif state.remaining_kg[t] < residuals[t] - 1e-9:
            out.append(f"tank {tank_id}: drawn into its residual (unusable) propellant:"
                       f" {state.remaining_kg[t]:.3f} kg left of {residuals[t]:.3f} kg residual")
    for e in engines:
        if not e.reserves_met:
            out.append(f"engine {e.engine}: reserves can no longer be met (dv free 0); limiting tank {e.limiting_tank}")
    if state.mass_kg <= 0:
        out.append("craft mass is zero or negative: the mass changes recorded exceed the craft")
    return out


def snapshot_from(path: str, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]],
                  integrity: Break | None) -> Snapshot:
    craft = craft_from_dict(meta["craft"])
    entries = tuple(entry_from_record(r) for r in records)
    resolved = resolve(entries)
    rep = replay(craft, resolved.events)
    state = cap.State(rep.mass_kg, rep.remaining_kg)
    engines = tuple(cap.capability(craft, state))
    warnings = _warnings(craft, resolved.events, rep, state, engines, integrity)
    last = records[-1] if records else meta
    head = (int(last.get("seq", len(records))), str(last.get("hash", "")))
    return Snapshot(path, craft, meta, entries, resolved, rep, state, engines, integrity, tuple(warnings), head)


class Ledger:
    """A ledger file with its use cases. Every call reads the file afresh (another process may write)."""

    def __init__(self, path: str):
        self.file = LedgerFile(path)
        self.path = self.file.path

    def snapshot(self) -> Snapshot:
        doc = self.file.document()
        from ..store.chain import verify_chain  # noqa: PLC0415
        meta = doc["meta"]["1"]
        records = self.file.records()
        try:
            return snapshot_from(self.path, meta, records, verify_chain(meta, records))
        except (KeyError, TypeError, ValueError) as exc:
            raise StoreError(f"{self.path}: ledger contents malformed ({type(exc).__name__}: {exc})") from None

    # --- writing -------------------------------------------------------------------------------
    def record(self, kind: str, data: Mapping[str, Any], *, at: float | None = None, by: str | None = None,
               note: str | None = None, snap: Snapshot | None = None) -> tuple[dict[str, Any], list[str]]:
        """Validate and append one entry. Returns the stored record and warnings it raises (never refused
        for contradicting the model: an executed burn that overdraws a tank is stored with a warning)."""
        snap = snap or self.snapshot()
        if kind == PLAN and at is None:
            raise InputError("plan: --at is required (the planned time of the burn)")
        payload = validate_data(snap.craft, snap.resolved, kind, data)
        t = now() if at is None else at
        rec = make_record(kind, t, now(), by, note, payload)
        stored = self.file.append(rec)
        after = self.snapshot()
        new = [w for w in after.warnings if w not in snap.warnings]
        return stored, new

    def correct(self, target: Any, changes: Mapping[str, Any], *, reason: str | None, by: str | None = None,
                snap: Snapshot | None = None) -> tuple[dict[str, Any], list[str]]:
        """Append a correction superseding entry ``target`` with the given fields changed."""
        snap = snap or self.snapshot()
        try:
            seq = int(str(target).lstrip("#"))
        except ValueError:
            raise InputError(f"--entry: expected an entry id such as 12, got {target!r}") from None
        by_seq = {e.seq: e for e in snap.entries}
        if seq not in by_seq:
            raise InputError(f"--entry: no entry {seq} in this ledger")
        changes = {k: v for k, v in changes.items() if v is not None}
        unknown = set(changes) - set(CORRECTABLE)
        if unknown or not changes:
            raise InputError(f"correct: give at least one corrected field ({', '.join('--' + c for c in CORRECTABLE)})")
        if not clean_text(reason, "--reason"):
            raise InputError("correct: --reason is required (why the entry was wrong)")
        root = seq
        while by_seq[root].kind == CORRECT:
            root = int(by_seq[root].data["entry"])
        current = snap.resolved.effective[root]
        if current.kind == CORRECT:
            raise InputError(f"--entry: entry {seq} cannot be corrected")
        if current.kind in DECISIONS:
            raise InputError(f"--entry: entry {seq} is an {current.kind} decision; record a new approve or reject instead")
        if "sigma" in changes and current.kind not in (BURN, USE, MASS):
            raise InputError(f"--sigma: a {current.kind} has no measured amount; sigmas belong to burns, uses and mass changes")
        merged = apply_correction(current, changes)
        data = dict(merged.data)
        plan = data.pop("plan", None) if merged.kind == BURN else None
        validate_data(snap.craft, snap.resolved, merged.kind, data)
        if plan is not None:
            data["plan"] = plan
        payload = {"entry": seq, "changes": dict(changes), "reason": clean_text(reason, "--reason")}
        rec = make_record(CORRECT, now(), now(), by, None, payload)
        rec["at"] = rec["recorded"]
        stored = self.file.append(rec)
        after = self.snapshot()
        return stored, [w for w in after.warnings if w not in snap.warnings]


def resolve_path(path: str | None) -> str:
    """--ledger, else PROPLEDGER_LEDGER, else the default file in the user data folder."""
    if path:
        return path
    env = os.environ.get("PROPLEDGER_LEDGER")
    if env:
        return env
    from platformdirs import user_data_dir  # noqa: PLC0415

    return os.path.join(user_data_dir("propledger", appauthor=False), "ledger.json")
