"""Backups beside the ledger, and restoring one.

``make_backup`` copies the ledger's exact bytes into ``PATH.backups/backup-<UTC time>.json`` (0600, in a
0700 folder) after checking it: only a readable ledger whose chain verifies is backed up, so a damaged
file can never push good backups out of the kept set. It records the chain head (see ``head``) and keeps
the newest N backups. ``restore`` puts the newest good backup (or a given file) back, first moving the
file at the ledger path aside: nothing is ever deleted. The shift handover calls ``make_backup``.
"""
from __future__ import annotations

import os
import re
import shlex
from dataclasses import dataclass
from datetime import datetime, timezone

from ..errors import InputError, StoreError
from . import durable
from .chain import verify_chain
from .head import backup_folder, head_paths, read_heads, write_heads
from .ledgerfile import META, LedgerFile, check_layout, head_of, ordered, utc_stamp

DEFAULT_KEEP = 10
KEEP_ENV = "PROPLEDGER_KEEP_BACKUPS"
_NAME = re.compile(r"^backup-(\d{8}T\d{6}\.\d{6}Z)(?:-(\d+))?\.json$")


@dataclass(frozen=True)
class BackupInfo:
    """A backup file that reads as a ledger and whose chain verifies."""

    path: str
    seq: int
    head: str
    genesis: str
    schema: int


@dataclass(frozen=True)
class Restored:
    source: str
    aside: str | None
    seq: int
    recorded_seq: int | None
    """The highest head recorded before the restore (entries after ``seq`` are only in ``aside``)."""


def keep_count(keep: int | None = None) -> int:
    """How many backups to keep: the argument, else $PROPLEDGER_KEEP_BACKUPS, else 10."""
    where = "--keep"
    if keep is None:
        env = os.environ.get(KEEP_ENV)
        if env is None or env.strip() == "":
            return DEFAULT_KEEP
        where, keep = KEEP_ENV, env.strip()
    try:
        n = int(keep)
    except (TypeError, ValueError):
        raise InputError(f"{where}: expected a whole number of backups to keep (1 or more), got {keep!r}") from None
    if isinstance(keep, bool) or n < 1:
        raise InputError(f"{where}: expected a whole number of backups to keep (1 or more), got {keep!r}")
    return n


def list_backups(ledger_path: str) -> list[str]:
    """Backup files of this ledger, newest first (by the time in their names)."""
    folder = backup_folder(ledger_path)
    try:
        names = os.listdir(folder)
    except (FileNotFoundError, NotADirectoryError):
        return []
    except OSError as exc:
        raise StoreError(f"{folder}: cannot list the backups ({exc.strerror or exc})") from None
    found = [(m.group(1), int(m.group(2) or 0), n) for n in names if (m := _NAME.match(n))]
    return [os.path.join(folder, n) for _, _, n in sorted(found, reverse=True)]


def inspect_backup(path: str) -> BackupInfo:
    """Read and check one backup file; StoreError saying why it is not a good backup."""
    doc = durable.decode(durable.read_bytes(path), path)
    check_layout(doc, path)
    meta = doc[META]["1"]
    brk = verify_chain(meta, ordered(doc))
    if brk is not None:
        raise StoreError(f"{path}: {brk}")
    seq, h = head_of(doc)
    return BackupInfo(path, seq, h, meta["hash"], meta["schema"])


def newest_good(ledger_path: str) -> BackupInfo | None:
    for path in list_backups(ledger_path):
        try:
            return inspect_backup(path)
        except StoreError:
            continue
    return None


def restore_command(ledger_path: str) -> str:
    return f"propledger --ledger {shlex.quote(os.path.abspath(ledger_path))} restore"


def recovery_hint(ledger_path: str) -> str:
    """The sentence every damaged-ledger error ends with: what to restore and how."""
    try:
        info = newest_good(ledger_path)
    except StoreError:
        info = None
    if info is None:
        return (f"Nothing was overwritten. No good backup found in {backup_folder(ledger_path)}; keep the file "
                "for investigation")
    return (f"Nothing was overwritten. Newest good backup: {info.path} (entries up to {info.seq}); restore it with "
            f"'{restore_command(ledger_path)}' (the damaged file is kept aside)")


def _unique(folder: str, stem: str, ext: str) -> str:
    n = 0
    while True:
        name = os.path.join(folder, f"{stem}{'' if n == 0 else f'-{n}'}{ext}")
        if not os.path.lexists(name):
            return name
        n += 1


def make_backup(ledger_path: str, *, keep: int | None = None) -> str:
    """Copy the ledger (checked, chain verified) to a new timestamped backup, record the chain head beside
    the ledger and in the backup folder, keep the newest ``keep`` backups; returns the backup's path."""
    n = keep_count(keep)
    lf = LedgerFile(ledger_path)
    path = lf.path
    with lf.locked():
        lf.document(migrate=False)  # readable, a ledger, consistent with its recorded head (or a clear error)
        raw = durable.read_bytes(path)
        doc = durable.decode(raw, path)
        lf.check(doc)
        meta = doc[META]["1"]
        brk = verify_chain(meta, ordered(doc))
        if brk is not None:
            raise StoreError(f"{path}: not backing it up: {brk}; the existing backups are kept. "
                             f"{lf.hint()}")
        folder = backup_folder(path)
        try:
            from .sidefiles import private_folder  # noqa: PLC0415

            private_folder(folder)
        except OSError as exc:
            raise StoreError(f"{folder}: cannot create the backup folder ({exc.strerror or exc})") from None
        durable.clean_temporaries(folder, whole_folder=True)
        now = datetime.now(timezone.utc)
        dest = _unique(folder, "backup-" + now.strftime("%Y%m%dT%H%M%S.%fZ"), ".json")
        durable.write_bytes(dest, raw, exclusive=True)
        seq, h = head_of(doc)
        try:
            write_heads(path, seq, h, meta["hash"], now.strftime("%Y-%m-%dT%H:%M:%S.%fZ"))
        except BaseException:
            os.unlink(dest)  # not acknowledged: no new backup either
            raise
        for old in list_backups(path)[n:]:
            try:
                os.unlink(old)
            except OSError:
                pass  # an old backup kept beyond the count does no harm
    return dest


