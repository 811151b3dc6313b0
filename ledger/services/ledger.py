"""Open a ledger, record entries, and compute its state: the use cases every shell shares."""
from __future__ import annotations

import os
from dataclasses import dataclass, field, replace
from typing import Any, Mapping, Sequence

import numpy as np

from ..bulk import paused_gc
from ..core import capability as cap
from ..core.codec import craft_from_dict, craft_to_dict
from ..core.craft import Craft
from ..core.entries import BURN, CORRECT, DECISIONS, HANDOVER, MASS, PLAN, USE, WITHDRAW, Entry, Resolved, apply_correction, resolve
from ..core.replay import Replay, replay
from ..errors import InputError, StoreError
from ..store.chain import Break
from ..store.seam import Store, create_store, open_store
from .records import clean_text, entries_from_records, entry_from_record, make_record, validate_data
from .timefmt import iso, now

CORRECTABLE = ("at", "note", "engine", "dv", "duration", "propellant", "delta", "sigma", "pulses", "on_time")
FIELDS_BY_KIND = {
    BURN: ("at", "note", "engine", "dv", "duration", "propellant", "sigma", "pulses", "on_time"),
    PLAN: ("at", "note", "engine", "dv"),
    USE: ("at", "note", "engine", "duration", "propellant", "sigma", "pulses", "on_time"),
    MASS: ("at", "note", "delta", "sigma"),
    WITHDRAW: ("at", "note"),
}
"""What a correction may change, by the kind of entry it corrects."""


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
    blowdown: Any = None
    """``services.blowdown.View`` for a craft with blowdown tanks (predicted pressures, table engines)."""

    @property
    def flight_craft(self) -> Craft:
        """The craft the closed-form capability and the Monte Carlo fly: with performance tables, the
        constant-performance equivalent of ``services.blowdown`` (same nominal replay), else the craft."""
        return self.blowdown.craft_eq if self.blowdown is not None else self.craft

    @property
    def flight_events(self) -> tuple[Entry, ...]:
        """The events that replay on ``flight_craft`` to this snapshot's figures."""
        return self.blowdown.events_eq if self.blowdown is not None else self.resolved.events

    @property
    def usable_kg(self) -> np.ndarray:
        return cap.usable(self.craft, self.state)


def create(path: str, craft: Craft, by: str | None = None) -> Store:
    return create_store(path, craft_to_dict(craft), iso(now()), clean_text(by, "--by") or "unknown")


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
    for ev in events:
        for w in ev.data.get("plan_warnings") or () if ev.kind == BURN else ():
            out.append(f"burn #{ev.seq} (plan #{ev.data.get('plan')}): {w}")
    for e in engines:
        if not e.reserves_met:
            out.append(f"engine {e.engine}: reserves can no longer be met (dv free 0); limiting tank {e.limiting_tank}")
    if state.mass_kg <= 0:
        out.append("craft mass is zero or negative: the mass changes recorded exceed the craft")
    if any(e.life for e in craft.engines):  # qualified thruster life (services.pulses)
        from .pulses import life_warnings, totals  # noqa: PLC0415

        out.extend(life_warnings(totals(craft, events, rep)))
    if craft.has_impulse_bits:  # pulse trains outside an impulse-bit table (services.pulses)
        from .pulses import impulse_bit_warnings  # noqa: PLC0415

        out.extend(impulse_bit_warnings(craft, events))
    return out


def snapshot_from(path: str, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]],
                  integrity: Break | None) -> Snapshot:
    craft = craft_from_dict(meta["craft"])
    entries = tuple(entries_from_records(records))
    resolved = resolve(entries)
    rep = None if craft.has_tables else replay(craft, resolved.events)  # integrated in assemble instead
    return assemble(path, craft, meta, records, entries, resolved, rep, integrity)


