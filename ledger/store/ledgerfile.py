"""The ledger file: a TinyDB database with a ``meta`` table (schema, craft, first chain link) and an
``entries`` table whose document ids are the entries' sequence numbers.

One write path: ``append_many``. It runs under an exclusive lock on a sidecar lock file, re-reads the
file inside the lock (another process may have appended), numbers the entries itself, links them into
the hash chain and writes through the durable storage. Reads need no lock: the file is only ever
replaced whole. Every read checks the layout (walked once per parsed file) and the chain head recorded
outside the file; a damaged file is never written over, and its error names the newest good backup and
the restore command.
"""
from __future__ import annotations

import os
import threading
from contextlib import contextmanager
from datetime import datetime, timezone
from typing import Any, Iterator, Mapping

from .. import __version__
from ..errors import StoreError
from . import durable
from .chain import GENESIS_PREV, Break, digest, verify_chain
from .head import HeadMismatch, backup_folder, check_heads, head_paths, write_heads
from .migrate import migrate_document
from .sidefiles import real

SCHEMA = 1
META, ENTRIES = "meta", "entries"
LOCK_TIMEOUT_S = 10.0

_LOCKS: dict[str, Any] = {}
_LOCKS_GUARD = threading.Lock()
_LAID_OUT: dict[str, Any] = {}
"""path -> the entries table (a parsed object, held) whose layout was last checked: a re-read of an
unchanged file, served from the storage's cache, is the same object and is not walked again."""


def lock_for(path: str):
    """The one lock object per ledger in this process (re-entrant; flock, freed by the kernel on death)."""
    key = real(path) + ".lock"
    with _LOCKS_GUARD:
        if key not in _LOCKS:
            from filelock import FileLock  # noqa: PLC0415 - reads take no lock: keep it off their path

            _LOCKS[key] = FileLock(key, mode=0o600)
        return _LOCKS[key]


def forget(path: str) -> None:
    """Drop this process's cached parse of the ledger at ``path``: a reader of many ledgers (the fleet)
    keeps one parsed file in memory at a time instead of every one it has read."""
    p = real(path)
    durable._CACHE.pop(p, None)
    _LAID_OUT.pop(p, None)


def utc_stamp() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def prepare_writes() -> None:
    """Import what a write needs and a read does not (a program that will write can do this early)."""
    import socket  # noqa: F401, PLC0415

    import filelock  # noqa: F401, PLC0415

    from . import tinystore  # noqa: F401, PLC0415


class Damaged(StoreError):
    """The file at the ledger path cannot be used as it is; restoring a backup is the remedy."""


def check_layout(doc: Mapping[str, Any], path: str) -> None:
    """Raise Damaged unless ``doc`` has the ledger's layout (StoreError if a newer schema wrote it)."""
    meta_table, table = doc.get(META), doc.get(ENTRIES)
    if not isinstance(meta_table, dict) or "1" not in meta_table or not isinstance(table, dict):
        raise Damaged(f"{path}: not a propledger ledger (no craft definition or entries table)")
    meta = meta_table["1"]
    if not isinstance(meta, dict) or not isinstance(meta.get("craft"), dict) or not isinstance(meta.get("hash"), str):
        raise Damaged(f"{path}: not a propledger ledger (craft definition record malformed)")
    schema = meta.get("schema")
    if not isinstance(schema, int) or isinstance(schema, bool):
        raise Damaged(f"{path}: not a propledger ledger (schema version missing or not a number)")
    if schema > SCHEMA:
        raise StoreError(f"{path}: written by a newer propledger (schema {schema}, this one reads up to "
                         f"{SCHEMA}); upgrade propledger to open it; nothing was changed")
    if _well_numbered(table):
        return
    for key, rec in table.items():
        if not (key.isascii() and key.isdigit() and key[0] != "0"):
            raise Damaged(f"{path}: entry id {key[:20]!r} is not a sequence number")
        if not isinstance(rec, dict) or rec.get("seq") != int(key) or not isinstance(rec.get("hash"), str):
            raise Damaged(f"{path}: entry {key} is malformed (not a record with its own sequence number and hash)")
        if not isinstance(rec.get("data", _EMPTY), dict) or not isinstance(rec.get("kind"), str):
            raise Damaged(f"{path}: integrity: entry {key} is malformed (its kind is not text or its data is not "
                          "an object), even if its hashes link; it was not written by propledger")


_EMPTY: dict[str, Any] = {}
_LAST_ORDER: list[Any] = [None, -1, False]
"""[table, its size, whether its keys are "1".."N" in order] for the last table asked about (one slot: it
holds the table, and a console left open must not keep old copies of a large ledger alive). A read asks
for the same table three times (layout, head, records), an append for the old table then the new one."""


