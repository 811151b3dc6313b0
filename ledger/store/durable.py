"""A TinyDB Storage that never leaves a half-written ledger and does not re-parse an unchanged file.

TinyDB's own JSONStorage truncates and rewrites in place; a crash mid-write loses the ledger. Here every
write goes to a temporary file in the same folder, is flushed and fsynced, renamed over the ledger and the
folder is fsynced: only then is the write acknowledged. If the folder fsync fails after the rename, the
previous version (kept as a hard link until then) is put back, so a failed write never leaves a changed
file behind. The low-level steps are module functions so the fault tests can inject ENOSPC or EIO into
exactly these calls. Any OSError becomes one StoreError line. The parsed document is cached while the
file's (device, inode, size, mtime, ctime) are unchanged, because every TinyDB operation reads the whole file.
TinyDB's Storage class on top of these functions is ``store.tinystore`` (only writes need TinyDB).
"""
from __future__ import annotations

import hashlib
import os
import re
import secrets
import tempfile
from typing import Any

import orjson

from ..bulk import paused_gc
from ..errors import StoreError

_CACHE: dict[str, list[Any]] = {}
"""path -> [file key (device, inode, size, mtime, ctime); parsed document; the file's bytes, or their SHA-256
once asked for]. The digest is taken on demand: the console's appends never need it, a status read does."""
TMP_SUFFIX = ".propledger-tmp"
CLEANUP_NOTES: list[str] = []
"""Warnings about clean-up that failed after a write that succeeded (the ledger passes them on)."""


# --- the raw steps (patched by fault tests) ----------------------------------------------------
def write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        n = os.write(fd, view)
        view = view[n:]


def discard(path: str) -> None:
    """Remove a temporary file left by a failed write; nothing to report if it is already gone."""
    try:
        os.unlink(path)
    except OSError:
        pass


def fsync(fd: int) -> None:
    os.fsync(fd)


def replace(src: str, dst: str) -> None:
    os.replace(src, dst)


def link(src: str, dst: str) -> None:
    os.link(src, dst)


def fsync_dir(folder: str) -> None:
    fd = os.open(folder, os.O_RDONLY)
    try:
        fsync(fd)
    finally:
        os.close(fd)


def _key(st: os.stat_result) -> tuple[int, ...]:
    return (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns)


def _reason(exc: OSError) -> str:
    return exc.strerror or type(exc).__name__


# --- temporaries: named after the file they will become, so cleaning one ledger's never touches another's
def _tmp_prefix(path: str) -> str:
    return f".{os.path.basename(path)}."


def _tmp_pattern(path: str) -> re.Pattern[str]:
    return re.compile(re.escape(_tmp_prefix(path)) + r"[A-Za-z0-9_]{8}" + re.escape(TMP_SUFFIX) + "$")


_ANY_TMP = re.compile(r"^\..+\.[A-Za-z0-9_]{8}" + re.escape(TMP_SUFFIX) + "$")


def clean_temporaries(path: str, *, whole_folder: bool = False) -> int:
    """Remove temporary files a killed writer left for ``path`` (call under the ledger lock); with
    ``whole_folder``, every propledger temporary in the folder ``path`` (a folder only this ledger uses)."""
    folder = path if whole_folder else os.path.dirname(os.path.abspath(path))
    pattern = _ANY_TMP if whole_folder else _tmp_pattern(path)
    n = 0
    try:
        names = os.listdir(folder)
    except OSError:
        return 0
    for name in names:
        if pattern.match(name):
            try:
                os.unlink(os.path.join(folder, name))
                n += 1
            except OSError:
                pass
    return n


# --- reading -----------------------------------------------------------------------------------
def encode(data: dict[str, Any]) -> bytes:
    return orjson.dumps(data)


def decode(raw: bytes, path: str) -> dict[str, Any]:
    if not raw.strip():
        raise StoreError(f"{path}: the ledger file is empty")
    try:
        data = orjson.loads(raw)
    except orjson.JSONDecodeError as exc:
        raise StoreError(f"{path}: not a readable ledger file (not valid JSON: {exc}); it is damaged, "
                         "truncated or another program's file") from None
    if not isinstance(data, dict):
        raise StoreError(f"{path}: not a ledger file (top level is a JSON {type(data).__name__}, not an object)")
    return data


