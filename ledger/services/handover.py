"""Shift handover: what the incoming engineer needs, assembled once as a plain dict.

The text, Markdown and HTML reports only render this dict, so all three (and the console) say the same
thing. Optional sections (uncertainty, approval, gauging) appear whenever the status or check dicts carry
their keys. Recording appends a ``handover`` entry (so the next "since last" window starts where this one
ended) and then writes a backup that holds it.
"""
from __future__ import annotations

from typing import Any, Mapping

from ..core.entries import HANDOVER, Entry
from ..errors import InputError, LedgerError
from . import views
from .execution import dv_tolerance
from .forecast import forecast
from .handover_rows import entry_rows
from .ledger import Ledger, Snapshot
from .records import clean_text
from .timefmt import iso, now as clock, parse_time

SINCE_LAST = "last"


def previous_handover(snap: Snapshot) -> Entry | None:
    found = [e for e in snap.entries if e.kind == HANDOVER]
    return found[-1] if found else None


def window(snap: Snapshot, since: str | float | None, end: float) -> dict[str, Any]:
    """(start, end] of the handover: since the previous handover (or the ledger's creation), or a given time."""
    prev = previous_handover(snap)
    previous = None
    if prev is not None:
        previous = {"id": prev.seq, "from": prev.get("from"), "to": prev.get("to"), "at": iso(prev.at)}
    if since is None or (isinstance(since, str) and since.strip().lower() == SINCE_LAST):
        if prev is not None:
            start = float(prev.get("window_end", prev.at))
            basis = f"since handover #{prev.seq} ({prev.get('from')} to {prev.get('to')})"
        else:
            start = parse_time(snap.meta.get("created"), "ledger creation time")
            basis = "since the ledger was created (no earlier handover)"
    else:
        start = parse_time(since, "--since")
        basis = "since the time given"
    if start > end:
        raise InputError(f"--since: {iso(start)} is after the end of the window ({iso(end)})")
    return {"start": iso(start), "end": iso(end), "start_t": start, "end_t": end, "basis": basis,
            "previous": previous}


def _flat(value: Any) -> str:
    """A gauge comparison of unknown shape as one readable line (numbers to 6 significant figures)."""
    if isinstance(value, Mapping):
        # a key without a value (a two-phase reading has no estimate or sigma) says nothing: leave it out
        return "; ".join(f"{str(k).replace('_', ' ')} {_flat(v)}" for k, v in value.items() if v is not None)
    if isinstance(value, (list, tuple)):
        return ", ".join(_flat(v) for v in value)
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def _state(status: Mapping[str, Any]) -> dict[str, Any]:
    tanks = [dict(t, id=tid) for tid, t in status["tanks"].items()]
    for t in tanks:
        t.pop("gauge", None)
    return {"mass_kg": status["mass_kg"], "dry_mass_kg": status["dry_mass_kg"], "as_of": status.get("as_of"),
            "confidence": status.get("confidence"), "tanks": tanks,
            "engines": [dict(e, id=eid) for eid, e in status["engines"].items()],
            "reserves": list(status.get("reserves", []))}


def _plans(snap: Snapshot, status: Mapping[str, Any], end: float) -> tuple[list[dict[str, Any]], list[str]]:
    """Each pending plan with a fresh check: the other pending plans flown first, never the plan itself."""
    rows, warnings = [], []
    for p in status.get("pending_plans", []):
        row = dict(p)
        res = views.check(snap, p["engine"], float(p["dv_m_s"]), exclude_plan=int(p["id"]))
        row["check"] = {k: res.get(k) for k in ("verdict", "reason", "propellant_kg", "dv_free_after_m_s",
                                                "limiting_tank", "least_margin_tank", "probability") if k in res}
        row["check"]["commitments"] = len(res.get("commitments", []))
        row["overdue"] = parse_time(p["at"], "plan time") < end
        if row["overdue"]:
            warnings.append(f"plan #{p['id']} was due at {p['at']} and is neither executed nor withdrawn")
        if p.get("verdict_now"):  # the check at the ledger's confidence: its warning is in status already
            row["check"].update(verdict=p["verdict_now"]["verdict"], probability=p["verdict_now"].get("probability"),
                                samples=p["verdict_now"].get("samples"))
        elif res.get("verdict") == "infeasible":  # low bounds could not be computed: the nominal check's word
            warnings.append(f"plan #{p['id']} fails its check: {res.get('reason')}")
        rows.append(row)
    return rows, warnings


def _thrusters(snap: Snapshot) -> list[dict[str, Any]]:
    """Per engine: on-time, pulses and throughput over the ledger against its life limits (services.pulses)."""
    from .pulses import totals  # noqa: PLC0415

    return totals(snap.craft, snap.resolved.events, snap.replay)


def _status_with_bounds(snap) -> dict[str, Any]:
    """Status with its low bounds and approval states (the Monte Carlo, cached by chain head); the plain
    status with a warning if the sampling cannot run, so a handover is never blocked by it."""
    from . import uncertainty  # noqa: PLC0415

    try:
        return uncertainty.status_with_confidence(snap)
    except (LedgerError, ValueError, FloatingPointError) as exc:
        status = views.status(snap)
        status["warnings"] = list(status["warnings"]) + [f"low bounds not computed: {exc}"]
        return status


