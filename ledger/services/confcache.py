"""Remember the last Monte Carlo result beside the ledger, keyed by the chain head it was computed on.

The samples depend only on the ledger's contents (the chain head hash covers every entry and the craft),
the confidence, the sample count, the seed and the program version. Re-reading an unchanged ledger then
costs nothing, and `propledger status` stays quick between writes. The cache is a convenience and is
never trusted on its word: its bytes are sealed with an HMAC under the ledger's secret
(``store.sidefiles``), so an edited or forged cache (a low bound of 9999 m/s, an approval never recorded)
fails its seal and is ignored as if absent; a missing, damaged or unwritable file only means the figures
are computed again. The key (head hash and count, options, version) is checked after the seal.
"""
from __future__ import annotations

from typing import Any, Callable

import orjson

from .. import __version__
from ..store import sidefiles

SUFFIX = ".confidence-cache.json"
PURPOSE = "propledger confidence cache v2"
MAX_BYTES = 64 << 20


def cache_path(ledger_path: str) -> str:
    return sidefiles.real(ledger_path) + SUFFIX


def load(ledger_path: str, key: dict[str, Any]) -> dict[str, Any] | None:
    """The cached value for ``key`` if the file is sealed by this ledger's secret, else None."""
    secret = sidefiles.secret(ledger_path, create=False)
    raw = sidefiles.read_small(cache_path(ledger_path), MAX_BYTES)
    if secret is None or raw is None or b"\n" not in raw:
        return None
    tag, body = raw.split(b"\n", 1)
    try:
        if not sidefiles.sealed_ok(secret, PURPOSE, body, tag.decode("ascii")):
            return None
        stored = orjson.loads(body)
    except (UnicodeDecodeError, orjson.JSONDecodeError):
        return None
    if isinstance(stored, dict) and stored.get("key") == key and isinstance(stored.get("value"), dict):
        return stored["value"]
    return None


def store(ledger_path: str, key: dict[str, Any], value: dict[str, Any]) -> bool:
    secret = sidefiles.secret(ledger_path)
    if secret is None:
        return False  # no private secret can be kept here: no cache, same answer
    try:
        body = orjson.dumps({"key": key, "value": value})
    except (TypeError, orjson.JSONEncodeError):
        return False
    tag = sidefiles.seal(secret, PURPOSE, body)
    return sidefiles.write_private(cache_path(ledger_path), tag.encode() + b"\n" + body)


def cached(ledger_path: str, key: dict[str, Any], compute: Callable[[], dict[str, Any]]) -> dict[str, Any]:
    """The stored result for ``key``, or ``compute()`` stored for next time."""
    key = dict(key, program=__version__)
    hit = load(ledger_path, key)
    if hit is not None:
        return hit
    value = compute()
    store(ledger_path, key, value)
    return value
