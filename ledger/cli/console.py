"""``propledger`` with no command: the full-screen console (until it exists, the status and log)."""
from __future__ import annotations

import sys


def open_console(args) -> int:
    try:
        from ..tui.app import run_console  # noqa: PLC0415
    except ImportError:
        from .reading import cmd_log, cmd_status  # noqa: PLC0415

        print("The full-screen console is not built yet; showing the status and log instead.", file=sys.stderr)
        args.json, args.last = False, 25
        cmd_status(args)
        return cmd_log(args)
    return run_console(args)
