"""Times: ISO 8601 text in, POSIX seconds (UTC) inside, ISO 8601 'Z' text out."""
from __future__ import annotations

import math
import time
from datetime import datetime, timezone

from ..errors import InputError


YEARS = (1900, 3000)
EARLIEST = datetime(YEARS[0], 1, 1, tzinfo=timezone.utc).timestamp()
LATEST = datetime(YEARS[1], 1, 1, tzinfo=timezone.utc).timestamp()
"""Times outside these years are typing mistakes, and could not be written back as four-digit ISO years."""


def now() -> float:
    return time.time()


def parse_time(text: str | float | datetime, where: str = "--at") -> float:
    """ISO 8601 date-time; UTC unless an offset is given. 'now' is accepted."""
    if isinstance(text, datetime):
        dt = text
    elif isinstance(text, (int, float)) and not isinstance(text, bool):
        if not math.isfinite(text) or not EARLIEST <= text < LATEST:
            raise InputError(f"{where}: not a time between the years {YEARS[0]} and {YEARS[1] - 1}")
        return float(text)
    else:
        s = str(text).strip()
        if s.lower() == "now":
            return now()
        try:
            dt = datetime.fromisoformat(s)
        except ValueError:
            raise InputError(f"{where}: expected an ISO 8601 time like 2026-05-04T13:20:00Z, got {text!r}") from None
    if dt.tzinfo is None:
        dt = dt.replace(tzinfo=timezone.utc)
    try:
        t = dt.timestamp()
    except (OverflowError, ValueError, OSError):
        raise InputError(f"{where}: {text!r} is out of range") from None
    if not EARLIEST <= t < LATEST:
        raise InputError(f"{where}: {text!r} is outside the years {YEARS[0]} to {YEARS[1] - 1}")
    return t


def iso(t: float) -> str:
    dt = datetime.fromtimestamp(t, tz=timezone.utc)
    if dt.microsecond:
        return dt.strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    return dt.strftime("%Y-%m-%dT%H:%M:%SZ")


def short(t: float) -> str:
    """Minute resolution for tables."""
    return datetime.fromtimestamp(t, tz=timezone.utc).strftime("%Y-%m-%d %H:%M")
