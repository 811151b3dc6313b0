"""Stored records <-> core ``Entry`` objects, and the validation every new entry passes before it is written."""
from __future__ import annotations

import getpass
import math
from datetime import datetime
from typing import Any, Mapping

from ..core.craft import Craft
from ..core.entries import AMOUNT_FIELDS, BURN, CORRECT, HANDOVER, MASS, PLAN, USE, WITHDRAW, Entry, Resolved
from ..errors import InputError
from .timefmt import iso, parse_time

MAX_TEXT = 2000


def default_user() -> str:
    try:
        return getpass.getuser()
    except Exception:  # noqa: BLE001 - no login name in some containers
        return "unknown"


def _epoch(text: str) -> float:
    """Stored times are ISO 8601 with 'Z' written by ``timefmt.iso``: parse them without the input checks."""
    return datetime.fromisoformat(text).timestamp()


def entry_from_record(rec: Mapping[str, Any]) -> Entry:
    return Entry(rec["seq"], rec["kind"], _epoch(rec["at"]), _epoch(rec["recorded"]), rec.get("by", ""),
                 rec.get("note", ""), rec.get("data") or {})


def clean_text(value: str | None, where: str) -> str:
    """Free text as typed, minus control characters (they could drive a terminal); bounded length."""
    if value is None:
        return ""
    text = "".join(ch for ch in str(value) if ch in "\n\t" or (ch.isprintable()))
    if len(text) > MAX_TEXT:
        raise InputError(f"{where}: longer than {MAX_TEXT} characters")
    return text.strip()


def _finite(value: float, where: str) -> float:
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise InputError(f"{where}: expected a finite number, got {value!r}")
    return float(value)


def _engine(craft: Craft, engine: Any) -> str:
    if engine not in craft.engine_ids:
        raise InputError(f"--engine: unknown engine '{engine}' (engines: {', '.join(craft.engine_ids)})")
    return str(engine)


def _one_amount(data: Mapping[str, Any], allowed: tuple[str, ...], what: str) -> dict[str, float]:
    given = {k: data[k] for k in allowed if data.get(k) is not None}
    if len(given) != 1:
        names = " | ".join(f"--{k}" for k in allowed)
        raise InputError(f"{what}: give exactly one of {names}")
    (key, value), = given.items()
    value = _finite(value, f"--{key}")
    if value < 0:
        raise InputError(f"--{key}: must not be negative")
    return {key: value}


def _plan_ref(resolved: Resolved, ref: Any, what: str) -> int:
    try:
        seq = int(str(ref).lstrip("#"))
    except ValueError:
        raise InputError(f"--plan: expected an entry id such as 12, got {ref!r}") from None
    plan = resolved.effective.get(seq)
    if plan is None or plan.kind != PLAN:
        raise InputError(f"--plan: entry {seq} is not a planned burn")
    if seq in resolved.executed_by:
        raise InputError(f"--plan: plan {seq} was already executed by entry {resolved.executed_by[seq]}")
    if seq in resolved.withdrawn:
        raise InputError(f"--plan: plan {seq} was withdrawn; {what} cannot name it")
    return seq


def validate_data(craft: Craft, resolved: Resolved, kind: str, data: Mapping[str, Any]) -> dict[str, Any]:
    """The SI payload of a new entry, checked against the craft and the ledger; raises InputError."""
    if kind == BURN:
        out: dict[str, Any] = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, AMOUNT_FIELDS, "burn"))
        if data.get("plan") is not None:
            out["plan"] = _plan_ref(resolved, data["plan"], "an executed burn")
        return out
    if kind == PLAN:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, ("dv",), "plan"))
        return out
    if kind == USE:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, ("duration", "propellant"), "use"))
        return out
    if kind == MASS:
        if data.get("delta") is None:
            raise InputError("mass: --delta is required (signed, e.g. '-35 kg' for a separation)")
        delta = _finite(data["delta"], "--delta")
        if delta == 0:
            raise InputError("--delta: a mass change of zero records nothing")
        return {"delta": delta}
    if kind == WITHDRAW:
        return {"plan": _plan_ref(resolved, data.get("plan"), "a withdrawal")}
    if kind == HANDOVER:
        return _handover(data)
    raise InputError(f"unknown entry kind '{kind}'")


def _handover(data: Mapping[str, Any]) -> dict[str, Any]:
    """Both names are required (a handover nobody signed is worth nothing); the window must run forwards."""
    out: dict[str, Any] = {}
    for key in ("from", "to"):
        name = clean_text(data.get(key), f"--{key}")
        if not name:
            raise InputError(f"handover: --{key} is required (the name of the engineer)")
        out[key] = name
    start = _finite(data.get("window_start"), "--since")
    end = _finite(data.get("window_end"), "handover window end")
    if start > end:
        raise InputError("--since: the window starts after it ends (a time in the future?)")
    out.update(window_start=start, window_end=end)
    return out


def make_record(kind: str, at: float, recorded: float, by: str | None, note: str | None,
                data: Mapping[str, Any]) -> dict[str, Any]:
    return {"kind": kind, "at": iso(at), "recorded": iso(recorded),
            "by": clean_text(by, "--by") or default_user(), "note": clean_text(note, "--note"), "data": dict(data)}


__all__ = ["entry_from_record", "validate_data", "make_record", "clean_text", "default_user", "CORRECT"]
