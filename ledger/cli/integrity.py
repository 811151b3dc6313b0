"""Integrity commands: backup and restore; and the work behind verify (registered with the read commands)."""
from __future__ import annotations

import os
import sys

from ..services.ledger import resolve_path
from ..store import backup as backups
from ..store.seam import is_url
from .common import add_json, console, dump_json, esc, open_ledger, plain, warn
from .helptext import about


def register(sub) -> None:
    p = sub.add_parser("backup", **about("write a checked, timestamped copy of the ledger beside it and record its head"))
    p.add_argument("--keep", help=f"how many backups to keep, e.g. 30 (else ${backups.KEEP_ENV}, else {backups.DEFAULT_KEEP})")
    p.add_argument("--list", dest="list_only", action="store_true", help="list the backups, newest first, e.g. to pick one to restore")
    add_json(p)
    p.set_defaults(func=cmd_backup)

    p = sub.add_parser("restore", **about("put back the newest good backup (the file it replaces is kept aside)"))
    p.add_argument("--from", dest="source", metavar="FILE", help="the backup to restore, e.g. a path the backup listing shows (default: the newest good one)")
    p.add_argument("--force", action="store_true",
                   help="restore even over an intact ledger, or a backup of a different ledger, e.g. to roll back a mistake")
    add_json(p)
    p.set_defaults(func=cmd_restore)

    p = sub.add_parser("copy", **about("copy a whole ledger to a new place: file to database or back, same head hash"))
    p.add_argument("source", metavar="SOURCE", help="the ledger to copy, e.g. sat1.ledger.json")
    p.add_argument("target", metavar="TARGET", help="where the copy goes (must not exist yet), e.g. "
                   "'postgresql://ops@db.example/ledgers?craft=sat1'")
    add_json(p)
    p.set_defaults(func=cmd_copy)


def cmd_verify(args) -> int:
    led = open_ledger(args)
    brk = led.file.verify()  # unreadable, damaged or short of its recorded head: a clear error (exit 2)
    seq, head = led.file.head()
    heads = led.file.recorded_heads()
    if args.json:
        dump_json({"intact": brk is None, "entries": seq, "head": head,
                   "break": None if brk is None else {"seq": brk.seq, "problem": brk.problem},
                   "recorded_heads": [{"file": h.source, "seq": h.seq, "recorded": h.recorded} for h in heads]})
    elif brk is None:
        out = console()
        out.print(f"chain intact: {seq} entries, head {head[:16]}")
        newest = max(heads, key=lambda h: h.seq, default=None)
        if newest is None and is_url(led.path):
            out.print("the database refuses edits of recorded entries; record the head at each handover")
        elif newest is None:
            out.print("no chain head recorded outside the ledger yet (run 'propledger backup')")
        else:
            out.print(f"contains the head recorded {esc(newest.recorded)}: entry {newest.seq}")
    else:
        print(f"propledger: {plain(brk)}", file=sys.stderr)
    return 0 if brk is None else 1


def _file_only(args, command: str) -> str:
    """The ledger file's path; a database ledger is backed up by its server (e.g. pg_dump), not here."""
    path = resolve_path(args.ledger)
    if is_url(path):
        from ..errors import InputError  # noqa: PLC0415

        raise InputError(f"{command}: a database ledger is backed up and restored by its server (e.g. pg_dump), "
                         "or copied to a file with 'propledger copy'; nothing was changed")
    return os.path.abspath(path)


def cmd_copy(args) -> int:
    """Read SOURCE, check its chain, write TARGET with the same records and links, and read it back."""
    from ..store.seam import adopt_store, open_store  # noqa: PLC0415

    src = open_store(args.source)
    meta, records = src.read()
    brk = src.verify()
    if brk is not None:
        from ..errors import StoreError  # noqa: PLC0415

        raise StoreError(f"{src.path}: {brk}; not copying a ledger whose chain does not verify; nothing was written")
    dst = adopt_store(args.target, meta, records)
    if dst.verify() is not None or dst.head() != src.head():
        from ..errors import StoreError  # noqa: PLC0415

        raise StoreError(f"{dst.path}: the copy does not read back as the source (head {dst.head()[1][:16]}); "
                         "remove it before trying again")
    seq, head = dst.head()
    if args.json:
        dump_json({"source": src.path, "target": dst.path, "entries": seq, "head": head})
    else:
        console().print(f"copied {seq} entries from {esc(src.path)} to {esc(dst.path)}; head {head[:16]} on both")
    return 0


def cmd_backup(args) -> int:
    path = _file_only(args, "backup")
    if args.list_only:
        return _list(path, args.json)
    keep = backups.keep_count(args.keep)
    dest = backups.make_backup(path, keep=keep)
    info = backups.inspect_backup(dest)
    if args.json:
        dump_json({"backup": dest, "entries": info.seq, "head": info.head, "keep": keep})
    else:
        console().print(f"backup written: {esc(dest)} (entries up to {info.seq}, head {info.head[:16]}); "
                        f"keeping the newest {keep}")
    return 0


def _list(path: str, as_json: bool) -> int:
    rows = []
    for f in backups.list_backups(path):
        try:
            info = backups.inspect_backup(f)
            rows.append({"backup": f, "good": True, "entries": info.seq, "problem": None})
        except Exception as exc:  # noqa: BLE001 - a listing reports every file, good or not
            rows.append({"backup": f, "good": False, "entries": None, "problem": str(exc)})
    if as_json:
        dump_json(rows)
        return 0
    out = console()
    if not rows:
        out.print(f"no backups in {esc(backups.backup_folder(path))}")
    for r in rows:
        state = f"good, entries up to {r['entries']}" if r["good"] else f"[red]not usable[/]: {esc(r['problem'])}"
        out.print(f"{esc(r['backup'])}  {state}")
    return 0


def cmd_restore(args) -> int:
    path = _file_only(args, "restore")
    done = backups.restore(path, args.source, force=args.force)
    lost = done.recorded_seq is not None and done.recorded_seq > done.seq
    notes = []
    if done.aside and ".damaged-" in done.aside:
        notes.append(f"entries logged after that backup are not in the restored ledger; look for them in "
                     f"{done.aside} and re-enter them (with --at)")
    if lost:
        notes.append(f"the recorded head was entry {done.recorded_seq}: entries {done.seq + 1} to "
                     f"{done.recorded_seq} are not in the restored ledger, only in {done.aside or 'no file'}")
    if args.json:
        dump_json({"ledger": path, "restored_from": done.source, "entries": done.seq, "kept_aside": done.aside,
                   "recorded_head": done.recorded_seq, "warnings": notes})
        return 0
    out = console()
    out.print(f"restored {esc(path)} from {esc(done.source)} (entries up to {done.seq})")
    if done.aside:
        out.print(f"the file it replaced is kept at {esc(done.aside)}")
    warn(notes)
    return 0
