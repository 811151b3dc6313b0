"""The command line through its real entry point (python -m ledger, the same main as the script)."""
import json
import math

import pytest

from tests.cli.conftest import run

G0 = 9.80665  # standard gravity, 3rd CGPM (1901)


def j(proc):
    assert proc.returncode in (0, 1), proc.stderr
    return json.loads(proc.stdout)


def test_init_refuses_to_overwrite(ledger, craft_file):
    before = open(ledger, "rb").read()
    proc = run("--ledger", ledger, "init", "--craft", craft_file)
    assert proc.returncode == 2 and "already exists" in proc.stderr and proc.stderr.count("\n") == 1
    assert open(ledger, "rb").read() == before


def test_burn_status_and_log(ledger):
    out = j(run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "100 m/s", "--at", "2026-03-01T10:00:00Z",
                "--by", "A. Okafor", "--json"))
    assert out["id"] == 1
    status = j(run("--ledger", ledger, "status", "--json"))
    assert status["craft"] == "Test craft K-7" and status["entries"] == 1
    # 1800 lb dry (international pound 0.45359237 kg) + 530 kg loaded; rocket equation for 100 m/s.
    m0 = 1800 * 0.45359237 + 530.0
    m1 = m0 * math.exp(-100.0 / (318 * G0))
    assert status["mass_kg"] == pytest.approx(m1, rel=1e-12)
    used = m0 - m1
    assert status["tanks"]["ox"]["remaining_kg"] == pytest.approx(330 - used * 1.65 / 2.65)
    assert status["tanks"]["fuel"]["usable_kg"] == pytest.approx(200 - used / 2.65 - 4)
    assert set(status["engines"]["lae"]) >= {"dv_available_m_s", "dv_free_m_s"}
    assert status["warnings"] == []
    rows = j(run("--ledger", ledger, "log", "--json"))
    assert rows[0]["mass_after_kg"] == pytest.approx(m1) and rows[0]["by"] == "A. Okafor"
    assert sum(rows[0]["drawn_kg"].values()) == pytest.approx(used)


def test_plan_execute_withdraw_and_check(ledger):
    p1 = j(run("--ledger", ledger, "plan", "--engine", "rcs", "--dv", "2 m/s", "--at", "2027-01-01T00:00Z", "--json"))
    p2 = j(run("--ledger", ledger, "plan", "--engine", "rcs", "--dv", "3 m/s", "--at", "2027-02-01T00:00Z", "--json"))
    free0 = j(run("--ledger", ledger, "status", "--json"))["engines"]["lae"]["dv_free_m_s"]
    chk = j(run("--ledger", ledger, "check", "--engine", "lae", "--dv", "10 m/s", "--json"))
    assert chk["verdict"] == "feasible" and len(chk["commitments"]) == 2 and chk["propellant_kg"] > 0
    assert chk["dv_free_after_m_s"] < free0 - 10
    too_much = run("--ledger", ledger, "check", "--engine", "lae", "--dv", f"{free0 + 1} m/s", "--json")
    assert too_much.returncode == 1 and json.loads(too_much.stdout)["verdict"] == "infeasible"
    run("--ledger", ledger, "burn", "--engine", "rcs", "--dv", "2.05 m/s", "--plan", str(p1["id"]), check=True)
    run("--ledger", ledger, "withdraw", "--plan", str(p2["id"]), check=True)
    status = j(run("--ledger", ledger, "status", "--json"))
    assert status["pending_plans"] == []
    again = run("--ledger", ledger, "burn", "--engine", "rcs", "--dv", "1 m/s", "--plan", str(p1["id"]))
    # An executed burn is always recorded (issue 11.3): executing the plan again warns, never refuses.
    assert again.returncode == 0 and "already executed" in again.stderr


def test_units_on_options(ledger):
    run("--ledger", ledger, "use", "--engine", "rcs", "--duration", "3 min", check=True)
    run("--ledger", ledger, "mass", "--delta", "-12 lb", check=True)
    rows = j(run("--ledger", ledger, "log", "--json"))
    flow = 20.0 / (285 * G0)  # thrust / (Isp g0)
    assert rows[0]["propellant_kg"] == pytest.approx(flow * 180.0)
    assert rows[1]["mass_after_kg"] == pytest.approx(rows[0]["mass_after_kg"] - 12 * 0.45359237)


