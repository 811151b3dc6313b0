"""`status --json` carries per-thruster totals (`thrusters`): validated against the JSON Schema and checked
against the sum of the ledger's own entries as `log --json` lists them.

Outside check: a firing given by propellant counts its steady-state equivalent on-time, propellant over the
mass flow F / (Isp g0) (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2 [memory]), g0 from
scipy.constants; the rest are sums of the entries. The craft is invented test data."""
from __future__ import annotations

import json
import textwrap

import jsonschema
import pytest
from scipy import constants

from tests.cli import schemas
from tests.cli.conftest import run

CRAFT = textwrap.dedent("""\
    craft: {name: Totals test craft (invented), dry_mass: 90 kg}
    tanks:
      - {id: hyd, fluid: hydrazine, load: 6 kg, residual: 0.1 kg}
    engines:
      - id: acs
        isp: 220 s
        thrust: 2 N
        feeds: {hyd: 1}
        pulse: {isp_factor: 0.75}
        life: {pulses: 1000, throughput: 5 kg, on_time: 1 h}
      - {id: trim, isp: 222 s, thrust: 4 N, feeds: {hyd: 1}}
    """)
FLOW = {"acs": 2.0 / (220.0 * constants.g), "trim": 4.0 / (222.0 * constants.g)}
LIFE = {"acs": {"pulses": 1000.0, "throughput_kg": 5.0, "on_time_s": 3600.0}, "trim": {}}


def logged(tmp_path) -> str:
    """The test craft's ledger with pulse trains, timed firings, firings by delta-v and propellant, a mass
    change and a recount (a correction of the first pulse train)."""
    (tmp_path / "c.yaml").write_text(CRAFT)
    led = str(tmp_path / "l.json")
    run("--ledger", led, "init", "--craft", str(tmp_path / "c.yaml"), check=True)
    for args in (["use", "--engine", "acs", "--pulses", "120", "--on-time", "50 ms", "--at", "2026-03-01T00:00Z"],
                 ["burn", "--engine", "acs", "--pulses", "300", "--on-time", "0.1 s", "--at", "2026-03-02T00:00Z"],
                 ["use", "--engine", "trim", "--duration", "20 s", "--at", "2026-03-03T00:00Z"],
                 ["burn", "--engine", "trim", "--dv", "0.5 m/s", "--at", "2026-03-04T00:00Z"],
                 ["use", "--engine", "acs", "--propellant", "0.01 kg", "--at", "2026-03-05T00:00Z"],
                 ["mass", "--delta", "-1 kg", "--at", "2026-03-06T00:00Z"],
                 ["correct", "--entry", "1", "--pulses", "150", "--on-time", "40 ms", "--reason", "recount"]):
        run("--ledger", led, *args, check=True)
    return led


def test_status_json_thrusters_match_the_sum_of_the_entries(tmp_path):
    led = logged(tmp_path)
    status = json.loads(run("--ledger", led, "status", "--json", "--samples", "200", check=True).stdout)
    jsonschema.Draft202012Validator(schemas.STATUS).validate(status)
    rows = json.loads(run("--ledger", led, "log", "--json", check=True).stdout)

    # The effective firings from the log: a correction's changes over its target's data, the rest as logged.
    by_id = {r["id"]: r for r in rows}
    expected = {e: {"on_time_s": 0.0, "pulses": 0, "throughput_kg": 0.0} for e in FLOW}
    for r in rows:
        if r["superseded"] or r["kind"] not in ("use", "burn", "correct"):
            continue
        data = dict(r["data"])
        if r["kind"] == "correct":
            data = {"engine": by_id[data["entry"]]["data"]["engine"], **data["changes"]}
        e = data["engine"]
        if data.get("pulses") is not None:
            seconds = data["pulses"] * data["on_time_s"]
            expected[e]["pulses"] += data["pulses"]
        elif data.get("duration_s") is not None:
            seconds = data["duration_s"]
        else:  # by delta-v or propellant: the propellant over the steady mass flow
            seconds = r["propellant_kg"] / FLOW[e]
        expected[e]["on_time_s"] += seconds
        expected[e]["throughput_kg"] += r["propellant_kg"]

    got = {t["engine"]: t for t in status["thrusters"]}
    assert list(got) == ["acs", "trim"]
    for e, want in expected.items():
        assert got[e]["pulses"] == want["pulses"]
        assert got[e]["on_time_s"] == pytest.approx(want["on_time_s"], rel=1e-9)
        assert got[e]["throughput_kg"] == pytest.approx(want["throughput_kg"], rel=1e-9)
        assert got[e]["life"] == LIFE[e]
        assert got[e]["life_used"] == pytest.approx({k: (want["pulses"] if k == "pulses" else want[k]) / v
                                                     for k, v in LIFE[e].items()})
    assert expected["acs"]["pulses"] == 150 + 300  # the recount replaced the first train's 120


def test_plain_status_lists_the_same_totals(tmp_path):
    led = logged(tmp_path)
    status = json.loads(run("--ledger", led, "status", "--json", "--samples", "200", check=True).stdout)
    text = run("--ledger", led, "status", "--samples", "200", check=True).stdout
    assert "Thruster use, whole ledger" in text
    lines = {ln.split()[0]: ln for ln in text.splitlines() if ln.strip().startswith(("acs ", "trim "))}
    for t in status["thrusters"]:
        cells = lines[t["engine"]].split()
        assert cells[1:4] == [f"{t['on_time_s']:.1f}", f"{t['pulses']:,}", f"{t['throughput_kg']:.3f}"]
    assert "pulses 45 %" in lines["acs"]  # 450 of the 1,000 qualified pulses (the sum checked above)
    assert "no limits given" in lines["trim"]
