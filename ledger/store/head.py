"""The chain head kept apart from the ledger: (sequence, hash) of the last entry, and the craft link's hash.

A hash chain shows an edit but not a cut: dropping the last entries leaves a shorter chain that still
verifies, and a file rewritten from scratch verifies too. So at every backup and handover the head is
written outside the ledger file, beside it (``PATH.head``) and in the backup folder (``PATH.backups/head.json``),
and every open checks the ledger against both: shorter than a recorded head, a different entry at that
sequence, or a different craft link is a ``HeadMismatch``, never a quiet rollback. Restoring a backup is
the one deliberate way to move the recorded head back.
"""
from __future__ import annotations

import os
from dataclasses import dataclass
from typing import Any, Mapping

import orjson

from ..errors import StoreError
from . import durable
from .sidefiles import private_folder, real

HEAD_SUFFIX = ".head"
BACKUP_SUFFIX = ".backups"
FOLDER_HEAD = "head.json"


class HeadMismatch(StoreError):
    """The ledger does not contain the head recorded outside it: entries were cut off or the file replaced."""


@dataclass(frozen=True)
class Head:
    seq: int
    hash: str
    genesis: str
    recorded: str = ""
    source: str = ""
    alt: "Head | None" = None
    """During a restore only: the head before it, also accepted, so a crash between writing the head
    records and renaming the restored file into place leaves the old state readable."""


def backup_folder(ledger_path: str) -> str:
    return real(ledger_path) + BACKUP_SUFFIX


def head_paths(ledger_path: str) -> tuple[str, str]:
    """Where the head is kept: the sidecar beside the ledger and the copy in the backup folder."""
    path = real(ledger_path)
    return path + HEAD_SUFFIX, os.path.join(backup_folder(path), FOLDER_HEAD)


def _is_hash(value: Any) -> bool:
    return isinstance(value, str) and len(value) == 64 and all(c in "0123456789abcdef" for c in value)


def read_head(path: str) -> Head | None:
    """One head record, or None when there is none; an unreadable record is an error, not ignored."""
    if not os.path.lexists(path):
        return None
    if os.path.islink(path):
        raise StoreError(f"{path!r}: the chain head record is a symbolic link; refusing to follow it; move it aside")
    try:
        with open(path, "rb") as fh:
            data = orjson.loads(fh.read())
    except (OSError, orjson.JSONDecodeError) as exc:
        raise StoreError(f"{path}: the chain head record is unreadable ({exc}); if you trust the ledger, move "
                         "this file aside and run 'propledger verify' then 'propledger backup'") from None
    seq = data.get("seq") if isinstance(data, dict) else None
    if (not isinstance(seq, int) or isinstance(seq, bool) or seq < 0 or not _is_hash(data.get("hash"))
            or not _is_hash(data.get("genesis"))):
        raise StoreError(f"{path}: the chain head record is malformed; if you trust the ledger, move this "
                         "file aside and run 'propledger verify' then 'propledger backup'")
    alt = data.get("alt")
    alt_head = None
    if isinstance(alt, dict) and isinstance(alt.get("seq"), int) and _is_hash(alt.get("hash")) \
            and _is_hash(alt.get("genesis")):
        alt_head = Head(alt["seq"], alt["hash"], alt["genesis"], str(data.get("recorded", "")), path)
    return Head(seq, data["hash"], data["genesis"], str(data.get("recorded", "")), path, alt_head)


def read_heads(ledger_path: str) -> list[Head]:
    return [h for h in (read_head(p) for p in head_paths(ledger_path)) if h is not None]


def write_heads(ledger_path: str, seq: int, hash_: str, genesis: str, recorded: str,
                alt: Head | None = None) -> None:
    """Record the head in both places (call under the ledger lock); files 0600, backup folder 0700."""
    folder = backup_folder(ledger_path)
    try:
        private_folder(folder)
    except OSError as exc:
        raise StoreError(f"{folder!r}: cannot use it as the backup folder ({exc.strerror or exc})") from None
    record = {"seq": seq, "hash": hash_, "genesis": genesis, "recorded": recorded,
              "ledger": os.path.basename(ledger_path)}
    if alt is not None:
        record["alt"] = {"seq": alt.seq, "hash": alt.hash, "genesis": alt.genesis}
    payload = orjson.dumps(record, option=orjson.OPT_SORT_KEYS)
    for path in head_paths(ledger_path):
        durable.write_bytes(path, payload)


def check_heads(ledger_path: str, meta: Mapping[str, Any], entries: Mapping[str, Any]) -> None:
    """Raise HeadMismatch unless the ledger holds every head recorded for it, unchanged."""
    for head in read_heads(ledger_path):
        if head.alt is not None and _holds(head.alt, meta, entries):
            continue
        when = f" (recorded {head.recorded})" if head.recorded else ""
        if meta.get("hash") != head.genesis:
            raise HeadMismatch(
                f"{ledger_path}: its craft definition link differs from the head record {head.source}{when}: "
                "the ledger file was replaced or rewritten")
        if head.seq == 0:
            continue
        rec = entries.get(str(head.seq))
        if rec is None:
            last = max(map(int, entries), default=0)
            raise HeadMismatch(
                f"{ledger_path}: ends at entry {last} but the head record {head.source}{when} shows entry "
                f"{head.seq} existed: entries were cut off")
        if not isinstance(rec, Mapping) or rec.get("hash") != head.hash:
            raise HeadMismatch(
                f"{ledger_path}: entry {head.seq} differs from the head record {head.source}{when}: "
                "the ledger was rewritten")


def _holds(head: Head, meta: Mapping[str, Any], entries: Mapping[str, Any]) -> bool:
    if meta.get("hash") != head.genesis:
        return False
    if head.seq == 0:
        return True
    rec = entries.get(str(head.seq))
    return isinstance(rec, Mapping) and rec.get("hash") == head.hash
