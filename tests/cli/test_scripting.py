"""The command line as a scripting interface (issue 11 points 7 and 8), through real subprocesses and
real shell pipes: a reader that stops early ('| head') is no error, and '--ledger' works on either side
of the command with one 'propledger:' prefix on errors. Expected behaviour: POSIX shell pipelines
(IEEE Std 1003.1, 'Pipelines': the pipeline's status is the last command's; bash PIPESTATUS gives each),
common practice for command-line tools."""
from __future__ import annotations

import os
import subprocess
import sys

import pytest

from tests.cli.conftest import ROOT, run


def _piped(ledger: str, command: str, lines: int) -> int:
    """Exit status of propledger (not of head) in 'propledger ... | head -N', through bash."""
    env = dict(os.environ, PYTHONPATH=ROOT)
    script = (f'"{sys.executable}" -m ledger --ledger "{ledger}" {command} | head -{lines} >/dev/null; '
              'echo "${PIPESTATUS[0]}"')
    out = subprocess.run(["bash", "-c", script], capture_output=True, text=True, env=env, cwd=ROOT, timeout=120)
    return int(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("command,lines", [("verify", 1), ("status --samples 200", 3)])
def test_exit_status_survives_head(ledger, command, lines):
    run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1.5 m/s", check=True)
    codes = [_piped(ledger, command, lines) for _ in range(8)]
    assert codes == [0] * 8


@pytest.mark.parametrize("argv", [["verify"], ["log"], ["status", "--samples", "100"],
                                  ["check", "--engine", "lae", "--dv", "1 m/s", "--samples", "100"]])
def test_ledger_option_after_the_command(ledger, argv):
    before = run("--ledger", ledger, *argv)
    after = run(*argv, "--ledger", ledger)
    assert after.returncode == before.returncode and after.returncode in (0, 3), after.stderr
    assert after.stdout.split("\n")[0] == before.stdout.split("\n")[0]


def test_every_subcommand_takes_ledger_after_it():
    from ledger.cli import build_parser

    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command")
    for name, child in sub.choices.items():
        assert any("--ledger" in a.option_strings for a in child._actions), name


def test_error_has_one_prefix(ledger):
    proc = run("--ledger", ledger, "verify", "--no-such-option")
    assert proc.returncode == 2
    assert proc.stderr.count("propledger:") == 1, proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1
