"""Integrity commands: backup and restore; and the work behind verify (registered with the read commands)."""
from __future__ import annotations

import os
import sys

from ..services.ledger import resolve_path
from ..store import backup as backups
from ..store.chain import verify_chain
from ..store.head import read_heads
from ..store.ledgerfile import META, head_of, ordered
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


def cmd_verify(args) -> int:
    led = open_ledger(args)
    doc = led.file.document()  # unreadable, damaged or short of its recorded head: a clear error (exit 2)
    brk = verify_chain(doc[META]["1"], ordered(doc))
    seq, head = head_of(doc)
    heads = read_heads(led.path)
    if args.json:
        dump_json({"intact": brk is None, "entries": seq, "head": head,
                   "break": None if brk is None else {"seq": brk.seq, "problem": brk.problem},
                   "recorded_heads": [{"file": h.source, "seq": h.seq, "recorded": h.recorded} for h in heads]})
    elif brk is None:
        out = console()
        out.print(f"chain intact: {seq} entries, head {head[:16]}")
        newest = max(heads, key=lambda h: h.seq, default=None)
        if newest is None:
            out.print("no chain head recorded outside the ledger yet (run 'propledger backup')")
        else:
            out.print(f"contains the head recorded {esc(newest.recorded)}: entry {newest.seq}")
    else:
        print(f"propledger: {plain(brk)}", file=sys.stderr)
    return 0 if brk is None else 1


def cmd_backup(args) -> int:
    path = os.path.abspath(resolve_path(args.ledger))
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
    path = os.path.abspath(resolve_path(args.ledger))
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