def test_late_burn_lands_where_it_happened(ledger):
    run("--ledger", ledger, "mass", "--delta", "-50 kg", "--at", "2026-05-01T00:00Z", check=True)
    run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "50 m/s", "--at", "2026-04-01T00:00Z", check=True)
    rows = j(run("--ledger", ledger, "log", "--json"))
    assert [r["id"] for r in rows] == [2, 1]
    assert rows[0]["late"] is True


def test_overdraw_is_recorded_with_a_warning(ledger):
    proc = run("--ledger", ledger, "burn", "--engine", "lae", "--propellant", "600 kg", "--json")
    assert proc.returncode == 0
    out = json.loads(proc.stdout)
    assert any("tank ox" in w and "below zero" in w for w in out["warnings"])
    status = j(run("--ledger", ledger, "status", "--json"))
    assert status["entries"] == 1 and any("ox" in w for w in status["warnings"])


@pytest.mark.parametrize("args, message", [
    (["burn", "--engine", "lae"], "one of the arguments"),
    (["burn", "--engine", "nope", "--dv", "1 m/s"], "unknown engine"),
    (["burn", "--engine", "lae", "--dv", "1 kg"], "is not a speed"),
    (["burn", "--engine", "lae", "--dv", "nan"], "expected a speed"),
    (["burn", "--engine", "lae", "--dv", "-1 m/s"], "must not be negative"),
    (["burn", "--engine", "lae", "--dv", "1 m/s", "--at", "yesterday"], "ISO 8601"),
    (["burn", "--engine", "lae", "--dv", "1 m/s", "--plan", "99"], "not a planned burn"),
    (["plan", "--engine", "lae", "--dv", "1 m/s"], "--at is required"),
    (["mass", "--delta", "0 kg"], "zero"),
    (["withdraw", "--plan", "x"], "expected an entry id"),
    (["check", "--engine", "lae", "--dv", "3 furlongs"], "not a speed"),
    (["correct", "--entry", "1", "--dv", "2 m/s", "--reason", "typo"], "no entry 1"),
    (["frobnicate"], "invalid choice"),
])
def test_errors_are_one_line_exit_2_and_write_nothing(ledger, args, message):
    before = open(ledger, "rb").read()
    proc = run("--ledger", ledger, *args)
    assert proc.returncode == 2
    assert message in proc.stderr and proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert open(ledger, "rb").read() == before


@pytest.mark.parametrize("body, message", [
    ("craft: {name: x}\n", "dry_mass: missing"),
    ("craft: {name: x, dry_mass: 10 kg}\ntanks: []\n", "tanks: expected a non-empty list"),
    ("craft: {name: x, dry_mass: '10 m'}\n", "is not a mass"),
    ("craft: {name: x, dry_mass: .nan}\n", "not a finite number"),
    ("craft: {name: x, dry_mass: 10}\ntanks: [{id: a, fluid: MMH, load: 5}]\n"
     "engines: [{id: e, isp: 200, thrust: 1, feeds: {b: 1}}]\n", "unknown tank 'b'"),
    ("craft: {name: x, dry_mass: 10}\ntanks: [{id: a, fluid: MMH, load: 5}, {id: a, fluid: MMH, load: 5}]\n"
     "engines: [{id: e, isp: 200, thrust: 1, feeds: {a: 1}}]\n", "duplicate id 'a'"),
    ("craft: {name: x, dry_mass: 10}\ntanks: [{id: a, fluid: MMH, load: -5}]\n"
     "engines: [{id: e, isp: 200, thrust: 1, feeds: {a: 1}}]\n", "must not be negative"),
    ("craft: [1, 2\n", "not valid YAML"),
    ("craft: {name: x, dry_mass: 10}\ntanks: [{id: a, fluid: MMH, load: 5}]\n"  # beyond any float
     "engines: [{id: e, isp: 200, thrust: 1, feeds: {a: " + "9" * 400 + "}}]\n", "positive number of mass parts"),
])
def test_bad_craft_files(tmp_path, body, message):
    craft = tmp_path / "bad.yaml"
    craft.write_text(body)
    target = tmp_path / "new.json"
    proc = run("--ledger", str(target), "init", "--craft", str(craft))
    assert proc.returncode == 2 and message in proc.stderr and str(craft) in proc.stderr
    assert proc.stderr.count("\n") == 1
    assert not target.exists()


def test_environment_variable_chooses_the_ledger(ledger):
    proc = run("status", "--json", env_extra={"PROPLEDGER_LEDGER": ledger})
    assert proc.returncode == 0 and json.loads(proc.stdout)["craft"] == "Test craft K-7"
