"""Hash chain over the ledger: each entry carries the SHA-256 of its predecessor and of itself.

Canonical form: JSON, UTF-8, keys sorted, no whitespace, shortest round-trip floats (orjson); the hash
field itself is left out. The craft definition record is the chain's first link.
"""
from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass
from typing import Any, Iterable, Mapping

import orjson

GENESIS_PREV = "0" * 64


def check_finite(obj: Any, where: str = "record") -> None:
    """orjson writes NaN and infinity as null, so refuse them before a record is written."""
    if type(obj) is float:
        if not math.isfinite(obj):
            raise ValueError(f"non-finite number in {where}")
    elif type(obj) is dict:
        for k, v in obj.items():
            check_finite(v, f"{where}.{k}")
    elif type(obj) in (list, tuple):
        for i, v in enumerate(obj):
            check_finite(v, f"{where}[{i}]")


def canonical(record: Mapping[str, Any]) -> bytes:
    body = {k: v for k, v in record.items() if k != "hash"}
    return orjson.dumps(body, option=orjson.OPT_SORT_KEYS)


def digest(record: Mapping[str, Any], *, new: bool = False) -> str:
    """SHA-256 of the canonical form; ``new`` records (about to be written) are checked for non-finite numbers."""
    if new:
        check_finite(dict(record))
    return hashlib.sha256(canonical(record)).hexdigest()


def _digest_loaded(record: Mapping[str, Any]) -> str:
    """``digest`` for records parsed from the file: orjson refuses NaN and infinity when it parses, so the
    finite check (three quarters of the cost of ``digest``) cannot fail and is skipped. A copy less its
    hash (one C-level copy) gives the same canonical bytes as a comprehension over the keys (sorted when
    written), at a fraction of its cost: the chain check of a 2,000-entry ledger is a few milliseconds."""
    body = record.copy() if type(record) is dict else dict(record)
    body.pop("hash", None)
    return hashlib.sha256(orjson.dumps(body, option=orjson.OPT_SORT_KEYS)).hexdigest()


@dataclass(frozen=True)
class Break:
    """The first place the chain fails: which record and what differs."""

    seq: int
    problem: str

    def __str__(self) -> str:
        where = "craft definition" if self.seq == 0 else f"entry {self.seq}"
        return f"chain broken at {where}: {self.problem}"


def verify_chain(meta: Mapping[str, Any], records: Iterable[Mapping[str, Any]]) -> Break | None:
    """Recompute every link; return the first break, or None when the chain holds (records as parsed).

    Every record's SHA-256 is recomputed and compared, always. The walk over an intact chain is one
    loop with its names bound locally and ``_digest_loaded`` inlined (each record copied once, its stored
    hash taken from the copy); at the first difference ``_first_break`` walks again to name it."""
    if meta.get("hash") != _digest_loaded(meta):
        return Break(0, "stored hash does not match the craft definition's contents")
    records = records if type(records) in (list, tuple) else list(records)
    sha256, dumps, sort = hashlib.sha256, orjson.dumps, orjson.OPT_SORT_KEYS
    prev = meta["hash"]
    expected = 1
    try:
        for rec in records:
            body = rec.copy() if type(rec) is dict else dict(rec)
            stored = body.pop("hash", None)
            if (body.get("seq") != expected or body.get("prev") != prev
                    or stored != sha256(dumps(body, option=sort)).hexdigest()):
                break
            prev = stored
            expected += 1
        else:
            return None
    except (TypeError, ValueError):  # a record that cannot be copied or hashed: the walk names the break
        pass
    return _first_break(meta, records)


def _first_break(meta: Mapping[str, Any], records: Iterable[Mapping[str, Any]]) -> Break | None:
    """The record-by-record walk: the first record whose sequence number, link or hash is wrong."""
    prev = meta["hash"]
    expected = 1
    for rec in records:
        seq = rec.get("seq")
        if seq != expected:
            return Break(expected, f"sequence jumps from {expected - 1} to {seq}")
        if rec.get("prev") != prev:
            return Break(seq, "link to the previous entry does not match its hash")
        if rec.get("hash") != _digest_loaded(rec):
            return Break(seq, "stored hash does not match the entry's contents")
        prev = rec["hash"]
        expected += 1
    return None
