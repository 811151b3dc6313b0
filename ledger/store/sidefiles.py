"""Files beside the ledger that only save work: the per-ledger secret, sealed (HMAC) contents, safe writes.

A derived file (the verified-bytes mark, the Monte Carlo cache) may make a read quicker but must never
change an answer. Each is sealed with an HMAC-SHA256 under a secret kept beside the ledger
(``LEDGER.key``: 32 random bytes, owner-only, created with O_EXCL|O_NOFOLLOW, never copied into a backup
or a report). A file whose seal does not check, or any secret that is not a private regular file of
ours, means "absent": the work is done again. Every side file is written through a fresh O_EXCL
temporary renamed into place, so a planted symbolic link is replaced, never followed. See docs/integrity.md.
"""
from __future__ import annotations

import errno
import hashlib
import hmac
import os
import secrets
import stat
import tempfile

from .durable import discard

KEY_SUFFIX = ".key"
KEY_BYTES = 32
_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)


def real(path: str) -> str:
    """The ledger's one name: symbolic links resolved once, so lock, head records, side files and backups
    are keyed by the file actually written (a link to the ledger never forks a second file)."""
    return os.path.realpath(os.path.abspath(path))


def key_path(ledger_path: str) -> str:
    return real(ledger_path) + KEY_SUFFIX


def _private_regular(st: os.stat_result) -> bool:
    return stat.S_ISREG(st.st_mode) and st.st_uid == os.geteuid() and not st.st_mode & 0o077


def _read_key(path: str) -> bytes | None:
    try:
        fd = os.open(path, os.O_RDONLY | _NOFOLLOW)
    except OSError:
        return None
    try:
        if not _private_regular(os.fstat(fd)):
            return None
        raw = os.read(fd, KEY_BYTES + 1)
    except OSError:
        return None
    finally:
        os.close(fd)
    return raw if len(raw) == KEY_BYTES else None


def secret(ledger_path: str, *, create: bool = True) -> bytes | None:
    """The ledger's secret (created on first use), or None when there is no usable one: a link, a file of
    another user or readable by others, a wrong size, a read-only folder. None disables the side caches."""
    path = key_path(ledger_path)
    found = _read_key(path)
    if found is not None or not create:
        return found
    if os.path.lexists(path):
        return None  # present but unusable: never overwrite it, never trust it
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW, 0o600)
    except OSError:
        return _read_key(path)  # another process created it first (or the folder is read-only)
    key = secrets.token_bytes(KEY_BYTES)
    try:
        os.write(fd, key)
        os.fsync(fd)
    except OSError:
        os.close(fd)
        try:
            os.unlink(path)
        except OSError:
            pass
        return None
    os.close(fd)
    return key


def seal(key: bytes, purpose: str, payload: bytes) -> str:
    """HMAC-SHA256 of ``payload`` under ``key``, domain-separated by ``purpose``."""
    return hmac.new(key, purpose.encode() + b"\0" + payload, hashlib.sha256).hexdigest()


def sealed_ok(key: bytes, purpose: str, payload: bytes, tag: object) -> bool:
    return isinstance(tag, str) and hmac.compare_digest(seal(key, purpose, payload), tag)


def read_small(path: str, limit: int = 1 << 24) -> bytes | None:
    """A side file's bytes (not following a link; None when absent, a link, not ours or too large)."""
    try:
        fd = os.open(path, os.O_RDONLY | _NOFOLLOW)
    except OSError:
        return None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode) or st.st_uid != os.geteuid() or st.st_size > limit:
            return None
        chunks, left = [], st.st_size + 1
        while left > 0:
            b = os.read(fd, min(left, 1 << 20))
            if not b:
                break
            chunks.append(b)
            left -= len(b)
        return b"".join(chunks)
    except OSError:
        return None
    finally:
        os.close(fd)


def write_private(path: str, payload: bytes) -> bool:
    """Replace the side file at ``path`` (0600) through an O_EXCL temporary and a rename; False (and nothing
    left behind) when it cannot be written: a side file is a convenience, its absence only costs time."""
    folder = os.path.dirname(path)
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix="." + os.path.basename(path) + ".", suffix=".propledger-tmp", dir=folder)
        try:
            view = memoryview(payload)
            while view:
                view = view[os.write(fd, view):]
        finally:
            os.close(fd)
        os.replace(tmp, path)
        tmp = None
        return True
    except OSError:
        return False
    finally:
        if tmp is not None:
            discard(tmp)


def private_folder(folder: str) -> None:
    """Create (0700) or accept ``folder`` only as a real folder of ours: a planted link or another user's
    folder never receives backups or head records. Raises OSError with the reason."""
    try:
        os.mkdir(folder, 0o700)
    except FileExistsError:
        pass
    st = os.lstat(folder)
    if stat.S_ISLNK(st.st_mode):
        raise OSError(errno.ELOOP, "is a symbolic link, not the ledger's own folder")
    if not stat.S_ISDIR(st.st_mode):
        raise OSError(errno.ENOTDIR, "is not a folder")
    if st.st_uid != os.geteuid():
        raise OSError(errno.EPERM, "belongs to another user")