def assemble(path: str, craft: Craft, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]],
             entries: tuple[Entry, ...], resolved: Resolved, rep: Replay | None, integrity: Break | None) -> Snapshot:
    """The snapshot of a replayed ledger: capability now, warnings and the chain head it was read at
    (shared by a fresh read and the console's incremental one). A craft with performance tables is
    replayed here against its falling feed pressure (``services.blowdown``)."""
    from . import blowdown  # noqa: PLC0415

    rep, view = blowdown.flight(craft, resolved, rep, replay)
    state = cap.State(rep.mass_kg, rep.remaining_kg)
    if view is not None and view.flown is not None:  # performance tables: dv free integrates the falling Isp
        from ..core import blowcap  # noqa: PLC0415

        engines = tuple(blowcap.capability(view.model, view.craft_eq, state, view.temperature_k))
    else:
        engines = tuple(cap.capability(view.craft_eq if view is not None else craft, state))
    warnings = _warnings(craft, resolved.events, rep, state, engines, integrity)
    if view is not None:
        warnings += list(view.warnings)
    last = records[-1] if records else meta
    head = (int(last.get("seq", len(records))), str(last.get("hash", "")))
    return Snapshot(path, craft, meta, entries, resolved, rep, state, engines, integrity, tuple(warnings), head,
                    view)


