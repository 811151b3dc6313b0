"""Fuzzing every input form (hypothesis): the craft file, every option of the ledger's commands, and
quantities with units. Never a traceback or an 'internal error', an exit status of 0, 1 or 2 only, and on a
rejection (exit 2) not one byte changed on disk. fsync is a no-op here: these tests are about validation,
and the durability of writes is tested in test_kill9 and test_disk_full."""
from __future__ import annotations

import argparse
import contextlib
import math
import os
import shutil
import tempfile

import pytest
import yaml
from faultkit import CRAFT_YAML, folder_state, make_ledger, run
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ledger.cli import build_parser
from ledger.errors import InputError
from ledger.services.ledger import Ledger
from ledger.store import backup, durable
from ledger.units import DIMENSIONS, parse_quantity

FUZZED = ("burn", "plan", "mass", "use", "withdraw", "correct", "status", "check", "log", "verify", "backup",
          "restore")
SETTINGS = dict(deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow,
                                                                       HealthCheck.function_scoped_fixture])

UNITS = ["", "m/s", "km/s", "ft/s", "m s^-1", "meter / second", "kg", "g", "lb", "t", "s", "ms", "min", "h", "day",
         "N", "kN", "lbf", "deg", "rad", "degree", "bar", "Pa", "psi", "K", "degC", "°C", "degF", "m^3", "L",
         "furlong", "m/s^2", "%", "1/0", "**", "(", "kg*m/s", "m/s/s", "nan", "inf", "e", "ℓ", "m/s m/s", "kg kg",
         "__class__", "m; import os", "{}", "[m]"]
PLAIN = st.one_of(st.floats(0.001, 50.0).map(lambda x: f"{x:.3f}"), st.integers(1, 20).map(str))
NUMBERS = st.one_of(PLAIN, PLAIN, st.floats(allow_nan=True, allow_infinity=True).map(repr), st.integers(-10**400, 10**400).map(str),
                    st.sampled_from(["1", "-1", "0", "1.5", ".5", "5.", "1e3", "1e309", "-0", "+2", "١٢", "1_000",
                                     "0x10", "nan", "inf", "-inf", "1e-320", "1,5"]))
QUANTITY = st.builds(lambda n, sep, u: f"{n}{sep}{u}", NUMBERS, st.sampled_from(["", " ", "  ", "\t"]),
                     st.sampled_from(UNITS) | st.sampled_from(["", "m/s", "kg", "s", "min", "km/s", "g"]))
IDS = st.one_of(st.integers(-3, 12).map(str), st.integers(1, 8).map(str), st.sampled_from(["#1", "#4", " 3", "1.0", "٣", "1e3", "", "99999999999999999999"]))
TIMES = st.one_of(st.sampled_from(["now", "2026-01-01", "2026-01-01T00:00:00Z", "2026-13-01", "2026-01-01T25:00",
                                   "9999-12-31T23:59:59-14:00", "0001-01-01T00:00:00+14:00", "yesterday", "1e9"]),
                  st.datetimes().map(lambda d: d.isoformat()))
ENGINES = st.sampled_from(["lae", "rcs", "lae", "rcs", "LAE", "", " lae", "x"])
TEXT = st.text(max_size=30)
ANY = st.one_of(QUANTITY, IDS, TIMES, ENGINES, TEXT)
TAILORED = {"--dv": QUANTITY, "--duration": QUANTITY, "--propellant": QUANTITY, "--delta": QUANTITY,
            "--entry": IDS, "--plan": IDS, "--at": TIMES, "--engine": ENGINES, "--keep": IDS, "--last": IDS}


@pytest.fixture(scope="module", autouse=True)
def no_fsync():
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(durable, "fsync", lambda fd: None)
        yield


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    """A ledger with one of each kind of entry and a backup, copied afresh for every example."""
    folder = str(tmp_path_factory.mktemp("template"))
    path = make_ledger(folder, entries=2)
    led = Ledger(path)
    led.record("plan", {"engine": "lae", "dv": 2.0}, at=1.9e9)                      # 3 pending
    led.record("plan", {"engine": "lae", "dv": 2.0}, at=1.9e9)                      # 4
    led.record("withdraw", {"plan": 4})                                            # 5
    led.record("use", {"engine": "rcs", "duration": 30.0})                         # 6
    led.record("mass", {"delta": -3.0})                                            # 7
    led.correct(1, {"dv": 1.5}, reason="fix")                                      # 8
    backup.make_backup(path)
    return folder


def _options(parser: argparse.ArgumentParser) -> list[argparse.Action]:
    return [a for a in parser._actions if a.option_strings and a.dest != "help"]


def _subparsers() -> dict[str, argparse.ArgumentParser]:
    action = next(a for a in build_parser()._actions if isinstance(a, argparse._SubParsersAction))
    return dict(action.choices)


SUBPARSERS = _subparsers()


def test_every_fuzzed_command_exists():
    assert set(FUZZED) <= set(SUBPARSERS)


