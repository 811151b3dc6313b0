"""Where a report may be written: never over the ledger, its side files or backups, never over an existing
file unless asked (``--force``), and always whole (temporary file, fsync, one rename or link).

Every ``--out`` goes through ``checked``; ``write_atomic`` writes. The ledger's side files all share its
name as a prefix (``LEDGER.head``, ``.lock``, ``.key``, ``.verified``, ``.confidence-cache.json``,
``.backups/``, ``.damaged-*``), so anything so named beside it is refused, whatever its suffix.
"""
from __future__ import annotations

import os
import tempfile

from ..store.durable import discard
from ..errors import InputError, StoreError


def _real(path: str) -> str:
    return os.path.realpath(os.path.abspath(os.path.expanduser(path)))


def _q(path: str) -> str:
    return repr(path)


def checked(path: str, ledger_path: str | None, *, force: bool = False, option: str = "--out") -> str:
    """The absolute path to write, or InputError saying why it may not be written."""
    target = _real(path)
    folder = os.path.dirname(target)
    if not os.path.isdir(folder):
        raise InputError(f"{option}: folder {_q(folder)} does not exist")
    if os.path.isdir(target):
        raise InputError(f"{option}: {_q(target)} is a folder")
    if ledger_path:
        ledger = _real(ledger_path)
        name = os.path.basename(ledger)
        inside_backups = (target + os.sep).startswith(ledger + ".backups" + os.sep)
        beside = folder == os.path.dirname(ledger) and (
            os.path.basename(target) == name or os.path.basename(target).startswith(name + ".")
            or os.path.basename(target).startswith("." + name + "."))
        if target == ledger or beside or inside_backups:
            raise InputError(f"{option}: {_q(target)} is the ledger, one of its side files or in its backup "
                             "folder; choose another file; nothing was written")
    if os.path.lexists(target) and not force:
        raise InputError(f"{option}: {_q(target)} already exists; add --force to replace it; nothing was written")
    return target


def write_atomic(path: str, text: str, *, force: bool = False) -> str:
    """Write ``text`` whole at ``path`` (checked first); without ``force`` an existing file is never replaced,
    even one that appeared since the check (the new file is linked in, which fails if the name is taken)."""
    folder = os.path.dirname(path)
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=".propledger-out-", dir=folder)
        try:
            view = memoryview(text.encode("utf-8"))
            while view:
                view = view[os.write(fd, view):]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.chmod(tmp, 0o644 & ~_umask())
        if force:
            os.replace(tmp, path)
            tmp = None
        else:
            try:
                os.link(tmp, path)
            except FileExistsError:
                raise InputError(f"--out: {_q(path)} already exists; add --force to replace it") from None
    except OSError as exc:
        raise StoreError(f"{_q(path)}: could not write the report ({exc.strerror or exc})") from None
    finally:
        if tmp is not None:
            discard(tmp)
    try:
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass  # the report is complete; only its name's durability is uncertain
    return path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask
