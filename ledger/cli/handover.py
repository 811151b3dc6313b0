"""``propledger handover``: the shift handover report; by default also records it and writes a backup.

The report goes to standard output (or --out); what was recorded and any warning go to standard error,
so the report can be piped or redirected whole. Bad options fail before anything is written.
"""
from __future__ import annotations

import json
import sys

from ..errors import InputError, StoreError
from ..services import handover
from .common import open_ledger, plain, warn
from .helptext import about

FORMATS = ("text", "md", "html", "json")
EXIT_BACKUP_FAILED = 1


def register(sub) -> None:
    p = sub.add_parser("handover", **about("shift handover report (records a handover entry and a backup)"))
    p.add_argument("--from", dest="from_name", required=True, metavar="NAME", help="outgoing engineer, e.g. 'J. Moreau'")
    p.add_argument("--to", dest="to_name", required=True, metavar="NAME", help="incoming engineer, e.g. 'K. Tanaka'")
    p.add_argument("--since", metavar="TIME|last",
                   help="window start: ISO 8601 time, e.g. 2026-05-04T06:00Z, or 'last' for the previous handover "
                        "(the default)")
    p.add_argument("--format", choices=FORMATS, default="text", help="text (80 columns), md, html or json, e.g. md")
    p.add_argument("--out", metavar="FILE", help="write the report to FILE, e.g. shift-0504.md (default: standard output)")
    p.add_argument("--force", action="store_true", help="replace the --out file if it exists, e.g. to re-issue a report")
    p.add_argument("--no-record", action="store_true",
                   help="preview only: append no handover entry and write no backup, e.g. before the shift ends")
    p.add_argument("--note", help="free text kept with the handover entry, e.g. 'quiet shift'")
    p.add_argument("--fleet", metavar="DIR|URL",
                   help="one report over every ledger in DIR (or every craft of a postgresql:// database), each "
                        "since its own last handover (and recorded in each unless --no-record), e.g. --fleet "
                        "/ops/ledgers")
    p.set_defaults(func=cmd_handover)


def _out_path(path: str | None, ledger_path: str, force: bool = False) -> str | None:
    from ..services.outpaths import checked  # noqa: PLC0415

    return None if path is None else checked(path, ledger_path, force=force)


def render(report: dict, fmt: str) -> str:
    if fmt == "json":
        return json.dumps(report, indent=2, allow_nan=False, default=str) + "\n"
    from ..reports import render as render_report  # noqa: PLC0415 - reports only when asked for

    return render_report(report, fmt)


def emit(text: str, out: str | None, force: bool, failed: str) -> None:
    """A rendered report to stdout, or atomically to ``out`` (services.outpaths); a failed write is one
    error line that starts with ``failed``."""
    if out is None:
        sys.stdout.write(text)
        sys.stdout.flush()
        return
    from ..services.outpaths import write_atomic  # noqa: PLC0415

    try:
        write_atomic(out, text, force=force)
    except (OSError, InputError, StoreError) as exc:
        raise StoreError(f"{failed}: {exc}") from None


def cmd_handover(args) -> int:
    if getattr(args, "fleet", None):
        from .fleet_handover import cmd_fleet_handover  # noqa: PLC0415

        return cmd_fleet_handover(args)
    led = open_ledger(args)
    out = _out_path(args.out, led.path, args.force)  # refused before anything (even a cache) is written
    report = handover.assemble(led, from_name=args.from_name, to_name=args.to_name, since=args.since)
    if not args.no_record:
        handover.record(led, report, note=args.note)
    text = render(report, args.format)
    rec = report["record"]
    done = f"handover recorded as entry {rec['entry']}, but " if rec.get("recorded") else ""
    emit(text, out, args.force, f"{done}writing the report failed")
    if rec.get("recorded"):  # plain print: a path must stay whole on one line
        print(f"recorded handover entry {rec['entry']}; backup: {plain(handover.backup_text(rec, led.path))}", file=sys.stderr)
    if out is not None:
        print(f"wrote {plain(out)}", file=sys.stderr)
    warn(report["warnings"])
    return EXIT_BACKUP_FAILED if rec.get("backup_failed") else 0
