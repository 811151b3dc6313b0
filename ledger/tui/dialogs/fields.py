"""Parsing what is typed into a form field: SI values or one clear message, never an exception.

One rule for bare numbers, the command line's: a bare number is in the base unit of the quantity the
field holds (kg, s, N, deg, m/s, Pa, K), so '3' in a delta-v field is 3 m/s and '689476' in a pressure
field is 689476 Pa. A field that holds one of several quantities ('12 m/s' is a delta-v, '3 min' a
duration, '0.2 kg' propellant) needs the unit to say which: there a bare number is refused, not guessed.
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


_TRAIN = re.compile(r"^\s*(\S+)\s*(?:pulses?\s*)?(?:x|×|\*|of)\s*(.+?)\s*$", re.IGNORECASE)


def pulse_train(text: str) -> Parsed:
    """('pulses', (N, on-time s)) for '1200 x 50 ms' (also '1200 pulses x 50 ms', '1200 × 0.05 s')."""
    from ...services.pulses import pulse_train as checked  # noqa: PLC0415

    m = _TRAIN.match(text)
    count, on_time = m.group(1), m.group(2)
    try:
        seconds = parse_quantity(on_time, "time", "on-time")
        train = checked(count, seconds)
    except InputError as exc:
        return None, str(exc).replace("--pulses", "pulses").replace("--on-time", "on-time")
    return ("pulses", (train["pulses"], train["on_time"])), None


def amount_data(key: str, value: Any) -> dict[str, Any]:
    """A parsed amount as entry data: a pulse train gives pulses and on_time, any other amount its key."""
    return {"pulses": value[0], "on_time": value[1]} if key == "pulses" else {key: value}


def amount(text: str, allowed=("dv", "duration", "propellant"), required: bool = True) -> Parsed:
    """(key, SI value) for the first of ``allowed`` whose dimension the unit matches; where a duration is
    allowed, a pulse train 'N x on-time' too (key 'pulses', value (N, on-time s))."""
    text = (text or "").strip()
    if "duration" in allowed and _TRAIN.match(text) and not _BARE.match(text):
        return pulse_train(text)
    hint = ", ".join(f"{AMOUNT_HINT[k]} for {k}" for k in allowed)
    if not text:
        return None, (f"required: a number with a unit ({hint})" if required else None)
    if _BARE.match(text) and len(allowed) > 1:
        return None, f"add a unit: a bare number here could be any of {hint}"
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
    """SI value of a quantity; a bare number is in the base unit, as on the command line. ``unit_hint``
    (an example such as 'e.g. 7.1 bar') is added to an error message."""
    text = (text or "").strip()
    if not text:
        return None, ("required" if required else None)
    try:
        return parse_quantity(text, dimension, where, signed=signed), None
    except InputError as exc:
        return None, str(exc) + (f" ({unit_hint})" if unit_hint else "")


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
