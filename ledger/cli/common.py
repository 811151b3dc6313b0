"""Helpers shared by the command modules: options every write takes, quantities, the ledger, output."""
from __future__ import annotations

import json
import os
import sys
from typing import Any

from ..services.ledger import Ledger, resolve_path
from ..services.timefmt import parse_time
from ..units import parse_quantity


def add_write_options(p) -> None:
    p.add_argument("--at", help="when it happened or is planned (ISO 8601; UTC unless an offset is given; default now), e.g. 2026-05-04T13:20Z")
    p.add_argument("--by", help="who records it, e.g. 'R. Okafor' (default: the operating-system user)")
    p.add_argument("--note", help="free text kept with the entry, e.g. 'per flight-dynamics request 42'")
    p.add_argument("--json", action="store_true", help="print the result as JSON, e.g. for a script or jq")


def add_json(p) -> None:
    p.add_argument("--json", action="store_true", help="print the result as JSON, e.g. for a script or jq")


def qty(value: str | None, dimension: str, option: str, *, signed: bool = False) -> float | None:
    return None if value is None else parse_quantity(value, dimension, option, signed=signed)


def when(args) -> float | None:
    return None if getattr(args, "at", None) is None else parse_time(args.at, "--at")


def open_ledger(args) -> Ledger:
    return Ledger(resolve_path(getattr(args, "ledger", None)))


def dump_json(obj: Any) -> None:
    json.dump(obj, sys.stdout, indent=2, allow_nan=False, default=str)
    sys.stdout.write("\n")


FILE_WIDTH = 160
"""Columns for tables written to a file or a pipe (rich would take 80 and cut the log's columns); a
terminal keeps its own width, and COLUMNS, when set, wins over both."""


def console(stderr: bool = False):
    from rich.console import Console  # noqa: PLC0415

    out = Console(stderr=stderr, highlight=False, soft_wrap=False, emoji=False)
    out.on_broken_pipe = _broken_pipe  # rich would exit 1; cli.main turns this into exit 0
    if not out.is_terminal and "COLUMNS" not in os.environ:
        out.width = FILE_WIDTH
    return out


def _broken_pipe() -> None:
    """The reader of stdout has gone (e.g. '| head -3'): stop writing and let cli.main end with the
    command's own status instead of rich's SystemExit(1)."""
    raise BrokenPipeError


def plain(text: Any) -> str:
    """Text with control characters (escape sequences, carriage returns, bells) shown as '?', so nothing read
    from a file or typed can drive the terminal; newlines and tabs stay."""
    s = str(text if text is not None else "")
    if s.isprintable():
        return s
    return "".join(ch if ch.isprintable() or ch in "\n\t" else "?" for ch in s)


def esc(text: Any) -> str:
    """User or file text made inert for the terminal: no control characters and no rich markup."""
    from rich.markup import escape  # noqa: PLC0415

    return escape(plain(text))


def warn(lines: list[str]) -> None:
    if lines:
        err = console(stderr=True)
        for line in lines:
            err.print(f"[bold dark_orange]warning:[/] {esc(line)}")