def _verified(path: str, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> Break | None:
    """The chain check, skipped when the store knows these exact records verified before (the file store:
    the same file bytes by SHA-256, under a sealed mark); ``propledger verify`` always does the full check."""
    return open_store(path).verify_cached(meta, records)


VERIFIED_SUFFIX = ".verified"


class Ledger:
    """A ledger with its use cases. Every call reads the store afresh (another process may write).

    ``file`` is the store (a ledger file or a database craft; the name is older than the seam)."""

    def __init__(self, path: str):
        self.file: Store = open_store(path)
        self.store = self.file
        self.path = self.file.path

    def snapshot(self) -> Snapshot:
        meta, records = self.file.read()
        try:
            with paused_gc():
                snap = snapshot_from(self.path, meta, records, self.file.verify_cached(meta, records))
        except (KeyError, TypeError, ValueError, AttributeError, IndexError, ZeroDivisionError) as exc:
            raise StoreError(f"{self.path}: ledger contents malformed ({type(exc).__name__}: {exc})") from None
        if self.file.notices:
            snap = replace(snap, warnings=tuple(self.file.notices) + snap.warnings)
        return snap

    @staticmethod
    def _new_warnings(before: Snapshot, after: Snapshot) -> list[str]:
        """Warnings the write raised."""
        return [w for w in after.warnings if w not in before.warnings]

    # --- writing -------------------------------------------------------------------------------
    def record(self, kind: str, data: Mapping[str, Any], *, at: float | None = None, by: str | None = None,
               note: str | None = None, snap: Snapshot | None = None) -> tuple[dict[str, Any], list[str]]:
        """Validate and append one entry. Returns the stored record and warnings it raises (never refused
        for contradicting the model: an executed burn that overdraws a tank is stored with a warning)."""
        if kind == PLAN and at is None:
            raise InputError("plan: --at is required (the planned time of the burn)")
        with self.file.locked():  # validate against the ledger as it is when the entry is appended
            snap = self._writable(snap)
            payload = validate_data(snap.craft, snap.resolved, kind, data)
            t = now() if at is None else at
            if kind == BURN and payload.get("plan") is not None:
                from .execution import plan_warnings  # noqa: PLC0415

                found = plan_warnings(snap, payload, t, now())
                if found:
                    payload["plan_warnings"] = found
            rec = _readable(make_record(kind, t, now(), by, note, payload))
            stored = self.file.append(rec)
        return stored, self._new_warnings(snap, self.snapshot())

    def _writable(self, snap: Snapshot | None) -> Snapshot:
        """A current snapshot (call under the lock); refuses to add to a ledger whose chain does not verify."""
        snap = self.snapshot() if snap is None or self._stale(snap) else snap
        if snap.integrity is not None:
            raise StoreError(f"{self.path}: {snap.integrity}; not recording onto a ledger whose chain does not "
                             f"verify. {self.file.hint()}")
        return snap

    def _stale(self, snap: Snapshot) -> bool:
        last = snap.entries[-1].seq if snap.entries else 0
        return self.file.head()[0] != last

    def correct(self, target: Any, changes: Mapping[str, Any], *, reason: str | None, by: str | None = None,
                snap: Snapshot | None = None) -> tuple[dict[str, Any], list[str]]:
        """Append a correction superseding entry ``target`` with the given fields changed."""
        try:
            seq = int(str(target).strip().lstrip("#"))
        except ValueError:
            raise InputError(f"--entry: expected an entry id such as 12, got {target!r}") from None
        changes = {k: v for k, v in changes.items() if v is not None}
        unknown = set(changes) - set(CORRECTABLE)
        if unknown or not changes:
            raise InputError(f"correct: give at least one corrected field ({', '.join('--' + c for c in CORRECTABLE)})")
        if not clean_text(reason, "--reason"):
            raise InputError("correct: --reason is required (why the entry was wrong)")
        with self.file.locked():
            snap = self._writable(snap)
            by_seq = {e.seq: e for e in snap.entries}
            if seq not in by_seq:
                raise InputError(f"--entry: no entry {seq} in this ledger")
            root = seq
            while by_seq[root].kind == CORRECT:
                root = int(by_seq[root].data["entry"])
            current = snap.resolved.effective[root]
            if current.kind in DECISIONS:
                raise InputError(f"--entry: entry {seq} is a {current.kind} decision, which cannot be corrected;"
                                 " record a new approve or reject instead")
            if current.kind not in FIELDS_BY_KIND:
                instead = {"approve": "a new approve or reject", "reject": "a new approve or reject",
                           "gauge": "a new gauge reading (and re-baseline from it)",
                           "rebaseline": "a new gauge reading and re-baseline", "handover": "a new handover"}
                raise InputError(f"--entry: entry {seq} is a {current.kind} entry, which cannot be corrected;"
                                 f" record {instead.get(current.kind, 'a new entry')} instead")
            allowed = FIELDS_BY_KIND[current.kind]
            wrong = [k for k in changes if k not in allowed]
            if wrong:
                raise InputError(f"correct: entry {seq} is a {current.kind}; it has no {', '.join('--' + k for k in wrong)}"
                                 f" (a {current.kind} can be corrected with {', '.join('--' + k for k in allowed)})")
            merged = apply_correction(current, changes)
            if merged.kind != WITHDRAW:  # a withdrawal's plan link is not correctable; nothing else to check
                data = dict(merged.data)
                data.pop("plan", None)  # the link it already has is not re-checked against itself
                validate_data(snap.craft, snap.resolved, merged.kind, data)
            payload = {"entry": seq, "changes": dict(changes), "reason": clean_text(reason, "--reason")}
            if merged.kind == BURN and merged.data.get("plan") is not None:
                from .execution import corrected_warnings  # noqa: PLC0415

                # the burn's plan warnings for its corrected content (resolve puts them on the burn)
                payload["plan_warnings"] = corrected_warnings(snap, root, merged)
            elif merged.kind == PLAN:
                from .execution import executed_warnings  # noqa: PLC0415

                found = executed_warnings(snap, root, merged)  # the burn that executed it, judged again
                if found is not None:
                    payload["executed"] = found
            rec = make_record(CORRECT, now(), now(), by, None, payload)
            rec["at"] = rec["recorded"]
            stored = self.file.append(_readable(rec))
        return stored, self._new_warnings(snap, self.snapshot())


def _readable(rec: dict[str, Any]) -> dict[str, Any]:
    """The record, once it is known to read back as an entry (a record that cannot is never written)."""
    try:
        entry_from_record(dict(rec, seq=0))
    except (InputError, KeyError, TypeError, ValueError) as exc:
        raise InputError(f"{rec.get('kind')}: the entry would not read back ({exc}); nothing was recorded") from None
    return rec


def resolve_path(path: str | None) -> str:
    """--ledger, else PROPLEDGER_LEDGER, else the default file in the user data folder."""
    if path:
        return path
    env = os.environ.get("PROPLEDGER_LEDGER")
    if env:
        return env
    from platformdirs import user_data_dir  # noqa: PLC0415

    return os.path.join(user_data_dir("propledger", appauthor=False), "ledger.json")
