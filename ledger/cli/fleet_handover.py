"""``propledger handover --fleet DIR|URL``: one handover report over every craft of a folder of ledgers or of
a PostgreSQL database."""
from __future__ import annotations

import json
import os
import sys

from ..errors import InputError
from ..services import fleet, fleet_handover
from .common import plain, warn


def _out_path(path: str | None, source, force: bool) -> str | None:
    """--out checked against every ledger of the fleet (never a ledger, a side file or into the folder)."""
    if path is None:
        return None
    from ..services.outpaths import checked  # noqa: PLC0415

    target = checked(path, None, force=force)
    if source.kind != "folder":  # database craft: no file to clash with
        return target
    if os.path.dirname(target) == os.path.realpath(source.folder):
        raise InputError(f"--out: {target!r} is in the fleet folder (it would be read as a ledger or clash with "
                         "a side file); choose a file outside it; nothing was written")
    for member in source.members():
        checked(path, member, force=force)
    return target


def cmd_fleet_handover(args) -> int:
    from ..services.fleetsource import open_source  # noqa: PLC0415

    source = open_source(args.fleet)
    out = _out_path(args.out, source, args.force)
    report = fleet_handover.assemble(source, from_name=args.from_name, to_name=args.to_name)
    if not args.no_record:
        fleet_handover.record(report, note=args.note, source=source)
    if args.format == "json":
        text = json.dumps(report, indent=2, allow_nan=False, default=str) + "\n"
    else:
        from ..reports.fleet import render  # noqa: PLC0415 - reports only when asked for

        text = render(report, args.format)
    from .handover import emit  # noqa: PLC0415 - handover imports this module lazily

    emit(text, out, args.force, "writing the fleet report failed")
    if out is not None:
        print(f"wrote {plain(out)}", file=sys.stderr)
    recorded = [p for p in report["craft"] if p["report"] and (p["report"].get("record") or {}).get("recorded")]
    if not args.no_record:
        print(f"recorded a handover entry in {len(recorded)} of {len(report['craft'])} ledgers", file=sys.stderr)
    warn(report["warnings"])
    return 1 if any((p["report"] or {}).get("record", {}).get("backup_failed") for p in report["craft"]) else 0
