"""A TinyDB Storage that never leaves a half-written ledger and does not re-parse an unchanged file.

TinyDB's own JSONStorage truncates and rewrites in place; a crash mid-write loses the ledger. Here every
write goes to a temporary file in the same folder, is flushed and fsynced, renamed over the ledger and the
folder is fsynced: only then is the write acknowledged. The low-level steps are module functions so the
fault tests can inject ENOSPC or EIO into exactly these calls. The parsed document is cached while the
file's (inode, size, mtime) are unchanged, because every TinyDB operation reads the whole file.
"""
from __future__ import annotations

import os
import tempfile
from typing import Any

import orjson
from tinydb.storages import Storage

from ..errors import StoreError

_CACHE: dict[str, tuple[tuple[int, int, int], dict[str, Any]]] = {}
TMP_PREFIX = ".propledger-tmp-"


# --- the raw steps (patched by fault tests) ----------------------------------------------------
def write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        n = os.write(fd, view)
        view = view[n:]


def fsync(fd: int) -> None:
    os.fsync(fd)


def replace(src: str, dst: str) -> None:
    os.replace(src, dst)


def link(src: str, dst: str) -> None:
    os.link(src, dst)


def _fsync_dir(folder: str) -> None:
    fd = os.open(folder, os.O_RDONLY)
    try:
        fsync(fd)
    finally:
        os.close(fd)


def _key(st: os.stat_result) -> tuple[int, int, int]:
    return (st.st_ino, st.st_size, st.st_mtime_ns)


def encode(data: dict[str, Any]) -> bytes:
    return orjson.dumps(data)


def decode(raw: bytes, path: str) -> dict[str, Any]:
    if not raw.strip():
        raise StoreError(f"{path}: the ledger file is empty")
    try:
        data = orjson.loads(raw)
    except orjson.JSONDecodeError as exc:
        raise StoreError(f"{path}: not a readable ledger (damaged or truncated JSON: {exc})") from None
    if not isinstance(data, dict):
        raise StoreError(f"{path}: not a ledger file (top level is not a JSON object)")
    return data


def read_document(path: str) -> dict[str, Any]:
    """The parsed file, from the cache when the file has not changed since it was last read or written."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise StoreError(f"{path}: no ledger here (create one with 'propledger init')") from None
    if not os.path.isfile(path):
        raise StoreError(f"{path}: is not a regular file")
    hit = _CACHE.get(path)
    if hit and hit[0] == _key(st):
        return dict(hit[1])
    with open(path, "rb") as fh:
        st = os.fstat(fh.fileno())
        raw = fh.read()
    data = decode(raw, path)
    _CACHE[path] = (_key(st), data)
    return dict(data)


def write_document(path: str, data: dict[str, Any], *, exclusive: bool = False) -> None:
    """Durably replace (or, with exclusive, create without overwriting) the file at ``path``."""
    folder = os.path.dirname(os.path.abspath(path))
    payload = encode(data)
    fd, tmp = tempfile.mkstemp(prefix=TMP_PREFIX, dir=folder)  # created 0600
    try:
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
            os.unlink(tmp)
        else:
            replace(tmp, path)
        _fsync_dir(folder)
    except BaseException:
        _CACHE.pop(path, None)
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    _CACHE[path] = (_key(os.stat(path)), data)


def clean_temporaries(path: str) -> int:
    """Remove temporary files a killed writer left beside the ledger (call under the lock)."""
    folder = os.path.dirname(os.path.abspath(path))
    n = 0
    for name in os.listdir(folder):
        if name.startswith(TMP_PREFIX):
            try:
                os.unlink(os.path.join(folder, name))
                n += 1
            except FileNotFoundError:
                pass
    return n


class DurableStorage(Storage):
    """TinyDB's storage seam (read, write) on top of ``read_document`` / ``write_document``."""

    def __init__(self, path: str):
        self.path = path

    def read(self) -> dict[str, Any] | None:
        return read_document(self.path)

    def write(self, data: dict[str, Any]) -> None:
        write_document(self.path, data)

    def close(self) -> None:
        pass
