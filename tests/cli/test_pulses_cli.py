"""`burn`/`use --pulses N --on-time T` on the command line (issue 12, point 3): the stored pulse train, its
log --json shape (tests/cli/schemas.py, docs/json.md), one-line errors that change nothing on disk, and
the 80 % thruster-life warning shared by status and the handover.

Outside checks: propellant = N x T x F/(Isp g0) (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed.,
eq. 2-5 [memory for the number]), with g0 from scipy.constants; the 80 % warning threshold is common
practice (warn ahead of a consumable life limit), computed here by hand from the limits written below.
"""
from __future__ import annotations

import hashlib
import json
import textwrap

import jsonschema
import pytest
from scipy import constants

from tests.cli import schemas
from tests.cli.conftest import run

PULSE_CRAFT = textwrap.dedent("""\
    # Invented test craft (not a real spacecraft): hydrazine thrusters fired in pulses, with a life limit.
    craft: {name: Test craft P-3, dry_mass: 90 kg}
    tanks:
      - {id: hyd, fluid: hydrazine, load: 6 kg, residual: 0.1 kg}
    engines:
      - id: acs
        isp: 220 s
        thrust: 2 N
        feeds: {hyd: 1}
        pulse: {isp_factor: 0.75}
        life: {pulses: 1000, throughput: 5 kg, on_time: 1 h}
    """)


@pytest.fixture()
def pulsed(tmp_path):
    craft = tmp_path / "p3.yaml"
    craft.write_text(PULSE_CRAFT)
    path = str(tmp_path / "p3.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    return path


def digest(path: str) -> str:
    with open(path, "rb") as fh:
        return hashlib.sha256(fh.read()).hexdigest()


def test_use_and_burn_by_pulses_store_the_train_and_log_json_is_complete(pulsed):
    run("--ledger", pulsed, "use", "--engine", "acs", "--pulses", "120", "--on-time", "50 ms",
        "--at", "2026-03-01T00:00Z", check=True)
    run("--ledger", pulsed, "burn", "--engine", "acs", "--pulses", "300", "--on-time", "0.1 s", "--sigma", "0.5 s",
        "--at", "2026-03-02T00:00Z", check=True)
    rows = json.loads(run("--ledger", pulsed, "log", "--json", check=True).stdout)
    jsonschema.Draft202012Validator(schemas.LOG).validate(rows)
    use, burn = rows
    assert use["data"]["pulses"] == 120 and use["data"]["on_time_s"] == pytest.approx(0.05)
    assert use["data"]["duration_s"] == pytest.approx(6.0)
    assert use["amount"] == "120 x 0.050 s pulses"
    # by hand: 6 s x 2 N / (220 s x g0), g0 from scipy.constants
    assert use["propellant_kg"] == pytest.approx(6.0 * 2.0 / (220.0 * constants.g), rel=1e-12)
    assert burn["data"]["sigma"] == 0.5 and burn["dv_m_s"] > 0


@pytest.mark.parametrize("args, words", [
    (["--pulses", "0", "--on-time", "50 ms"], "--pulses: must be at least 1"),
    (["--pulses", "-4", "--on-time", "50 ms"], "--pulses: must be at least 1"),
    (["--pulses", "12.5", "--on-time", "50 ms"], "--pulses: expected a whole number"),
    (["--pulses", "many", "--on-time", "50 ms"], "--pulses: expected a whole number"),
    (["--pulses", "120"], "--pulses: give the on-time of each pulse with --on-time"),
    (["--pulses", "120", "--on-time", "0 s"], "--on-time: must be greater than zero"),
    (["--pulses", "120", "--on-time", "5 kg"], "--on-time"),
    (["--pulses", "120", "--on-time", "50 ms", "--duration", "6 s"], "not allowed with"),
])
def test_bad_pulse_input_is_one_line_exit_2_and_nothing_written(pulsed, args, words):
    before = digest(pulsed)
    for cmd in ("use", "burn"):
        proc = run("--ledger", pulsed, cmd, "--engine", "acs", *args)
        assert proc.returncode == 2, proc.stderr
        lines = proc.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].count("propledger:") == 1, proc.stderr
        assert words in lines[0]
    assert digest(pulsed) == before


