"""The fleet's cache of per-craft rows: one sealed file in the fleet folder, each row under its fingerprint.

Like the side caches beside a ledger (``confcache``), it may only save work, never change an answer: the
file is sealed with an HMAC under a secret kept beside it (``.propledger-fleet-cache.json.key``, made
by ``store.sidefiles``), a row is used only when the craft's fingerprint (for a file, the SHA-256 of
its bytes and head records, so its chain head and every entry) equals the one stored with it and the
program version is the same, and a missing, damaged, forged or unwritable file only means the rows are
computed again.
"""
from __future__ import annotations

from typing import Any

import orjson

from .. import __version__
from ..store import sidefiles

PURPOSE = "propledger fleet cache v2"
"""v2: rows of craft with delta-v burns on several engines come from other Monte Carlo draws (uncertainty.SEGMENTS_SAMPLER)."""
MAX_BYTES = 256 << 20


def load(base: str) -> dict[str, dict[str, Any]]:
    """ledger path -> {"key": fingerprint, "row": row}, or {} when the file is absent or not ours."""
    secret = sidefiles.secret(base, create=False)
    raw = sidefiles.read_small(base, MAX_BYTES)
    if secret is None or raw is None or b"\n" not in raw:
        return {}
    tag, body = raw.split(b"\n", 1)
    try:
        if not sidefiles.sealed_ok(secret, PURPOSE, body, tag.decode("ascii")):
            return {}
        stored = orjson.loads(body)
    except (UnicodeDecodeError, orjson.JSONDecodeError):
        return {}
    if not isinstance(stored, dict) or stored.get("program") != __version__ or not isinstance(stored.get("rows"), dict):
        return {}
    return {k: v for k, v in stored["rows"].items() if isinstance(v, dict) and isinstance(v.get("row"), dict)}


def store(base: str, rows: dict[str, dict[str, Any]]) -> bool:
    secret = sidefiles.secret(base)
    if secret is None:
        return False
    try:
        body = orjson.dumps({"program": __version__, "rows": rows})
    except (TypeError, orjson.JSONEncodeError):
        return False
    return sidefiles.write_private(base, sidefiles.seal(secret, PURPOSE, body).encode() + b"\n" + body)


def update(base: str, rows: dict[str, dict[str, Any]]) -> bool:
    """Replace some rows, keep the others (last writer wins: a lost update only costs a recomputation)."""
    merged = load(base)
    merged.update(rows)
    return store(base, merged)