def shift_names(from_name: str | None, to_name: str | None) -> dict[str, str]:
    """The two engineers of a handover, cleaned; either missing is one error (checked before any work)."""
    names = {}
    for key, value in (("from", from_name), ("to", to_name)):
        names[key] = clean_text(value, f"--{key}")
        if not names[key]:
            raise InputError(f"handover: --{key} is required (the name of the engineer)")
    return names


def assemble(ledger: Ledger, *, from_name: str | None, to_name: str | None, since: str | float | None = None,
             now: float | None = None) -> dict[str, Any]:
    """The handover as plain data; reads only. ``now`` closes the window (default: the clock)."""
    names = shift_names(from_name, to_name)
    end = clock() if now is None else float(now)
    snap = ledger.snapshot()
    head_seq, head_hash = ledger.file.head()
    if head_seq != len(snap.entries):  # another process appended between the two reads: read both again
        snap = ledger.snapshot()
        head_seq, head_hash = ledger.file.head()
    status = _status_with_bounds(snap)
    win = window(snap, since, end)
    prev = win["previous"]["id"] if win["previous"] else None
    burns, others = entry_rows(snap, win["start_t"], end, skip=prev)
    plans, plan_warnings = _plans(snap, status, end)
    warnings = list(status["warnings"]) + plan_warnings
    rel, abs_m_s = dv_tolerance(snap.craft)  # the same tolerance the burn's own warning used
    for b in burns:
        planned, done = b["planned_dv_m_s"], b["achieved_dv_m_s"]
        if (b["ratio"] is not None and planned is not None and done is not None
                and abs(done - planned) > max(rel * abs(planned), abs_m_s)):
            warnings.append(f"burn #{b['id']} achieved {100 * b['ratio']:.1f}% of plan #{b['plan']}")
    gauge = [{"tank": tid, "summary": _flat(t["gauge"]), "data": t["gauge"]}
             for tid, t in status["tanks"].items() if t.get("gauge")]
    return {
        "title": "Shift handover", "craft": snap.craft.name, "ledger": snap.path, "generated": iso(round(end)),
        "from": names["from"], "to": names["to"], "window": win,
        "burns": burns, "other_entries": others, "state": _state(status),
        "forecast": forecast(snap, status, now=end, series=True),
        "plans": plans, "gauge": gauge, "warnings": warnings, "thrusters": _thrusters(snap),
        "integrity": {"status": status["integrity"], "intact": snap.integrity is None,
                      "entries": len(snap.entries), "head_seq": head_seq, "head_hash": head_hash},
        "record": {"recorded": False},
        "caution": views.CAUTION,
    }


def _backup(path: str) -> dict[str, Any]:
    """Write a backup (which also records the chain head): its path, or a warning saying why not."""
    from ..store.seam import is_url  # noqa: PLC0415

    if is_url(path):  # a database is backed up by its server; its rules keep recorded entries from edits
        return {"backup": None, "failed": False, "warning": None}
    from ..store.backup import make_backup  # noqa: PLC0415 - only when a handover is recorded

    try:
        return {"backup": make_backup(path), "failed": False, "warning": None}
    except (LedgerError, OSError) as exc:
        return {"backup": None, "failed": True, "warning": f"BACKUP FAILED after recording the handover: {exc}"}


SERVER_BACKUP = "the database server's (not checked by propledger)"


def backup_text(rec: dict[str, Any], path: str) -> str:
    """What a recorded handover's ``backup:`` line says: the backup file written, or, for a database
    ledger, that its backups are the server's (propledger writes none and cannot see them)."""
    from ..store.seam import is_url  # noqa: PLC0415

    if rec.get("backup"):
        return str(rec["backup"])
    return SERVER_BACKUP if is_url(path) and not rec.get("backup_failed") else "none"


def record(ledger: Ledger, report: dict[str, Any], *, note: str | None = None) -> dict[str, Any]:
    """Append the handover entry, then back the ledger up; the report gains a ``record`` section."""
    win = report["window"]
    data = {"from": report["from"], "to": report["to"], "window_start": win["start_t"], "window_end": win["end_t"]}
    stored, new_warnings = ledger.record(HANDOVER, data, at=win["end_t"], by=report["from"], note=note)
    backup = _backup(ledger.path)
    report["record"] = {"recorded": True, "entry": stored["seq"], "hash": stored["hash"],
                        "backup": backup["backup"], "backup_failed": backup["failed"]}
    extra = [backup["warning"]] if backup["warning"] else []
    report["warnings"] = list(report["warnings"]) + list(new_warnings) + extra
    return report


def write_report(path: str, text: str, ledger_path: str | None = None) -> str:
    """The report written whole (``services.outpaths``); never over the ledger, its side files or backups.
    Returns the absolute path; raises OSError with the reason (the folder is missing, it is a folder, ...)."""
    from ..errors import LedgerError  # noqa: PLC0415
    from .outpaths import checked, write_atomic  # noqa: PLC0415

    try:
        return write_atomic(checked(path, ledger_path, force=True), text, force=True)
    except LedgerError as exc:
        raise OSError(str(exc)) from None
