"""Parsing what is typed into a form field: SI values or one clear message, never an exception.

Amounts carry their meaning in their unit: '12 m/s' is a delta-v, '3 min' a duration, '0.2 kg'
propellant, so one field serves all three and a bare number is refused rather than guessed.
"""
from __future__ import annotations

import re
from typing import Any

from ...errors import InputError
from ...services.timefmt import parse_time
from ...units import parse_quantity

AMOUNT_DIMS = {"dv": "speed", "duration": "time", "propellant": "mass"}
AMOUNT_HINT = {"dv": "m/s", "duration": "s or min", "propellant": "kg"}
_BARE = re.compile(r"^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*$")

Parsed = tuple[Any, str | None]


def amount(text: str, allowed=("dv", "duration", "propellant"), required: bool = True) -> Parsed:
    """(key, SI value) for the first of ``allowed`` whose dimension the unit matches."""
    text = (text or "").strip()
    hint = ", ".join(f"{AMOUNT_HINT[k]} for {k}" for k in allowed)
    if not text:
        return None, (f"required: a number with a unit ({hint})" if required else None)
    if _BARE.match(text):
        return None, f"add a unit ({hint})"
    last = None
    for key in allowed:
        try:
            return (key, parse_quantity(text, AMOUNT_DIMS[key], key)), None
        except InputError as exc:
            msg = str(exc)
            if "unknown unit" not in msg and " is not a " not in msg:
                return None, msg
            last = msg
    if last and "unknown unit" in last:
        return None, f"unknown unit in '{text}' ({hint})"
    return None, f"'{text}' is not a {' or '.join(allowed)} ({hint})"


def quantity(text: str, dimension: str, where: str, *, signed: bool = False, required: bool = True,
             unit_hint: str = "") -> Parsed:
    """SI value of a quantity; with ``unit_hint`` a bare number is refused (a pressure typed as '7.1'
    would otherwise be read as 7.1 Pa)."""
    text = (text or "").strip()
    if not text:
        return None, ("required" if required else None)
    if unit_hint and _BARE.match(text):
        return None, f"add a unit ({unit_hint})"
    try:
        return parse_quantity(text, dimension, where, signed=signed), None
    except InputError as exc:
        return None, str(exc)


def when(text: str, required: bool = False) -> Parsed:
    """ISO 8601 time (UTC unless an offset is given); blank is 'now' unless required."""
    text = (text or "").strip()
    if not text:
        return None, ("required: an ISO 8601 time such as 2026-05-04T13:20Z" if required else None)
    try:
        return parse_time(text, "time"), None
    except InputError as exc:
        return None, str(exc)


def entry_id(text: str) -> Parsed:
    text = (text or "").strip().lstrip("#")
    if not text:
        return None, "required: the id of the entry to correct"
    if not text.isdigit():
        return None, f"expected an entry id such as 12, got '{text}'"
    return int(text), None
