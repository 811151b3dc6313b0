"""Helpers for the store tests: a small craft file and ledgers built through the services layer.

The craft is an arbitrary test input (a two-tank bipropellant craft with one engine); no expected result
is hard-coded from it: replay results are checked against the rocket equation.
"""
from __future__ import annotations

import contextlib
import io
import os

from ledger.cli import main

CRAFT_YAML = """\
craft:
  name: Test craft
  dry_mass: 1200 kg
tanks:
  - {id: ox, fluid: MON-3, load: 800 kg, residual: 8 kg}
  - {id: fuel, fluid: MMH, load: 500 kg, residual: 5 kg}
engines:
  - {id: lae, isp: 321 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
reserves:
  - {id: disposal, engine: lae, dv: 10 m/s}
"""


def run(*argv: str) -> tuple[int, str, str]:
    """The command line in-process: (exit code, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def snapshot_bytes(*paths: str) -> dict[str, bytes | None]:
    """Every file under the given paths (files or folders) and its bytes, to show nothing was written."""
    found: dict[str, bytes | None] = {}
    for p in paths:
        if os.path.isdir(p):
            for name in sorted(os.listdir(p)):
                found.update(snapshot_bytes(os.path.join(p, name)))
        elif os.path.lexists(p):
            with open(p, "rb") as fh:
                found[p] = fh.read()
    return found


def folder_state(folder: str) -> dict[str, bytes | None]:
    """Bytes of every file in the ledger's folder except the (empty) lock file."""
    return {k: v for k, v in snapshot_bytes(folder).items() if not k.endswith(".lock")}
