"""Helpers for the fault tests: a test ledger, child processes running ``writer.py``, file snapshots.

The craft is an arbitrary test input; these tests check the store's guarantees, not propellant figures.
"""
from __future__ import annotations

import contextlib
import io
import os
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
WRITER = os.path.join(os.path.dirname(os.path.abspath(__file__)), "writer.py")

CRAFT_YAML = """\
craft:
  name: Fault test craft
  dry_mass: 1200 kg
tanks:
  - {id: ox, fluid: MON-3, load: 800 kg, residual: 8 kg}
  - {id: fuel, fluid: MMH, load: 500 kg, residual: 5 kg}
engines:
  - {id: lae, isp: 321 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
  - {id: rcs, isp: 290 s, thrust: 22 N, feeds: {ox: 1.65, fuel: 1}}
reserves:
  - {id: disposal, engine: lae, dv: 10 m/s}
"""


def make_ledger(folder: str, entries: int = 3) -> str:
    from ledger.services.craftfile import craft_from_document  # noqa: PLC0415
    from ledger.services.ledger import Ledger, create  # noqa: PLC0415
    import yaml  # noqa: PLC0415

    path = os.path.join(folder, "ops.ledger.json")
    create(path, craft_from_document(yaml.safe_load(CRAFT_YAML), "craft"), by="tester")
    led = Ledger(path)
    for k in range(entries):
        led.record("burn", {"engine": "lae", "dv": 1.0 + k}, at=1.7e9 + 3600 * k, by="tester")
    return path


def child_env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = ROOT + os.pathsep + env.get("PYTHONPATH", "")
    env.pop("PROPLEDGER_DEBUG", None)
    return env


def spawn(*args: str, stdin: bool = False) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, WRITER, *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            stdin=subprocess.PIPE if stdin else subprocess.DEVNULL, env=child_env(), text=True)


def acks(output: str) -> dict[int, str]:
    """seq -> hash of every entry a writer acknowledged (complete lines only)."""
    found: dict[int, str] = {}
    for line in output.split("\n")[:-1]:  # the last piece is empty or a line cut short by the kill
        if line.startswith("ack "):
            for item in line[4:].split():
                seq, h = item.split(":")
                found[int(seq)] = h
    return found


def run(*argv: str) -> tuple[int, str, str]:
    from ledger.cli import main  # noqa: PLC0415

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def folder_state(folder: str) -> dict[str, bytes]:
    """Bytes of every file under ``folder`` (recursively) except the empty lock files."""
    state: dict[str, bytes] = {}
    for base, dirs, files in os.walk(folder):
        dirs.sort()
        state[base + "/"] = b"<dir>"
        for name in sorted(files):
            if not name.endswith(".lock"):
                with open(os.path.join(base, name), "rb") as fh:
                    state[os.path.join(base, name)] = fh.read()
    return state