def in_order(table: Mapping[str, Any]) -> bool:
    """Are the table's keys "1".."N" in that order (as every append writes them)?"""
    last, size, ok = _LAST_ORDER
    if last is table and size == len(table):
        return ok
    ok = list(table) == [str(i) for i in range(1, len(table) + 1)]
    _remember_order(table, ok)
    return ok


def _remember_order(table: Mapping[str, Any], ok: bool) -> None:
    _LAST_ORDER[:] = [table, len(table), ok]


def _well_numbered(table: Mapping[str, Any]) -> bool:
    """The common case in one pass: keys "1".."N" in order, each a record carrying that seq and a hash.
    When it fails, the full loop in ``check_layout`` finds and names the first bad entry."""
    if not in_order(table):
        return False
    try:
        return all(type(rec) is dict and rec["seq"] == i and type(rec["hash"]) is str
                   and type(rec.get("data", _EMPTY)) is dict and type(rec.get("kind")) is str
                   for i, rec in enumerate(table.values(), 1))
    except (KeyError, TypeError):
        return False


def head_of(doc: Mapping[str, Any]) -> tuple[int, str]:
    """(sequence, hash) of the last link of the chain."""
    table = doc[ENTRIES]
    if not table:
        return 0, doc[META]["1"]["hash"]
    last = table[next(reversed(table))] if in_order(table) else table[str(max(map(int, table)))]
    return int(last["seq"]), str(last["hash"])


def ordered(doc: Mapping[str, Any]) -> list[dict[str, Any]]:
    table = doc[ENTRIES]
    if in_order(table):
        return list(table.values())
    return [table[k] for k in sorted(table, key=int)]


