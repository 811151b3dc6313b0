"""Importing entries from a file exactly once: what the readers (ccsds_import, firings_import) found
becomes new entries, corrections of earlier imports, or nothing, in one append (all or nothing).

Every imported entry carries its ``source``: file name, the message's MESSAGE_ID or CREATION_DATE, the
manoeuvre id or row range, the file's SHA-256, and ``key``, the identity the next import is matched on
(("plan", MAN_ID), ("burn", MAN_ID), ("use", engine, group start)). A file whose SHA-256 was imported
before adds nothing. A manoeuvre already in the ledger with the same content adds nothing; with new
content it is recorded as a correction of the earlier entry (never a second entry). The dry run runs the
same code on the same snapshot and only skips the append.
"""
from __future__ import annotations

import hashlib
import math
import os
from dataclasses import dataclass, field
from typing import Any, Callable, Mapping

from ..core.entries import BURN, CORRECT, PLAN, USE, Entry, apply_correction, resolve
from ..core.replay import replay
from ..errors import InputError
from .ledger import FIELDS_BY_KIND, Ledger, Snapshot, _readable, assemble
from .records import entry_from_record, make_record, validate_data
from .timefmt import iso, now

NATIVE_PREFIX = "PROPLEDGER-"
"""MAN_ID under which an entry typed into the ledger (no import source) is exported and matched back."""
MAX_BYTES = 32 << 20
"""A message or a day of firings is far smaller; bounds the work on a wrong file."""
AT_SLACK_S = 5e-4
CAUTION = ("decision support only: verify against the mission's flight-dynamics system of record, its mission "
           "rules and the responsible engineers")
REL = 1e-9


@dataclass
class Candidate:
    """One entry a reader found in the file, in SI, before it is matched against the ledger."""

    kind: str                     # plan | burn | use
    at: float
    data: dict[str, Any]          # engine and amount (dv, duration or propellant), sigma
    source: dict[str, Any]        # file, sha256, format, message, man_id or rows, key, ...
    label: str                    # 'MAN_ID M001' or 'rows 2-57' for messages
    plan_key: tuple | None = None  # a burn executes the plan imported under this key, when pending
    warnings: list[str] = field(default_factory=list)
    delta_mass_kg: float | None = None


@dataclass
class Read:
    """What a reader made of a file: the candidates and warnings about what it left out."""

    path: str
    sha256: str
    format: str
    candidates: list[Candidate]
    warnings: list[str] = field(default_factory=list)


@dataclass
class Action:
    """What the import does with one candidate: 'record', 'correct' (entry ``target``) or 'same'."""

    what: str
    candidate: Candidate
    target: int | None = None
    changes: dict[str, Any] = field(default_factory=dict)
    seq: int | None = None        # the seq the new entry gets (or has, for 'same')


@dataclass
class Prepared:
    read: Read
    actions: list[Action]
    records: list[dict[str, Any]]
    warnings: list[str]
    already: list[int] = field(default_factory=list)
    """Entries already imported from a file with this SHA-256 (the whole file is then skipped)."""

    @property
    def new(self) -> list[Action]:
        return [a for a in self.actions if a.what != "same"]


def read_bytes(path: str) -> tuple[bytes, str]:
    """The file's bytes and SHA-256; InputError with the path when it cannot be read."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read(MAX_BYTES + 1)
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except IsADirectoryError:
        raise InputError(f"{path}: is a folder, not a file to import") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot read it ({exc.strerror or exc})") from None
    if len(raw) > MAX_BYTES:
        raise InputError(f"{path}: larger than {MAX_BYTES >> 20} MiB; not a message or firings file")
    return raw, hashlib.sha256(raw).hexdigest()


def text_of(path: str, raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InputError(f"{path}: not UTF-8 text (expected a CCSDS KVN or XML message, or a CSV file)") from None


def base_source(path: str, sha: str, fmt: str, message_key: str | None, message: str | None) -> dict[str, Any]:
    src: dict[str, Any] = {"file": os.path.basename(path), "sha256": sha, "format": fmt}
    if message_key:
        src[message_key.lower()] = message
    return src


# --- matching against the ledger -----------------------------------------------------------------
def key_of(source: Mapping[str, Any] | None) -> tuple | None:
    k = (source or {}).get("key")
    return tuple(k) if isinstance(k, (list, tuple)) and k else None


def identities(snap: Snapshot) -> dict[tuple, int]:
    """Identity key -> the original entry it belongs to: from import sources (on entries and on the
    corrections an import wrote) and the export's names for entries typed in (PROPLEDGER-<seq>)."""
    by_seq = {e.seq: e for e in snap.entries}
    out: dict[tuple, int] = {}
    for e in snap.entries:
        if e.kind in (PLAN, BURN):
            out.setdefault((e.kind, f"{NATIVE_PREFIX}{e.seq}"), e.seq)
        key = key_of(e.data.get("source"))
        if key is None:
            continue
        root = e.seq
        while by_seq[root].kind == CORRECT:
            root = int(by_seq[root].data["entry"])
        out[key] = root
    return out