GOOD_Q = st.builds(lambda x, u: f"{x:.3f}{u}", st.floats(0.001, 20.0), st.sampled_from(["", " m/s", " km/s"]))
GOOD_S = st.builds(lambda x, u: f"{x:.2f}{u}", st.floats(0.01, 120.0), st.sampled_from(["", " s", " min"]))
GOOD_KG = st.builds(lambda x, u: f"{x:.3f}{u}", st.floats(0.001, 5.0), st.sampled_from(["", " kg", " g"]))
GOOD = {  # well-formed command lines, so that the fuzz also walks the paths that write
    "burn": st.tuples(ENGINES, st.one_of(GOOD_Q.map(lambda q: ["--dv", q]), GOOD_S.map(lambda q: ["--duration", q]),
                                         GOOD_KG.map(lambda q: ["--propellant", q]))).map(
        lambda t: ["burn", "--engine", t[0], *t[1]]),
    "plan": st.tuples(ENGINES, GOOD_Q).map(lambda t: ["plan", "--engine", t[0], "--dv", t[1], "--at", "2031-01-01"]),
    "mass": GOOD_KG.map(lambda q: ["mass", "--delta", "-" + q]),
    "use": st.tuples(ENGINES, GOOD_S).map(lambda t: ["use", "--engine", t[0], "--duration", t[1]]),
    "withdraw": IDS.map(lambda i: ["withdraw", "--plan", i]),
    "correct": st.tuples(IDS, GOOD_Q, TEXT).map(lambda t: ["correct", "--entry", t[0], "--dv", t[1], "--reason", t[2]]),
    "check": st.tuples(ENGINES, GOOD_Q).map(lambda t: ["check", "--engine", t[0], "--dv", t[1]]),
}


@st.composite
def command_lines(draw):
    name = draw(st.sampled_from(FUZZED))
    if name in GOOD and draw(st.booleans()):
        argv = draw(GOOD[name])
        if draw(st.booleans()):  # then one more option, of its own kind or anything
            action = draw(st.sampled_from(_options(SUBPARSERS[name])))
            argv.append(draw(st.sampled_from(action.option_strings)))
            if action.nargs != 0:
                argv.append(draw(st.one_of(TAILORED.get(action.option_strings[-1], ANY), ANY)))
        return argv
    argv = [name]
    for action in _options(SUBPARSERS[name]):
        if not (action.required or draw(st.booleans())):
            continue
        flag = draw(st.sampled_from(action.option_strings))
        if action.nargs == 0:
            argv.append(flag)
        else:  # mostly a value of the option's own kind
            wild = draw(st.integers(0, 4)) == 0
            argv += [flag, draw(ANY if wild else TAILORED.get(action.option_strings[-1], ANY))]
    if draw(st.integers(0, 9)) == 0:
        argv.insert(draw(st.integers(0, len(argv))), draw(st.one_of(TEXT, st.just("--bogus"))))
    return argv


def _sane(code: int, out: str, err: str) -> None:
    assert code in (0, 1, 2), (code, err)
    assert "Traceback" not in out + err and "internal error" not in err, err
    if code == 2:
        assert err.startswith("propledger: error: ") and err.count("\n") == 1, err


@settings(max_examples=500, **SETTINGS)
@given(argv=command_lines())
def test_every_option_of_every_command(template, argv):
    folder = tempfile.mkdtemp(prefix="fuzz-")
    try:
        work = os.path.join(folder, "w")
        shutil.copytree(template, work, symlinks=True)
        before = folder_state(work)
        with contextlib.chdir(folder):  # a relative path in argv (a --ledger after the command) lands here
            code, out, err = run("--ledger", os.path.join(work, "ops.ledger.json"), *argv)
        _sane(code, out, err)
        if code == 2:  # nothing written: not in the ledger's folder, not beside the working folder (no lock file)
            assert folder_state(work) == before, argv
            assert os.listdir(folder) == ["w"], (argv, os.listdir(folder))
    finally:
        shutil.rmtree(folder, ignore_errors=True)


LEAF = st.one_of(st.none(), st.booleans(), st.integers(-10**30, 10**30), st.floats(), TEXT, QUANTITY,
                 st.integers(-10**400, 10**400))
NODE = st.recursive(LEAF, lambda inner: st.lists(inner, max_size=3) | st.dictionaries(TEXT, inner, max_size=3),
                    max_leaves=6)


def _paths(node, prefix=()):
    yield prefix
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _paths(v, prefix + (i,))


@st.composite
def craft_texts(draw):
    if draw(st.integers(0, 9)) == 0:
        return draw(st.text(max_size=200))
    doc = yaml.safe_load(CRAFT_YAML)
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(list(_paths(doc))))
        if not path:
            doc = draw(NODE)
            continue
        parent = doc
        try:
            for key in path[:-1]:
                parent = parent[key]
            if draw(st.integers(0, 4)) == 0 and isinstance(parent, dict):
                del parent[path[-1]]
            else:
                parent[path[-1]] = draw(NODE)
        except (KeyError, IndexError, TypeError):
            continue
    return yaml.safe_dump(doc, allow_unicode=True)