class LedgerFile:
    """A ledger on disk. Cheap to construct; every call reads the current file."""

    def __init__(self, path: str, lock_timeout: float = LOCK_TIMEOUT_S):
        self.path = real(path)  # a symbolic link is resolved once: lock, heads, backups follow the real file
        self.lock_timeout = lock_timeout
        self.notices: list[str] = []

    # --- creation ----------------------------------------------------------------------------
    @classmethod
    def create(cls, path: str, craft: Mapping[str, Any], created: str, by: str) -> "LedgerFile":
        """Write a new ledger holding only the craft definition; never overwrite an existing file."""
        lf = cls(path)
        path = lf.path
        folder = os.path.dirname(path)
        if not os.path.isdir(folder):
            raise StoreError(f"{path}: folder {folder} does not exist")
        meta: dict[str, Any] = {
            "schema": SCHEMA, "program": f"propledger {__version__}", "created": created, "by": by,
            "craft": dict(craft), "prev": GENESIS_PREV,
        }
        meta["hash"] = digest(meta, new=True)
        with lf.locked():
            if os.path.lexists(path):
                raise StoreError(f"{path}: already exists; refusing to overwrite it")
            traces = [p for p in (*head_paths(path), backup_folder(path)) if os.path.lexists(p)]
            if traces:
                from .backup import restore_command  # noqa: PLC0415 - backup imports this module

                raise StoreError(f"{path}: no ledger file here, but {traces[-1]} belongs to a ledger at this path; "
                                 f"restore it with '{restore_command(path)}', or move the head record and "
                                 "backups aside to start a new ledger here")
            durable.write_document(path, {META: {"1": meta}, ENTRIES: {}}, exclusive=True)
            try:
                write_heads(path, 0, meta["hash"], meta["hash"], created)
            except BaseException:  # not created after all: leave no trace that would block the next attempt
                try:
                    for p in (path, *head_paths(path)):
                        if os.path.lexists(p):
                            os.unlink(p)
                    if os.path.isdir(backup_folder(path)) and not os.listdir(backup_folder(path)):
                        os.rmdir(backup_folder(path))
                except OSError:
                    pass  # the first error is the one to report
                raise
        return lf

    @classmethod
    def adopt(cls, path: str, meta: Mapping[str, Any], records: list[Mapping[str, Any]] | Any) -> "LedgerFile":
        """Write a new ledger holding exactly ``meta`` and ``records`` as another store keeps them (same
        links, same head: nothing is re-numbered or re-hashed); refused unless their chain verifies."""
        meta, records = dict(meta), [dict(r) for r in records]
        brk = verify_chain(meta, records)
        if brk is not None:
            raise StoreError(f"{path}: not copying a ledger whose {brk}; nothing was written")
        if not isinstance(meta.get("schema"), int) or meta["schema"] > SCHEMA:
            raise StoreError(f"{path}: the source's craft link has schema {meta.get('schema')!r}; this propledger "
                             f"writes files of schema {SCHEMA}; nothing was written")
        lf = cls(path)
        folder = os.path.dirname(lf.path)
        if not os.path.isdir(folder):
            raise StoreError(f"{lf.path}: folder {folder} does not exist")
        with lf.locked():
            if os.path.lexists(lf.path) or any(os.path.lexists(p) for p in (*head_paths(lf.path), backup_folder(lf.path))):
                raise StoreError(f"{lf.path}: already exists (or its head record or backups do); refusing to "
                                 "overwrite it; nothing was written")
            table = {str(r["seq"]): r for r in records}
            durable.write_document(lf.path, {META: {"1": meta}, ENTRIES: table}, exclusive=True)
            seq, h = head_of({META: {"1": meta}, ENTRIES: table})
            write_heads(lf.path, seq, h, meta["hash"], utc_stamp())
        return lf

    # --- reading -----------------------------------------------------------------------------
    def exists(self) -> bool:
        return os.path.exists(self.path)

    def read(self) -> tuple[dict[str, Any], list[dict[str, Any]]]:
        """The craft link and the entry records in sequence order, from one read of the file."""
        doc = self.document()
        return doc[META]["1"], ordered(doc)

    def change_key(self) -> tuple[int, int, int] | None:
        """(inode, size, mtime_ns): an atomic replace changes the inode, an append the size and mtime."""
        try:
            st = os.stat(self.path)
        except OSError:
            return None
        return (st.st_ino, st.st_size, st.st_mtime_ns)

    def verify_cached(self, meta: Mapping[str, Any], records: list[Mapping[str, Any]] | Any) -> Break | None:
        """The chain check, skipped when these exact file bytes (by SHA-256) verified before.

        Any change to the file changes its digest and brings the full check back; the mark is sealed with
        the ledger's secret (``verifiedmark``); ``propledger verify`` always does the full check."""
        from . import verifiedmark  # noqa: PLC0415

        digest = durable.content_digest(self.path)
        if digest and verifiedmark.is_marked(self.path, digest):
            return None
        brk = verify_chain(meta, records)
        if brk is None and digest:
            verifiedmark.mark(self.path, digest)  # sealed with the ledger's secret: a forged mark is ignored
        return brk

    def recorded_heads(self) -> list[Any]:
        """Chain heads recorded outside the ledger (beside it and in its backup folder)."""
        from .head import read_heads  # noqa: PLC0415

        return read_heads(self.path)

    def check(self, doc: Mapping[str, Any]) -> None:
        """Layout and recorded head; raises StoreError (with the recovery hint when a backup would help)."""
        try:
            table = doc.get(ENTRIES)
            if table is None or _LAID_OUT.get(self.path) is not table:
                check_layout(doc, self.path)
                _LAID_OUT[self.path] = table
            check_heads(self.path, doc[META]["1"], doc[ENTRIES])
        except (Damaged, HeadMismatch) as exc:
            raise type(exc)(f"{exc}. {self.hint()}") from None

    def hint(self) -> str:
        from .backup import recovery_hint  # noqa: PLC0415 - backup imports this module

        return recovery_hint(self.path)

    def document(self, *, migrate: bool = True) -> dict[str, Any]:
        """The checked document; an older schema is migrated (after a backup) unless ``migrate`` is False."""
        try:
            doc = durable.read_document(self.path)
        except StoreError as exc:
            if not os.path.lexists(self.path) and not any(os.path.lexists(p) for p in head_paths(self.path)):
                raise
            raise Damaged(f"{exc}. {self.hint()}") from None
        self.check(doc)
        if migrate and doc[META]["1"]["schema"] < SCHEMA:
            return self._migrate()
        return doc

    def meta(self) -> dict[str, Any]:
        return self.document()[META]["1"]

    def records(self) -> list[dict[str, Any]]:
        """Entry records in sequence order."""
        return ordered(self.document())

    def head(self) -> tuple[int, str]:
        return head_of(self.document())

    def verify(self) -> Break | None:
        doc = self.document()
        return verify_chain(doc[META]["1"], ordered(doc))

    # --- locking -----------------------------------------------------------------------------
    @contextmanager
    def locked(self) -> Iterator[None]:
        """Hold the ledger's exclusive lock (re-entrant) around a whole read-check-write."""
        from filelock import Timeout  # noqa: PLC0415

        folder = os.path.dirname(self.path)
        if not os.path.isdir(folder):  # the lock library would make the folder: a typo must change nothing
            raise StoreError(f"{self.path}: no ledger here (folder {folder} does not exist); nothing was changed")
        lock = lock_for(self.path)
        stray = not os.path.lexists(lock.lock_file)  # a lock file this call makes for a ledger that may not exist
        try:
            lock.acquire(timeout=self.lock_timeout)
        except Timeout:
            raise StoreError(f"{self.path}: another propledger process holds the ledger lock; gave up after "
                             f"{self.lock_timeout:g} s; nothing was recorded") from None
        except OSError as exc:
            raise StoreError(f"{self.path}.lock: cannot take the ledger lock ({exc.strerror or exc})") from None
        try:
            yield
        finally:
            lock.release()
            if stray and not lock.is_locked and not os.path.lexists(self.path):
                # a command on a path with no ledger changes nothing on disk, not even a lock file
                try:
                    os.unlink(lock.lock_file)
                except OSError:
                    pass

    # --- the one write path ------------------------------------------------------------------
    def append(self, record: Mapping[str, Any]) -> dict[str, Any]:
        """Number, link and durably store one entry; returns the stored record once it is on disk."""
        return self.append_many([record])[0]

    def append_many(self, records: list[Mapping[str, Any]]) -> list[dict[str, Any]]:
        """Append several entries in one durable write (all or none), e.g. when a scenario is loaded."""
        with self.locked():
            for p in (self.path, *head_paths(self.path)):
                durable.clean_temporaries(p)
            doc = self.document()
            self._check_owner()
            seq, prev = head_of(doc)
            import socket  # noqa: PLC0415 - writes only

            from tinydb import TinyDB  # noqa: PLC0415
            from tinydb.table import Document  # noqa: PLC0415

            from .tinystore import DurableStorage  # noqa: PLC0415

            host, program = socket.gethostname(), f"propledger {__version__}"
            stored_all = []
            for record in records:
                seq += 1
                stored: dict[str, Any] = dict(record)
                stored.update(seq=seq, prev=prev, host=host, program=program)
                stored["hash"] = prev = digest(stored, new=True)
                stored_all.append(stored)
            db = TinyDB(self.path, storage=DurableStorage)
            try:
                db.table(ENTRIES, cache_size=0).insert_multiple(
                    Document(s, doc_id=s["seq"]) for s in stored_all)
            finally:
                db.close()
            # The table just written is the checked one plus entries built here, numbered on from its
            # last: no need to walk it again.
            was_in_order = in_order(doc[ENTRIES])
            written = durable.read_document(self.path)[ENTRIES]
            _LAID_OUT[self.path] = written
            _remember_order(written, was_in_order)
            if durable.CLEANUP_NOTES:
                self.notices.extend(durable.CLEANUP_NOTES)
                durable.CLEANUP_NOTES.clear()
            return stored_all

    def _check_owner(self) -> None:
        """Refuse to write a ledger another user owns, or one others can read or write: never taken over silently."""
        try:
            st = os.stat(self.path)
        except OSError as exc:
            raise StoreError(f"{self.path!r}: cannot check it ({exc.strerror or exc}); nothing was recorded") from None
        if st.st_uid != os.geteuid():
            raise StoreError(f"{self.path!r}: owned by another user (uid {st.st_uid}); refusing to write it; "
                             "nothing was recorded (open it as its owner, or copy it)")
        if st.st_mode & 0o077:
            raise StoreError(f"{self.path!r}: readable or writable by other users (mode {st.st_mode & 0o777:o}); "
                             f"refusing to write it; nothing was recorded; make it private with 'chmod 600'")

    # --- schema migration --------------------------------------------------------------------
    def _migrate(self) -> dict[str, Any]:
        """Back up the old file, migrate and re-link it, and record the new head (under the lock)."""
        with self.locked():
            doc = self.document(migrate=False)
            meta = doc[META]["1"]
            old = meta["schema"]
            if old >= SCHEMA:
                return doc
            brk = verify_chain(meta, ordered(doc))
            if brk is not None:
                raise StoreError(f"{self.path}: written with schema {old} and its {brk}; not migrating a ledger "
                                 f"whose chain does not verify; nothing was changed. {self.hint()}")
            from .backup import make_backup  # noqa: PLC0415

            kept = make_backup(self.path)
            seq, h = head_of(doc)
            stamp = utc_stamp()
            note = {"from": old, "old_head": {"seq": seq, "hash": h}, "backup": os.path.basename(kept), "at": stamp}
            new = migrate_document(doc, SCHEMA, path=self.path, note=note)
            for p in head_paths(self.path):  # the old head no longer describes the re-linked chain
                if os.path.lexists(p):
                    os.unlink(p)
            durable.write_document(self.path, new)
            nseq, nh = head_of(new)
            write_heads(self.path, nseq, nh, new[META]["1"]["hash"], stamp)
            self.notices.append(f"ledger migrated from schema {old} to {SCHEMA}; the old file is kept as {kept}")
            return new