def imported_from(snap: Snapshot, sha: str) -> list[int]:
    return [e.seq for e in snap.entries if (e.data.get("source") or {}).get("sha256") == sha]


def _close(a: Any, b: Any) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return math.isclose(float(a), float(b), rel_tol=REL, abs_tol=1e-12)


AMOUNTS = ("dv", "duration", "propellant")
AMOUNT_KEYS = {"dv": "dv_m_s", "duration": "duration_s", "propellant": "propellant_kg"}
"""Summary keys carry their unit, as every --json output does (docs/json.md)."""


def differences(current: Entry, cand: Candidate) -> dict[str, Any]:
    """The fields a correction must change to make ``current`` say what the file now says."""
    allowed = FIELDS_BY_KIND[current.kind]
    changes: dict[str, Any] = {}
    if abs(current.at - cand.at) > AT_SLACK_S:
        changes["at"] = cand.at
    if current.get("engine") != cand.data.get("engine"):
        changes["engine"] = cand.data["engine"]
    for f in AMOUNTS:
        if f in allowed and not _close(current.get(f), cand.data.get(f)) and cand.data.get(f) is not None:
            changes[f] = cand.data[f]
    if cand.data.get("pulses") is not None and (current.get("pulses") != cand.data["pulses"]
                                                or not _close(current.get("on_time"), cand.data.get("on_time"))):
        changes.update(pulses=cand.data["pulses"], on_time=cand.data["on_time"])  # a recounted pulse train
        changes.pop("duration", None)  # the correction's pulse train gives its own total on-time
    if "sigma" in allowed and not _close(current.get("sigma"), cand.data.get("sigma")):
        if cand.data.get("sigma") is not None:
            changes["sigma"] = cand.data["sigma"]
    return changes


# --- building the append -------------------------------------------------------------------------
def prepare(snap: Snapshot, read: Read, *, by: str | None = None, at_now: float | None = None) -> Prepared:
    """Match the file's candidates against ``snap`` and build the records one append would write."""
    t_now = now() if at_now is None else at_now
    already = imported_from(snap, read.sha256)
    if already:
        return Prepared(read, [], [], list(read.warnings), already)
    index = identities(snap)
    pending = {p.seq for p in snap.resolved.pending}
    entries = list(snap.entries)
    next_seq = (entries[-1].seq if entries else 0) + 1
    actions: list[Action] = []
    records: list[dict[str, Any]] = []
    batch_keys: dict[tuple, int] = {}
    resolved = snap.resolved
    for cand in read.candidates:
        key = key_of(cand.source)
        if key in batch_keys:
            raise InputError(f"{read.path}: {cand.label}: appears twice in the file; expected each manoeuvre "
                             "(or firings group) once")
        target = index.get(key)
        if target is not None:
            current = snap.resolved.effective[target]
            if current.kind != cand.kind:
                raise InputError(f"{read.path}: {cand.label}: entry {target} with this identity is a "
                                 f"{current.kind}, not a {cand.kind}")
            changes = differences(current, cand)
            if not changes:
                actions.append(Action("same", cand, target, seq=target))
                batch_keys[key] = target
                continue
            merged = apply_correction(current, changes)
            data = dict(merged.data)
            data.pop("plan", None)
            validate_data(snap.craft, resolved, merged.kind, data)
            payload = {"entry": target, "changes": changes,
                       "reason": f"re-import: {cand.source.get('file')} gives new values for {cand.label}",
                       "source": dict(cand.source)}
            rec = make_record(CORRECT, t_now, t_now, by, None, payload)
            rec["at"] = rec["recorded"]
            action = Action("correct", cand, target, changes, seq=next_seq)
        else:
            data = dict(cand.data, source=dict(cand.source))
            if cand.plan_key is not None:
                plan_seq = batch_keys.get(cand.plan_key, index.get(cand.plan_key))
                if plan_seq is not None and (plan_seq in pending or plan_seq in batch_keys.values()):
                    data["plan"] = plan_seq
                    if plan_seq >= (snap.entries[-1].seq + 1 if snap.entries else 1):
                        resolved = resolve(entries)  # the plan is in this batch: validate against it
                elif plan_seq is not None:
                    cand.warnings.append(f"the plan with this MAN_ID (entry {plan_seq}) is no longer pending; "
                                         "recorded without a plan link")
            payload = validate_data(snap.craft, resolved, cand.kind, data)
            if cand.kind == BURN and payload.get("plan") is not None and payload["plan"] in pending:
                from .execution import plan_warnings  # noqa: PLC0415

                found = plan_warnings(snap, payload, cand.at, t_now)
                if found:
                    payload["plan_warnings"] = found
            note = f"imported from {cand.source.get('file')} ({cand.label})"
            rec = make_record(cand.kind, cand.at, t_now, by, note, payload)
            action = Action("record", cand, seq=next_seq)
        rec = _readable(rec)
        entries.append(entry_from_record(dict(rec, seq=next_seq)))
        batch_keys[key] = next_seq
        records.append(rec)
        actions.append(action)
        next_seq += 1
    warnings = list(read.warnings)
    if records:
        warnings += _model_warnings(snap, entries, actions, read)
    for a in actions:
        warnings += [f"{a.candidate.label}: {w}" for w in a.candidate.warnings]
    return Prepared(read, actions, records, warnings)


