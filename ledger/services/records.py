"""Stored records <-> core ``Entry`` objects, and the validation every new entry passes before it is written."""
from __future__ import annotations

import getpass
import math
import warnings
from datetime import datetime
from typing import Any, Mapping, Sequence

import numpy as np

from ..core.craft import Craft
from ..core.entries import (AMOUNT_FIELDS, PULSE_FIELDS, APPROVE, BURN, CORRECT, GAUGE, HANDOVER, MASS, PLAN, REBASELINE, REJECT,
                            USE, WITHDRAW, Entry, Resolved)
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


def _epochs(texts: list[str]) -> list[float]:
    """Many stored times at once: numpy parses the 'Z' form ``timefmt.iso`` writes in one C loop, a third
    of the one-by-one cost; any other form (an offset, from an older writer) goes one by one."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # numpy warns (not fails) on an offset: take the slow path
            micro = _z_form_micro(texts)
    except (ValueError, Warning):
        micro = None
    if micro is None:
        return [_epoch(t) for t in texts]
    if len(micro) and -2**53 < micro.min() and micro.max() < 2**53:  # exact as doubles: one numpy division
        return (micro / 1_000_000).tolist()  # correctly rounded, as int/int below
    return [m / 1_000_000 for m in micro.tolist()]  # int/int, as datetime.timestamp(): the same floats


def _z_form_micro(texts: list[str]) -> np.ndarray | None:
    """Microseconds since 1970 of stored times all in the shape iso() writes, else None (numpy alone would
    also read 'NaT', 'now' or 'today'). Times all of one length (what iso() writes) are checked and parsed
    as one block of ASCII, each time's last character ('Z') left out by a narrower view of the same bytes."""
    n = len(texts)
    if n and set(map(type, texts)) == _STR:
        width = len(texts[0])
        if width >= 20 and set(map(len, texts)) == {width}:
            try:
                raw = "".join(texts).encode("ascii")
            except UnicodeEncodeError:
                raw = b""
            if raw:
                chars = np.frombuffer(raw, dtype=np.uint8).reshape(n, width)
                if (chars[:, width - 1] == 90).all() and (chars[:, 4] == 45).all() and (chars[:, 10] == 84).all():
                    body = np.ndarray((n,), dtype=f"S{width - 1}", buffer=raw, strides=(width,))
                    return body.astype("datetime64[us]").astype(np.int64)
    if all(type(t) is str and len(t) >= 20 and t[4] == "-" and t[10] == "T" and t[-1] == "Z" for t in texts):
        return np.array([t[:-1] for t in texts], dtype="datetime64[us]").astype(np.int64)
    return None


_STR = {str}


def entries_from_records(records: Sequence[Mapping[str, Any]]) -> list[Entry]:
    """``entry_from_record`` over a whole ledger: what every read of a large ledger pays first."""
    ats = _epochs([r["at"] for r in records])
    logged = _epochs([r["recorded"] for r in records])
    make = tuple.__new__  # Entry's fields in order, without its Python-level constructor per entry
    return [make(Entry, (r["seq"], r["kind"], a, w, r.get("by", ""), r.get("note", ""), r.get("data") or {}))
            for r, a, w in zip(records, ats, logged)]


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


def _amount_or_pulses(data: Mapping[str, Any], allowed: tuple[str, ...], what: str) -> dict[str, Any]:
    """One amount, or a pulse train (pulses, on_time) stored with its total on-time as ``duration``."""
    if all(data.get(k) is None for k in PULSE_FIELDS):
        return _one_amount(data, allowed, what)
    total = data.get("duration")
    stored = (total is not None and isinstance(data.get("pulses"), int) and isinstance(data.get("on_time"), float)
              and math.isclose(total, data["pulses"] * data["on_time"], rel_tol=1e-12))  # as stored: re-checked
    other = next((k for k in allowed if data.get(k) is not None and not (stored and k == "duration")), None)
    if data.get("pulses") is None:
        raise InputError("--on-time: only with --pulses (the on-time of each pulse of a pulse train)")
    if other is not None:
        raise InputError(f"{what}: give exactly one of {' | '.join(f'--{k}' for k in allowed)} | --pulses")
    from .pulses import pulse_train  # noqa: PLC0415

    return pulse_train(data.get("pulses"), data.get("on_time"))