@settings(max_examples=400, **SETTINGS)
@given(text=craft_texts())
def test_the_craft_file(tmp_path_factory, text):
    folder = tempfile.mkdtemp(prefix="fuzz-craft-")
    try:
        craft = os.path.join(folder, "craft.yaml")
        with open(craft, "w", encoding="utf-8") as fh:
            fh.write(text)
        path = os.path.join(folder, "l.json")
        code, out, err = run("--ledger", path, "init", "--craft", craft)
        _sane(code, out, err)
        assert code in (0, 2)
        if code == 2:
            assert not os.path.exists(path) and not os.path.exists(path + ".head")
            assert not os.path.exists(path + ".backups")
        else:  # an accepted craft gives a ledger every command can read
            for argv in (["status", "--json"], ["log"], ["verify"], ["check", "--engine", "lae", "--dv", "1"]):
                code, out, err = run("--ledger", path, *argv)
                _sane(code, out, err)
                assert code in (0, 1) or "engine" in err, (argv, err)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


@settings(max_examples=2000, **SETTINGS)
@given(value=st.one_of(QUANTITY, NUMBERS, st.floats(), st.integers(-10**400, 10**400), TEXT, st.none(),
                       st.booleans()),
       dimension=st.sampled_from(sorted(DIMENSIONS)), signed=st.booleans(), positive=st.booleans())
def test_quantities_with_units(value, dimension, signed, positive):
    try:
        si = parse_quantity(value, dimension, "--x", signed=signed, positive=positive)
    except InputError as exc:
        assert str(exc).startswith("--x: ") and "\n" not in str(exc)
        return
    assert isinstance(si, float) and math.isfinite(si)
    if not signed:
        assert si >= 0
    if positive:
        assert si > 0
    if dimension == "temperature":
        assert si > 0


# --- hostile craft shapes and file names (issue 16, point 7) ---------------------------------------
def _bomb(levels: int, width: int) -> str:
    names = [f"n{i}" for i in range(levels)]
    lines = [f"{names[0]}: &{names[0]} [" + ", ".join(["x"] * width) + "]"]
    for p, c in zip(names, names[1:]):
        lines.append(f"{c}: &{c} [" + ", ".join([f"*{p}"] * width) + "]")
    return "\n".join(lines) + "\n"


HOSTILE_CRAFT = st.one_of(
    st.builds(_bomb, st.integers(2, 12), st.integers(2, 12)),
    st.integers(40, 3000).map(lambda d: "craft: " + "[" * d + "]" * d + "\n"),
    st.integers(40, 3000).map(lambda d: "craft: " + "{a: " * d + "1" + "}" * d + "\n"),
    st.integers(300, 6000).map(lambda n: CRAFT_YAML.replace("1200 kg", "9" * n)),
    st.sampled_from(["1e999", "-1e999", ".inf", ".nan", "0x" + "f" * 400, "1" + "0" * 310 + " kg"]).map(
        lambda v: CRAFT_YAML.replace("1200 kg", v)),
)


@settings(max_examples=20, **SETTINGS)
@given(text=HOSTILE_CRAFT)
def test_hostile_craft_files(text):
    folder = tempfile.mkdtemp(prefix="fuzz-hostile-")
    try:
        craft = os.path.join(folder, "craft.yaml")
        with open(craft, "w", encoding="utf-8") as fh:
            fh.write(text)
        path = os.path.join(folder, "l.json")
        code, out, err = run("--ledger", path, "init", "--craft", craft)
        _sane(code, out, err)
        assert code in (0, 2) and len(err) < 600
        if code == 2:
            assert not os.path.exists(path)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


NAME_CHARS = st.sampled_from(["\x1b[31m", "\x07", "\r", "\n", "\t", " ", "'", '"', "$(id)", "`", ";", "*", "?",
                              "é", "\u202e", "..", "-", "--", "a"])


@settings(max_examples=30, **SETTINGS)
@given(name=st.lists(NAME_CHARS, min_size=1, max_size=6).map("".join))
def test_hostile_file_names(name):
    folder = tempfile.mkdtemp(prefix="fuzz-names-")
    try:
        craft = os.path.join(folder, "craft.yaml")
        with open(craft, "w", encoding="utf-8") as fh:
            fh.write(CRAFT_YAML)
        base = name.replace("/", "_").replace("\x00", "_")
        if base in ("", ".", ".."):
            base = "x" + base
        path = os.path.join(folder, base)
        for argv in (["init", "--craft", craft], ["status", "--samples", "200", "--confidence", "0.9"],
                     ["burn", "--engine", "lae", "--dv", "1"], ["backup"], ["verify"],
                     ["handover", "--from", "A", "--to", "B", "--no-record", "--out", path + ".out"]):
            code, out, err = run("--ledger", path, *argv)
            _sane(code, out, err)
            assert "\x1b" not in err and "\x07" not in err, (argv, err)
            assert code in (0, 1, 2), (argv, err)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