def _regular(path: str) -> os.stat_result:
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise StoreError(f"{path}: no ledger here (create one with 'propledger init')") from None
    except OSError as exc:
        raise StoreError(f"{path}: cannot read it ({_reason(exc)})") from None
    if os.path.isdir(path):
        raise StoreError(f"{path}: is a folder, not a ledger file")
    if not os.path.isfile(path):
        raise StoreError(f"{path}: is not a regular file")
    return st


def read_bytes(path: str) -> bytes:
    """The file's exact bytes (for backups), with the same clear errors as ``read_document``."""
    _regular(path)
    try:
        with open(path, "rb") as fh:
            return fh.read()
    except OSError as exc:
        raise StoreError(f"{path}: cannot read it ({_reason(exc)})") from None


def read_document(path: str) -> dict[str, Any]:
    """The parsed file, from the cache when the file has not changed since it was last read or written."""
    st = _regular(path)
    hit = _CACHE.get(path)
    if hit and hit[0] == _key(st):
        return dict(hit[1])
    try:
        with open(path, "rb") as fh:
            st = os.fstat(fh.fileno())
            raw = fh.read()
    except OSError as exc:
        raise StoreError(f"{path}: cannot read it ({_reason(exc)})") from None
    with paused_gc():
        data = decode(raw, path)
    _CACHE[path] = [_key(st), data, raw]
    return dict(data)


def content_digest(path: str) -> str | None:
    """SHA-256 of the bytes last read or written at ``path``, if the file has not changed since."""
    hit = _CACHE.get(path)
    try:
        if not hit or hit[0] != _key(os.stat(path)):
            return None
    except OSError:
        return None
    if isinstance(hit[2], bytes):
        hit[2] = hashlib.sha256(hit[2]).hexdigest()
    return hit[2]


# --- writing -----------------------------------------------------------------------------------
def write_bytes(path: str, payload: bytes, *, exclusive: bool = False) -> None:
    """Durably replace (or, with exclusive, create without overwriting) the file at ``path``.

    Acknowledged only by returning; on any failure the file at ``path`` is what it was before."""
    folder = os.path.dirname(os.path.abspath(path))
    _CACHE.pop(path, None)
    tmp = prev = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=_tmp_prefix(path), suffix=TMP_SUFFIX, dir=folder)  # created 0600
        try:
            write_all(fd, payload)
            fsync(fd)
        finally:
            os.close(fd)
        if exclusive:
            try:
                link(tmp, path)
            except FileExistsError:
                raise StoreError(f"{path}: already exists; refusing to overwrite it") from None
            try:
                fsync_dir(folder)
            except BaseException:
                os.unlink(path)
                raise
        else:
            prev = _keep_previous(path, folder)
            replace(tmp, path)
            tmp = None
            try:
                fsync_dir(folder)
            except BaseException:
                if prev is not None:
                    os.replace(prev, path)
                    prev = None
                raise
    except OSError as exc:
        raise StoreError(f"{path}: could not write it ({_reason(exc)}); nothing was recorded and the "
                         "previous file is unchanged") from None
    finally:
        for leftover in (tmp, prev):
            if leftover is not None:
                try:
                    os.unlink(leftover)
                except FileNotFoundError:
                    pass
                except OSError as exc:  # the write itself stands: say so, never "internal error"
                    CLEANUP_NOTES.append(f"{leftover!r}: could not remove this temporary file after the write "
                                         f"({_reason(exc)}); the write itself succeeded; delete it by hand")


def _keep_previous(path: str, folder: str) -> str | None:
    """A hard link to the current file, so a failed folder fsync can put it back (None if impossible)."""
    if not os.path.isfile(path):
        return None
    name = os.path.join(folder, _tmp_prefix(path) + secrets.token_hex(4) + TMP_SUFFIX)
    try:
        os.link(path, name)
    except OSError:
        return None
    return name


def write_document(path: str, data: dict[str, Any], *, exclusive: bool = False) -> None:
    payload = encode(data)
    write_bytes(path, payload, exclusive=exclusive)
    try:
        _CACHE[path] = [_key(os.stat(path)), data, payload]
    except OSError:
        pass  # written and acknowledged; the next read parses the file again