def _model_warnings(snap: Snapshot, entries: list[Entry], actions: list[Action], read: Read) -> list[str]:
    """What the ledger would say after the append (new warnings only), and each burn's DELTA_MASS
    against the propellant the ledger itself works out for it."""
    from .importconfig import dm_tolerance  # noqa: PLC0415

    res = resolve(entries)
    rep = replay(snap.craft, res.events)
    after = assemble(snap.path, snap.craft, snap.meta, [], tuple(entries), res, rep, None)
    out = [w for w in after.warnings if w not in snap.warnings]
    position = {e.seq: i for i, e in enumerate(res.events)}
    rel, abs_kg = dm_tolerance(snap.craft.extra.get("import") or {})
    initial = snap.craft.dry_mass_kg + float(snap.craft.loads().sum())
    for a in actions:
        dm = a.candidate.delta_mass_kg
        seq = a.target if a.what != "record" else a.seq
        if dm is None:
            continue
        if seq in position:
            ours = float(rep.propellant[position[seq]])
        elif a.candidate.kind == PLAN and a.candidate.data.get("dv") is not None:
            # a plan is not replayed: the rocket equation from the mass on board at its time
            before = [i for i, e in enumerate(res.events) if e.at <= a.candidate.at]
            mass = float(rep.mass_after[before[-1]]) if before else initial
            ve = snap.craft.engine(a.candidate.data["engine"]).ve
            ours = mass * (1.0 - math.exp(-float(a.candidate.data["dv"]) / ve))
        else:
            continue
        tol = max(rel * abs(dm), abs_kg)
        if abs(ours - (-dm)) > tol:
            a.candidate.warnings.append(
                f"the message's DELTA_MASS {dm:.3f} kg and the ledger's propellant {ours:.3f} kg disagree by "
                f"{abs(ours + dm):.3f} kg (tolerance {tol:.3f} kg): the two systems disagree")
    return out


def run(ledger: Ledger, reader: Callable[[Snapshot], Read], *, dry_run: bool, by: str | None = None) -> Prepared:
    """Read, match and (unless ``dry_run``) append in one write under the ledger's lock."""
    if dry_run:
        snap = ledger.snapshot()
        if snap.integrity is not None:
            snap = ledger._writable(snap)  # the same refusal a real import gives
        return prepare(snap, reader(snap), by=by)
    with ledger.file.locked():
        snap = ledger._writable(None)
        prepared = prepare(snap, reader(snap), by=by)
        if prepared.records:
            stored = ledger.file.append_many(prepared.records)
            for a, s in zip(prepared.new, stored):
                a.seq = int(s["seq"])
    return prepared


