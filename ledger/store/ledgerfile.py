"""The ledger file: a TinyDB database with a ``meta`` table (schema, craft, first chain link) and an
``entries`` table whose document ids are the entries' sequence numbers.

One write path: ``append``. It runs under an exclusive lock on a sidecar lock file, re-reads the file
inside the lock (another process may have appended), numbers the entry itself, links it into the hash
chain and writes through the durable storage. Reads need no lock: the file is only ever replaced whole.
"""
from __future__ import annotations

import os
import socket
from typing import Any, Mapping

from filelock import FileLock, Timeout
from tinydb import TinyDB
from tinydb.table import Document

from .. import __version__
from ..errors import StoreError
from . import durable
from .chain import GENESIS_PREV, Break, digest, verify_chain

SCHEMA = 1
META, ENTRIES = "meta", "entries"
LOCK_TIMEOUT_S = 10.0


def lock_for(path: str, timeout: float = LOCK_TIMEOUT_S) -> FileLock:
    return FileLock(path + ".lock", timeout=timeout, mode=0o600)


class LedgerFile:
    """A ledger on disk. Cheap to construct; every call reads the current file."""

    def __init__(self, path: str, lock_timeout: float = LOCK_TIMEOUT_S):
        self.path = os.path.abspath(path)
        self.lock_timeout = lock_timeout

    # --- creation ----------------------------------------------------------------------------
    @classmethod
    def create(cls, path: str, craft: Mapping[str, Any], created: str, by: str) -> "LedgerFile":
        """Write a new ledger holding only the craft definition; never overwrite an existing file."""
        path = os.path.abspath(path)
        folder = os.path.dirname(path)
        if not os.path.isdir(folder):
            raise StoreError(f"{path}: folder {folder} does not exist")
        if os.path.lexists(path):
            raise StoreError(f"{path}: already exists; refusing to overwrite it")
        meta: dict[str, Any] = {
            "schema": SCHEMA, "program": f"propledger {__version__}", "created": created, "by": by,
            "craft": dict(craft), "prev": GENESIS_PREV,
        }
        meta["hash"] = digest(meta, new=True)
        with cls._lock(path, LOCK_TIMEOUT_S):
            durable.write_document(path, {META: {"1": meta}, ENTRIES: {}}, exclusive=True)
        return cls(path)

    # --- reading -----------------------------------------------------------------------------
    def document(self) -> dict[str, Any]:
        doc = durable.read_document(self.path)
        meta_table = doc.get(META)
        if not isinstance(meta_table, dict) or "1" not in meta_table or not isinstance(doc.get(ENTRIES), dict):
            raise StoreError(f"{self.path}: not a propledger ledger (no craft definition or entries table)")
        meta = meta_table["1"]
        if not isinstance(meta, dict) or "schema" not in meta or "craft" not in meta:
            raise StoreError(f"{self.path}: not a propledger ledger (craft definition record malformed)")
        if not isinstance(meta["schema"], int) or meta["schema"] > SCHEMA:
            raise StoreError(
                f"{self.path}: written by a newer propledger (schema {meta['schema']}, this one reads up to "
                f"{SCHEMA}); upgrade propledger to open it")
        return doc

    def meta(self) -> dict[str, Any]:
        return self.document()[META]["1"]

    def records(self) -> list[dict[str, Any]]:
        """Entry records in sequence order."""
        table = self.document()[ENTRIES]
        try:
            return [table[k] for k in sorted(table, key=int)]
        except (ValueError, TypeError):
            raise StoreError(f"{self.path}: not a propledger ledger (entry ids are not numbers)") from None

    def head(self) -> tuple[int, str]:
        """(sequence, hash) of the last link of the chain."""
        doc = self.document()
        table = doc[ENTRIES]
        if not table:
            return 0, doc[META]["1"]["hash"]
        last = table[str(max(int(k) for k in table))]
        return int(last["seq"]), str(last["hash"])

    def verify(self) -> Break | None:
        doc = self.document()
        return verify_chain(doc[META]["1"], self.records())

    # --- the one write path ------------------------------------------------------------------
    @staticmethod
    def _lock(path: str, timeout: float):
        lock = lock_for(path, timeout)
        try:
            lock.acquire()
        except Timeout:
            raise StoreError(
                f"{path}: another propledger process holds the ledger lock; gave up after {timeout:g} s") from None
        return _Held(lock)

    def append(self, record: Mapping[str, Any]) -> dict[str, Any]:
        """Number, link and durably store one entry; returns the stored record once it is on disk."""
        return self.append_many([record])[0]

    def append_many(self, records: list[Mapping[str, Any]]) -> list[dict[str, Any]]:
        """Append several entries in one durable write (all or none), e.g. when a scenario is loaded."""
        with self._lock(self.path, self.lock_timeout):
            durable.clean_temporaries(self.path)
            seq, prev = self.head()
            host, program = socket.gethostname(), f"propledger {__version__}"
            stored_all = []
            for record in records:
                seq += 1
                stored: dict[str, Any] = dict(record)
                stored.update(seq=seq, prev=prev, host=host, program=program)
                stored["hash"] = prev = digest(stored, new=True)
                stored_all.append(stored)
            db = TinyDB(self.path, storage=durable.DurableStorage)
            try:
                db.table(ENTRIES, cache_size=0).insert_multiple(
                    Document(s, doc_id=s["seq"]) for s in stored_all)
            finally:
                db.close()
            return stored_all


class _Held:
    def __init__(self, lock: FileLock):
        self.lock = lock

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.lock.release()
        return False
