"""Every sub-command's help is complete and honest (issue 11, point 9): a one-line description, a help text
with an example for every option, and no mention of an option the command does not have. The shape of a
good option help (what it is, then 'e.g.' and a value) is common practice for command-line tools."""
from __future__ import annotations

import argparse
import re

import pytest

from ledger.cli import build_parser
from tests.cli.conftest import run

OPTION = re.compile(r"(?<![\w-])--[a-z][a-z0-9-]*")
# Options whose help lives in ledger/cli/common.py (another branch owns it): their examples are
# suggested in the units branch's report; strict, so this list must shrink once they land.


def commands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return {"": parser, **sub.choices}


def summaries() -> dict[str, str]:
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return {a.dest: a.help or "" for a in sub._choices_actions}


def options() -> list[tuple[str, argparse.Action]]:
    return [(name, a) for name, p in commands().items() for a in p._actions
            if a.option_strings and not isinstance(a, argparse._HelpAction)]


def ids(pairs):
    return [f"{name or 'propledger'} {a.option_strings[-1]}" for name, a in pairs]


def test_every_command_has_a_one_line_description():
    shown = summaries()
    for name, p in commands().items():
        if not name:
            continue
        assert shown.get(name, "").strip() and "\n" not in shown[name], f"{name}: no one-line summary"
        assert (p.description or "").strip() and "\n" not in p.description.strip(), f"{name}: no description"


OPTS = options()


@pytest.mark.parametrize("name,action", OPTS, ids=ids(OPTS))
def test_every_option_has_help_with_an_example(name, action):
    text = action.help or ""
    assert text.strip() and text != argparse.SUPPRESS, "no help text"
    assert "e.g." in text, f"no example in {text!r}"


def test_no_help_mentions_an_option_the_command_lacks():
    shown = summaries()
    for name, p in commands().items():
        have = {s for a in p._actions for s in a.option_strings}
        texts = [p.description or "", shown.get(name, "")] + [a.help or "" for a in p._actions]
        for text in texts:
            for opt in OPTION.findall(text):
                assert opt in have, f"{name or 'propledger'}: help mentions {opt}, which it does not take: {text!r}"


def test_help_prints_the_description_through_the_entry_point():
    for name in ("burn", "gauge", "status"):
        proc = run(name, "--help", check=True)
        assert commands()[name].description.split(".")[0] in " ".join(proc.stdout.split())