def plan_ref(resolved: Resolved, ref: Any, what: str) -> int:
    """The seq of a pending plan named by ``ref`` ('12' or '#12'); InputError otherwise."""
    return _plan_ref(resolved, ref, what)


def _plan_ref(resolved: Resolved, ref: Any, what: str, executing: bool = False) -> int:
    """``executing``: a burn names the plan; an executed or withdrawn plan is then allowed (the burn
    happened and is recorded; ``services.execution`` warns)."""
    try:
        seq = int(str(ref).lstrip("#"))
    except ValueError:
        raise InputError(f"--plan: expected an entry id such as 12, got {ref!r}") from None
    plan = resolved.effective.get(seq)
    if plan is None or plan.kind != PLAN:
        raise InputError(f"--plan: entry {seq} is not a planned burn")
    if executing:
        return seq
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


SOURCE_KEYS = 24


def _source(out: dict[str, Any], data: Mapping[str, Any]) -> dict[str, Any]:
    """Where an imported entry came from (file, message, manoeuvre or rows, SHA-256: services.imports),
    kept as given when it is a small mapping of plain values; absent for an entry typed in."""
    src = data.get("source")
    if src is None:
        return out
    if not isinstance(src, Mapping) or len(src) > SOURCE_KEYS:
        raise InputError("source: expected a small mapping (file, message, manoeuvre, sha256)")
    kept: dict[str, Any] = {}
    for key, value in src.items():
        if isinstance(value, (list, tuple)):
            value = [clean_text(v, f"source.{key}") if isinstance(v, str) else v for v in value]
            if not all(isinstance(v, (str, int, float)) and not isinstance(v, bool) for v in value):
                raise InputError(f"source.{key}: expected a list of plain values")
        elif isinstance(value, str):
            value = clean_text(value, f"source.{key}")
        elif isinstance(value, (int, float)) and not isinstance(value, bool):
            value = _finite(value, f"source.{key}") if isinstance(value, float) else value
        elif value is not None:
            raise InputError(f"source.{key}: expected text or a number")
        kept[clean_text(str(key), "source")] = value
    out["source"] = kept
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
        out.update(_amount_or_pulses(data, AMOUNT_FIELDS, "burn"))
        if data.get("plan") is not None:
            out["plan"] = _plan_ref(resolved, data["plan"], "an executed burn", executing=True)
        return _source(_sigma(out, data), data)
    if kind == PLAN:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_one_amount(data, ("dv",), "plan"))
        return _source(out, data)
    if kind == USE:
        out = {"engine": _engine(craft, data.get("engine"))}
        out.update(_amount_or_pulses(data, ("duration", "propellant"), "use"))
        return _source(_sigma(out, data), data)
    if kind == MASS:
        if data.get("delta") is None:
            raise InputError("mass: --delta is required (signed, e.g. '-35 kg' for a separation)")
        delta = _finite(data["delta"], "--delta")
        if delta == 0:
            raise InputError("--delta: a mass change of zero records nothing")
        return _sigma({"delta": delta}, data)
    if kind == WITHDRAW:
        return {"plan": _plan_ref(resolved, data.get("plan"), "a withdrawal")}
    if kind == HANDOVER:
        return _handover(data)
    if kind == GAUGE:
        return _gauge(craft, data)
    if kind == REBASELINE:
        return _rebaseline(craft, resolved, data)
    if kind in (APPROVE, REJECT):
        return _decision(resolved, kind, data)
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


GAUGE_METHODS = ("blowdown PVT", "gas density")
GAUGE_POSITIVE = ("pressure_pa", "temperature_k")
GAUGE_FINITE = ("propellant_kg", "bookkeeping_kg", "difference_kg", "difference_sigma", "rebaseline_kg")
GAUGE_SIGMAS = ("sigma_kg", "bookkeeping_sigma_kg", "combined_sigma_kg", "rebaseline_sigma_kg",
                "pressure_sigma_pa", "temperature_sigma_k")