def test_on_time_without_pulses_is_refused(pulsed):
    proc = run("--ledger", pulsed, "use", "--engine", "acs", "--on-time", "50 ms", "--duration", "3 s")
    assert proc.returncode == 2 and "--on-time: only with --pulses" in proc.stderr


def test_life_warning_at_80_percent_in_status_and_handover(pulsed):
    # 799 of 1000 qualified pulses: below 80 %, no warning; one more pulse reaches 80 % (hand count)
    run("--ledger", pulsed, "use", "--engine", "acs", "--pulses", "799", "--on-time", "20 ms",
        "--at", "2026-03-01T00:00Z", check=True)
    status = json.loads(run("--ledger", pulsed, "status", "--json", "--samples", "500", check=True).stdout)
    assert not any("qualified" in w for w in status["warnings"])
    done = run("--ledger", pulsed, "use", "--engine", "acs", "--pulses", "1", "--on-time", "20 ms",
               "--at", "2026-03-01T01:00Z", check=True)
    expected = "engine acs: 80 % of its qualified pulses used (800 of 1,000)"
    assert expected in done.stderr  # the write reports the warning it raised
    status = json.loads(run("--ledger", pulsed, "status", "--json", "--samples", "500", check=True).stdout)
    assert expected in status["warnings"]
    report = run("--ledger", pulsed, "handover", "--from", "A. Ilic", "--to", "B. Osei", "--no-record",
                 "--format", "md", check=True).stdout
    assert expected in report and "Thruster totals" in report and "pulses 80 %" in report


@pytest.mark.parametrize("line, words", [
    ("pulse: {isp_factor: 1.5}", "isp_factor: expected the pulse-mode Isp"),
    ("pulse: {isp_factor: 0}", "isp_factor: expected the pulse-mode Isp"),
    ("life: {pulses: 2.5}", "life.pulses: expected a whole number"),
    ("life: {cycles: 10}", "unknown key 'cycles' at engines[0].life"),
    ("life: {throughput: 5 s}", "life.throughput"),
])
def test_bad_pulse_or_life_in_the_craft_file_is_one_line(tmp_path, line, words):
    craft = tmp_path / "bad.yaml"
    text = PULSE_CRAFT.replace("    pulse: {isp_factor: 0.75}\n", "").replace(
        "    life: {pulses: 1000, throughput: 5 kg, on_time: 1 h}\n", f"    {line}\n")
    assert line in text
    craft.write_text(text)
    proc = run("--ledger", str(tmp_path / "x.json"), "init", "--craft", str(craft))
    assert proc.returncode == 2 and len(proc.stderr.strip().splitlines()) == 1
    assert words in proc.stderr
    assert not (tmp_path / "x.json").exists()


def test_a_pulse_train_can_be_corrected_and_its_note_changed(pulsed):
    run("--ledger", pulsed, "use", "--engine", "acs", "--pulses", "120", "--on-time", "50 ms",
        "--at", "2026-03-01T00:00Z", check=True)
    run("--ledger", pulsed, "correct", "--entry", "1", "--note", "wheel off-loading", "--reason", "typo", check=True)
    run("--ledger", pulsed, "correct", "--entry", "1", "--pulses", "150", "--reason", "telemetry recount", check=True)
    rows = json.loads(run("--ledger", pulsed, "log", "--json", check=True).stdout)
    jsonschema.Draft202012Validator(schemas.LOG).validate(rows)
    carrier = next(r for r in rows if r.get("changes") == {"pulses": 150})  # the latest correction carries it
    assert carrier["propellant_kg"] == pytest.approx(150 * 0.05 * 2.0 / (220.0 * constants.g), rel=1e-12)
    bad = run("--ledger", pulsed, "correct", "--entry", "1", "--pulses", "0", "--reason", "x")
    assert bad.returncode == 2 and "--pulses: must be at least 1" in bad.stderr
