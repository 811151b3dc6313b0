"""``LEDGER.verified``: the bytes that last passed the full chain check, sealed so that it can only save work.

Recomputing every entry's hash is most of a large ledger's read time; hashing the file's bytes once costs a
tenth of it. The mark holds the SHA-256 of the file bytes that verified and an HMAC of it under the ledger's
secret (``sidefiles``): writing the digest of a tampered file into the mark no longer skips the check,
because without the secret no one can seal it. A mark that does not check is treated as absent.
"""
from __future__ import annotations

from . import sidefiles

SUFFIX = ".verified"
PURPOSE = "propledger verified-bytes mark v1"


def mark_path(ledger_path: str) -> str:
    return sidefiles.real(ledger_path) + SUFFIX


def is_marked(ledger_path: str, digest: str) -> bool:
    """Did exactly these bytes (by SHA-256) pass the full check, by a mark sealed with this ledger's secret?"""
    key = sidefiles.secret(ledger_path, create=False)
    raw = sidefiles.read_small(mark_path(ledger_path), 4096)
    if key is None or raw is None:
        return False
    try:
        stored, tag = raw.decode("ascii").split()
    except (UnicodeDecodeError, ValueError):
        return False
    return stored == digest and sidefiles.sealed_ok(key, PURPOSE, digest.encode(), tag)


def mark(ledger_path: str, digest: str) -> None:
    """Remember that these bytes verified (silently nothing when no secret can be kept)."""
    key = sidefiles.secret(ledger_path)
    if key is not None:
        sidefiles.write_private(mark_path(ledger_path),
                                f"{digest} {sidefiles.seal(key, PURPOSE, digest.encode())}\n".encode())