def summary(prepared: Prepared, dry_run: bool) -> dict[str, Any]:
    """Plain data for the shells (and --json): what was (or would be) recorded."""
    rows = []
    for a in prepared.actions:
        c = a.candidate
        row = {"action": a.what, "kind": c.kind, "at": iso(c.at), "engine": c.data.get("engine"),
               "id": a.seq, "what": c.label, "source": dict(c.source)}
        for f, unit in AMOUNT_KEYS.items():
            if c.data.get(f) is not None:
                row[unit] = c.data[f]
        if c.data.get("sigma") is not None:
            row["sigma"] = c.data["sigma"]
        if a.target is not None and a.what == "correct":
            row["corrects"] = a.target
        if c.source.get("delta_mass_kg") is not None:
            row["delta_mass_kg"] = c.source["delta_mass_kg"]
        rows.append(row)
    return {"file": prepared.read.path, "sha256": prepared.read.sha256, "format": prepared.read.format,
            "dry_run": dry_run, "already_imported": prepared.already, "entries": rows,
            "recorded": sum(1 for a in prepared.actions if a.what == "record"),
            "corrected": sum(1 for a in prepared.actions if a.what == "correct"),
            "unchanged": sum(1 for a in prepared.actions if a.what == "same"),
            "warnings": list(prepared.warnings), "caution": CAUTION}


def source_line(source: Mapping[str, Any] | None) -> str | None:
    """One line saying where an entry came from, for the log and the console's detail view."""
    if not source:
        return None
    parts = [str(source.get("file", "?"))]
    for k in ("message_id", "creation_date"):
        if source.get(k):
            parts.append(f"{k.upper()} {source[k]}")
            break
    if source.get("man_id"):
        parts.append(f"MAN_ID {source['man_id']}")
    if source.get("rows"):
        parts.append(f"rows {source['rows']}")
    if source.get("pulses") is not None:
        parts.append(f"{source['pulses']} pulses")
    if source.get("sha256"):
        parts.append(f"sha256 {str(source['sha256'])[:12]}")
    return ", ".join(parts)


def reader_for(path: str, fmt: str | None = None, *, group: str = "pass", engine: str | None = None,
               executed: bool = False, config: dict | None = None) -> Callable[[Snapshot], Read]:
    """The reader for a file: firings for ``fmt`` 'firings' or a .csv file, else a CCSDS OPM or OCM."""
    if fmt == "firings" or (fmt is None and path.lower().endswith(".csv")):
        from . import firings_import  # noqa: PLC0415

        return firings_import.reader(path, group, config=config)
    from . import ccsds_import  # noqa: PLC0415 - the CCSDS library only for a message

    return ccsds_import.reader(path, fmt, engine=engine, opm_executed=executed, config=config)


def describe(row: Mapping[str, Any]) -> str:
    """One entry of an import summary as a line of text."""
    amount = next((f"{k.split('_')[0]} {row[k]:.4f} {u}" for k, u in (("dv_m_s", "m/s"), ("duration_s", "s"),
                                                                      ("propellant_kg", "kg"))
                   if row.get(k) is not None), "")
    sigma = f" (sigma {row['sigma']:.4f})" if row.get("sigma") is not None else ""
    dm = f", DELTA_MASS {row['delta_mass_kg']:.3f} kg" if row.get("delta_mass_kg") is not None else ""
    pulses = row["source"].get("pulses")
    pulses = f", {pulses} pulses" if pulses is not None else ""
    return f"{row['kind']} {row['engine']} {amount}{sigma} at {row['at']}{dm}{pulses} [{row['what']}]"


def summary_lines(data: Mapping[str, Any]) -> list[str]:
    """The summary as plain lines: shared by the command and the console's import screen."""
    lines = []
    dry = data["dry_run"]
    if data["already_imported"]:
        ids = data["already_imported"]
        lines.append(f"{os.path.basename(data['file'])}: already imported (sha256 {data['sha256'][:12]}, entries "
                     f"{ids[0]}-{ids[-1]}); nothing {'would be' if dry else 'was'} recorded")
        return lines
    for row in data["entries"]:
        if row["action"] == "record":
            head = "would record" if dry else f"recorded entry {row['id']}"
        elif row["action"] == "correct":
            head = f"would correct entry {row['corrects']}" if dry else \
                f"recorded correction {row['id']} of entry {row['corrects']}"
        else:
            head = f"unchanged (entry {row['id']})"
        lines.append(f"{head}: {describe(row)}")
    name = os.path.basename(data["file"])
    if data["recorded"] + data["corrected"] == 0:
        lines.append(f"{name}: nothing new; every manoeuvre is already in the ledger as given")
    else:
        lines.append(f"{name}: {'would record' if dry else 'recorded'} {data['recorded']} new, "
                     f"{data['corrected']} corrected, {data['unchanged']} unchanged"
                     + (" (dry run: nothing written)" if dry else ""))
    return lines


__all__ = ["reader_for", "summary_lines", "describe", "Candidate", "Read", "Action", "Prepared", "prepare", "run", "summary", "source_line", "identities",
           "read_bytes", "text_of", "base_source", "NATIVE_PREFIX"]
