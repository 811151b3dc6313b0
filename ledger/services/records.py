"""Stored records <-> core ``Entry`` objects, and the validation every new entry passes before it is written."""
from __future__ import annotations

import getpass
import math
from typing import Any, Mapping

from ..core.craft import Craft
from ..core.entries import (AMOUNT_FIELDS, APPROVE, BURN, CORRECT, MASS, PLAN, REJECT, USE, WITHDRAW, Entry,
                            Resolved)
from ..errors import InputError
from .timefmt import iso, parse_time

MAX_TEXT = 2000


def default_user() -> str:
    try:
        return getpass.getuser()
    except Exception:  # noqa: BLE001 - no login name in some containers
        return "unknown"


def entry_from_record(rec: Mapping[str, Any]) -> Entry:
    return Entry(seq=int(rec["seq"]), kind=str(rec["kind"]), at=parse_time(rec["at"], "at"),
                 recorded=parse_time(rec["recorded"], "recorded"), by=str(rec.get("by", "")),
                 note=str(rec.get("note", "")), data=rec.get("data") or {})


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


def plan_ref(resolved: Resolved, ref: Any, what: str) -> int:
    """The seq of a pending plan named by ``ref`` ('12' or '#12'); InputError otherwise."""
    return _plan_ref(resolved, ref, what)


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


def _sigma(out: dict[str, Any], data: Mapping[str, Any]) -> dict[str, Any]:
    """One sigma of the entry's amount, same unit as the amount (optional; core.sigmas has the defaults)."""
    if data.get("sigma") is not None:
        sigma = _finite(data["sigma"], "--sigma")
        if sigma < 0:
            raise InputError("--sigma: must not be negative (one standard deviation of the amount)")
        out["sigma"] = sigma
    return out


VERDICTS = ("feasible", "marginal", "infeasible")


def _decision(resolved: Resolved, kind: str, data: Mapping[str, Any]) -> dict[str, Any]:
    """An approval or rejection: the plan, the check it was based on and the chain head it saw."""
    what = "an approval" if kind == APPROVE else "a rejection"
    out: dict[str, Any] = {"plan": _plan_ref(resolved, data.get("plan"), what)}
    check = data.get("check")
    if not isinstance(check, Mapping) or check.get("verdict") not in VERDICTS:
        raise InputError(f"{kind}: the check the decision is based on is missing or has no verdict")
    for key in ("probability", "confidence", "dv_free_after_m_s"):
        _finite(check.get(key), f"{kind}: check.{key}")
    head = data.get("head")
    if not isinstance(head, Mapping) or not isinstance(head.get("hash"), str) or not isinstance(head.get("seq"), int):
        raise InputError(f"{kind}: the ledger head (seq, hash) the check saw is missing")
    out.update(check=dict(check), head={"seq": int(head["seq"]), "hash": str(head["hash"])})
    return out


def validate_data(craft: Craft, resolved: Resolved, kind: str, data: Mapping[str, Any]) -> dict[str, Any]:
    """The SI payload of a new entry, checked against the craft and the ledger; raises InputError."""
    if kind == BURN:
        out: dict[str, Any] = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, AMOUNT_FIELDS, "burn"))
        if data.get("plan") is not None:
            out["plan"] = _plan_ref(resolved, data["plan"], "an executed burn")
        return _sigma(out, data)
    if kind == PLAN:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, ("dv",), "plan"))
        return out
    if kind == USE:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, ("duration", "propellant"), "use"))
        return _sigma(out, data)
    if kind == MASS:
        if data.get("delta") is None:
            raise InputError("mass: --delta is required (signed, e.g. '-35 kg' for a separation)")
        delta = _finite(data["delta"], "--delta")
        if delta == 0:
            raise InputError("--delta: a mass change of zero records nothing")
        return _sigma({"delta": delta}, data)
    if kind == WITHDRAW:
        return {"plan": _plan_ref(resolved, data.get("plan"), "a withdrawal")}
    if kind in (APPROVE, REJECT):
        return _decision(resolved, kind, data)
    raise InputError(f"unknown entry kind '{kind}'")


def make_record(kind: str, at: float, recorded: float, by: str | None, note: str | None,
                data: Mapping[str, Any]) -> dict[str, Any]:
    return {"kind": kind, "at": iso(at), "recorded": iso(recorded),
            "by": clean_text(by, "--by") or default_user(), "note": clean_text(note, "--note"), "data": dict(data)}


__all__ = ["entry_from_record", "validate_data", "make_record", "clean_text", "default_user", "CORRECT"]