def _tank(craft: Craft, tank: Any) -> str:
    if tank not in craft.tank_ids:
        raise InputError(f"--tank: unknown tank '{tank}' (tanks: {', '.join(craft.tank_ids)})")
    return str(tank)


def _gauge(craft: Craft, data: Mapping[str, Any]) -> dict[str, Any]:
    """A gauge reading: its inputs and the estimate and comparison computed when it was taken, so that
    reading the ledger later needs no property library."""
    out = dict(data)
    out["tank"] = _tank(craft, data.get("tank"))
    if data.get("method") not in GAUGE_METHODS:
        raise InputError(f"gauge: method must be one of {', '.join(GAUGE_METHODS)}")
    for key in GAUGE_POSITIVE:
        if _finite(data.get(key), f"gauge: {key}") <= 0:
            raise InputError(f"gauge: {key} must be greater than zero")
    two_phase = data.get("phase") == "two-phase"  # a range (min_kg, max_kg), no estimate or comparison
    if two_phase and not 0 <= _finite(data.get("min_kg"), "gauge: min_kg") <= _finite(data.get("max_kg"), "gauge: max_kg"):
        raise InputError("gauge: a two-phase range needs 0 <= min_kg <= max_kg")
    for key in GAUGE_FINITE:
        if not (two_phase and key != "bookkeeping_kg"):
            _finite(data.get(key), f"gauge: {key}")
    for key in GAUGE_SIGMAS:
        if two_phase and key not in ("bookkeeping_sigma_kg", "pressure_sigma_pa", "temperature_sigma_k"):
            continue
        if _finite(data.get(key), f"gauge: {key}") < 0:
            raise InputError(f"gauge: {key} must not be negative")
    if not isinstance(data.get("flagged"), bool):
        raise InputError("gauge: flagged must be true or false")
    return out


def adopted_by(resolved: Resolved, gauge_seq: int) -> int | None:
    """The re-baseline entry that adopted gauge reading ``gauge_seq``, if any."""
    for e in resolved.events:
        if e.kind == REBASELINE and int(e.data.get("gauge", -1)) == gauge_seq:
            return e.seq
    return None


def _rebaseline(craft: Craft, resolved: Resolved, data: Mapping[str, Any]) -> dict[str, Any]:
    """A re-baseline: the adopted remaining and sigma for one tank, naming the gauge reading behind it."""
    out = dict(data)
    out["tank"] = _tank(craft, data.get("tank"))
    try:
        seq = int(str(data.get("gauge")).lstrip("#"))
    except ValueError:
        raise InputError(f"--gauge: expected an entry id such as 12, got {data.get('gauge')!r}") from None
    reading = resolved.effective.get(seq)
    if reading is None or reading.kind != GAUGE:
        raise InputError(f"--gauge: entry {seq} is not a gauge reading")
    if reading.data.get("tank") != out["tank"]:
        raise InputError(f"--gauge: reading {seq} is of tank {reading.data.get('tank')}, not {out['tank']}")
    earlier = adopted_by(resolved, seq)
    if earlier is not None:
        raise InputError(f"--gauge: reading {seq} was already adopted by entry {earlier}")
    out["gauge"] = seq
    if _finite(data.get("remaining_kg"), "rebaseline: remaining_kg") < 0:
        raise InputError("rebaseline: the adopted remaining must not be negative")
    if _finite(data.get("sigma_kg"), "rebaseline: sigma_kg") <= 0:
        raise InputError("rebaseline: the adopted sigma must be greater than zero")
    return out


def make_record(kind: str, at: float, recorded: float, by: str | None, note: str | None,
                data: Mapping[str, Any]) -> dict[str, Any]:
    return {"kind": kind, "at": iso(at), "recorded": iso(recorded),
            "by": clean_text(by, "--by") or default_user(), "note": clean_text(note, "--note"), "data": dict(data)}


__all__ = ["entry_from_record", "entries_from_records", "validate_data", "make_record", "clean_text", "default_user", "CORRECT"]
