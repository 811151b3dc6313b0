"""Remember the last Monte Carlo result beside the ledger, keyed by the chain head it was computed on.

The samples depend only on the ledger's contents (the chain head hash covers every entry and the craft),
the confidence, the sample count, the seed and the program version. Re-reading an unchanged ledger then
costs nothing, and `propledger status` stays quick between writes. The cache is a convenience: a missing,
damaged or unwritable file only means the figures are computed again; it is never trusted across keys.
"""
from __future__ import annotations

import os
import tempfile
from typing import Any, Callable

import orjson

from .. import __version__

SUFFIX = ".confidence-cache.json"


def cache_path(ledger_path: str) -> str:
    return ledger_path + SUFFIX


def cached(ledger_path: str, key: dict[str, Any], compute: Callable[[], dict[str, Any]]) -> dict[str, Any]:
    """The stored result for ``key``, or ``compute()`` stored for next time."""
    key = dict(key, program=__version__)
    path = cache_path(ledger_path)
    try:
        with open(path, "rb") as fh:
            stored = orjson.loads(fh.read())
        if isinstance(stored, dict) and stored.get("key") == key and isinstance(stored.get("value"), dict):
            return stored["value"]
    except (OSError, orjson.JSONDecodeError):
        pass
    value = compute()
    try:
        fd, tmp = tempfile.mkstemp(prefix=".propledger-cache-", dir=os.path.dirname(os.path.abspath(path)))
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(orjson.dumps({"key": key, "value": value}))
            os.replace(tmp, path)
        finally:
            if os.path.exists(tmp):
                os.unlink(tmp)
    except OSError:
        pass  # a read-only folder: no cache, same answer
    return value