def _current(lf: LedgerFile) -> tuple[bool, str | None]:
    """(intact, problem): is the file at the ledger path readable with a verifying chain and head?"""
    try:
        doc = lf.document(migrate=False)
        brk = verify_chain(doc[META]["1"], ordered(doc))
    except StoreError as exc:
        return False, str(exc)
    return brk is None, None if brk is None else str(brk)


def _newer_schema(path: str) -> int | None:
    """The schema of a ledger written by a newer program (None when it is ours, older, or unreadable)."""
    from .ledgerfile import SCHEMA  # noqa: PLC0415

    try:
        meta = durable.read_document(path).get(META, {}).get("1", {})
    except (StoreError, AttributeError):
        return None
    schema = meta.get("schema") if isinstance(meta, dict) else None
    return schema if isinstance(schema, int) and not isinstance(schema, bool) and schema > SCHEMA else None


def restore(ledger_path: str, source: str | None = None, *, force: bool = False) -> Restored:
    """Put a good backup back at the ledger path; whatever was there is renamed aside, never deleted.

    Refuses (without ``force``) when the current ledger is intact, or when ``source`` belongs to another
    ledger than the recorded head describes."""
    lf = LedgerFile(ledger_path)
    path = lf.path
    with lf.locked():
        newer = _newer_schema(path)
        if newer is not None and not force:
            raise InputError(f"{path!r}: written by a newer propledger (schema {newer}); it is not damaged, this "
                             "program cannot read it; upgrade instead, or add --force to replace it with a backup "
                             "(it is kept aside)")
        intact, _problem = _current(lf)
        if intact and not force:
            raise InputError(f"{path}: the ledger is intact (it reads and its chain verifies); restoring would "
                             "replace it with an older copy; add --force to do so anyway (it is kept aside)")
        try:
            heads = read_heads(path)
        except StoreError:
            heads = []
        if source is not None:
            try:
                info = inspect_backup(os.path.abspath(source))
            except StoreError as exc:
                raise StoreError(f"--from: not a good backup: {exc}; nothing was changed") from None
            if heads and info.genesis != heads[0].genesis and not force:
                raise InputError(f"--from: {source} is a backup of a different ledger (its craft definition link "
                                 "differs from the recorded head); add --force to restore it anyway")
        else:
            info = newest_good(path)
            if info is None:
                raise StoreError(f"{path}: no good backup in {backup_folder(path)}; nothing was changed")
        raw = durable.read_bytes(info.path)
        saved = {p: (durable.read_bytes(p) if os.path.isfile(p) else None) for p in head_paths(path)}
        aside = None
        if os.path.lexists(path):
            # The old file keeps its name until the one rename below; a hard link keeps it aside as well.
            aside = _unique(os.path.dirname(path), f"{path}.{'replaced' if intact else 'damaged'}-"
                            + datetime.now(timezone.utc).strftime("%Y%m%dT%H%M%SZ"), "")
            try:
                if os.path.isfile(path) and not os.path.islink(path):
                    durable.link(path, aside)
                else:  # a folder or other non-file at the ledger path: it can only be moved
                    os.rename(path, aside)
                durable.fsync_dir(os.path.dirname(path))
            except OSError as exc:
                try:
                    if os.path.lexists(aside) and os.path.lexists(path):
                        os.unlink(aside)
                    elif os.path.lexists(aside):
                        os.rename(aside, path)
                except OSError:
                    pass
                raise StoreError(f"{path!r}: cannot keep it aside ({exc.strerror or exc}); nothing was changed") from None
        old = max(heads, key=lambda h: h.seq) if heads else None
        moved = aside is not None and not os.path.lexists(path)
        # 1. heads accept the old ledger and the restored one; 2. one rename puts the backup in place;
        # 3. heads name the restored ledger only. A crash anywhere leaves the old state or the new one.
        try:
            write_heads(path, info.seq, info.head, info.genesis, utc_stamp(), alt=old)
            durable.write_bytes(path, raw)
        except BaseException:  # not restored: put the head records and the file's name back as they were
            try:
                for p, data in saved.items():
                    if data is None:
                        if os.path.lexists(p):
                            os.unlink(p)
                    else:
                        durable.write_bytes(p, data)
                if aside is not None:
                    os.rename(aside, path) if moved else os.unlink(aside)
            except OSError:
                pass  # the first error is the one to report; the old state still reads as it did
            raise
        write_heads(path, info.seq, info.head, info.genesis, utc_stamp())
    recorded = max((h.seq for h in heads), default=None)
    return Restored(info.path, aside, info.seq, recorded)
