"""The ``propledger`` command line: parse, call a service, print a table or JSON. Nothing else.

Each module in COMMAND_MODULES adds its sub-commands through ``register``. Any LedgerError becomes one
line on stderr and exit status 2; nothing is written on an error.
"""
from __future__ import annotations

import argparse
import importlib
import os
import sys
import threading

from ..errors import LedgerError

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
"""Before numpy loads: its OpenBLAS otherwise starts a thread per core at import, which spin for about
0.15 s of CPU (measured: `python -c "import numpy"` 0.31 s of CPU against 0.16 s) and on 2 cores take one
from the command and from a database server on the same machine. The matrix products here are small (the
Monte Carlo's chunks are sized to the cache) and the Monte Carlo and the fleet run their own threads and
processes. A value the user set is kept."""

COMMAND_MODULES = ("ledger.cli.entries", "ledger.cli.reading", "ledger.cli.approvals", "ledger.cli.gauging",
                   "ledger.cli.demo", "ledger.cli.handover", "ledger.cli.integrity",
                   "ledger.cli.fleet",
                   "ledger.cli.importing")
EXIT_ERROR = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports a usage error in one line (and exit status 2)."""

    def error(self, message: str):  # noqa: D401
        raise LedgerError(f"{message} (see '{self.prog} --help')")  # main adds the one 'propledger:' prefix


def _one_line(exc: BaseException) -> str:
    """The message on one line, with nothing in it (a path, a value from a file) able to drive the terminal."""
    return "".join(ch if ch.isprintable() else " " if ch in "\n\r\t" else "?" for ch in str(exc))


def build_parser(argv: list[str] | None = None) -> argparse.ArgumentParser:
    """The whole parser; given ``argv``, only the command modules up to the one that registers its command
    (a status imports neither the fleet's process pool nor the backup code: about 70 ms of its start)."""
    parser = _Parser(prog="propledger", description=(
        "Propellant and delta-v ledger for spacecraft operations. Decision support only: verify against the "
        "mission's flight-dynamics system of record, its mission rules and the responsible engineers."))
    parser.add_argument("--ledger", help=LEDGER_HELP)
    sub = parser.add_subparsers(dest="command", parser_class=_Parser, metavar="COMMAND")
    wanted = command_word(argv) if argv is not None else None
    for name in COMMAND_MODULES:
        importlib.import_module(name).register(sub)
        if wanted is not None and wanted in sub.choices:
            break
    for child in sub.choices.values():  # '--ledger X' is accepted after the command too
        if not any("--ledger" in a.option_strings for a in child._actions):
            child.add_argument("--ledger", default=argparse.SUPPRESS, help=LEDGER_HELP)
    return parser


def command_word(argv: list[str]) -> str | None:
    """The command named in ``argv`` (the first word that is not an option or the value of --ledger);
    None when there is none or help is asked before it (then every command is registered)."""
    skip = False
    for tok in argv:
        if skip:
            skip = False
        elif tok == "--ledger":
            skip = True
        elif tok.startswith("--ledger="):
            continue
        elif tok.startswith("-"):
            return None
        else:
            return tok
    return None


LEDGER_HELP = ("ledger file, before or after the command, e.g. '--ledger sat1.ledger.json', or a PostgreSQL "
               "craft, e.g. 'postgresql://alice@db/ledgers?craft=sat1' (else $PROPLEDGER_LEDGER, else the user "
               "data folder)")


def _quiet_stdout() -> None:
    """Point stdout at /dev/null once its reader has gone (like '| head -1'), so the last flush at exit
    cannot fail again and turn a finished command into exit 1."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError):
        pass


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    prefetching = _prefetch(argv)
    try:
        args = build_parser(argv).parse_args(argv)
        if not getattr(args, "func", None):
            from .console import open_console  # noqa: PLC0415 - textual only when the console opens

            return open_console(args)
        return int(args.func(args) or 0)
    except LedgerError as exc:
        print(f"propledger: error: {_one_line(exc)}", file=sys.stderr)
        return EXIT_ERROR
    except KeyboardInterrupt:
        print("propledger: interrupted; nothing further written", file=sys.stderr)
        return 130
    except BrokenPipeError:  # the reader stopped early: what it wanted was written; not an error
        _quiet_stdout()
        return 0
    except Exception as exc:  # noqa: BLE001 - a user never sees a traceback; developers can ask for one
        if os.environ.get("PROPLEDGER_DEBUG"):
            raise
        print(f"propledger: internal error: {type(exc).__name__}: {_one_line(exc)} (PROPLEDGER_DEBUG=1 shows the traceback)",
              file=sys.stderr)
        return EXIT_ERROR
    finally:
        if prefetching:
            from ..store import pgprefetch  # noqa: PLC0415

            pgprefetch.drop()


def _prefetch(argv: list[str]) -> bool:
    """Start the first read of a database ledger for a read-only command (``store.pgprefetch``)."""
    address = os.environ.get("PROPLEDGER_LEDGER")
    for i, tok in enumerate(argv):  # the last --ledger wins, as in the parser
        if tok == "--ledger" and i + 1 < len(argv):
            address = argv[i + 1]
        elif tok.startswith("--ledger="):
            address = tok.split("=", 1)[1]
    if not address or not address.lower().startswith(("postgresql://", "postgres://")):  # seam.is_url
        return False
    from ..store import pgprefetch  # noqa: PLC0415

    if command_word(argv) not in pgprefetch.READ_ONLY:
        return False
    pgprefetch.start(address)
    return True


def run() -> None:
    code = main()
    try:
        sys.stdout.flush()
    except (BrokenPipeError, OSError):
        _quiet_stdout()
    if threading.active_count() == 1:
        _leave(code)
    sys.exit(code)


def _leave(code: int) -> None:
    """Exit without tearing the interpreter down. After a read of a large ledger the heap holds every parsed
    record; the teardown (a last full garbage collection, then freeing each object) took about 0.1 s at
    20k entries, after the answer was already printed. Nothing is left to clean up by then: every write is
    durable and closed and the lock released, so the output is flushed and the process ends. Only when no
    other thread runs (a console's worker finishing a write is always waited for)."""
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (BrokenPipeError, OSError):
        _quiet_stdout()
    os._exit(code)
