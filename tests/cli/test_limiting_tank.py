"""Issue 11.4: "limiting tank" means one thing everywhere, through real subprocesses.

Definition (common practice for bipropellant budgets): the limiting tank of an engine is the tank whose
usable propellant (load less residual), divided by that tank's share of the engine's feed, runs out
first. The tank with the least margin (kg) left after the burn and the reserves is a different figure,
reported under its own key ``least_margin_tank``.

Invented craft: two tanks feed one engine at mixture ratio 1.5 (ox share 0.6, fuel 0.4) with very
different residuals, so the ox runs out first (60 kg / 0.6 = 100 kg of flow) while the fuel keeps the
fewest kg after a small burn and its reserve (the old check named the fuel as ``limiting_tank``).
"""
from __future__ import annotations

import json
import math
import textwrap

from tests.cli.conftest import run

G0 = 9.80665  # standard gravity, m/s^2 (CGPM 1901; NIST SP 330)

CRAFT = textwrap.dedent("""\
    craft:
      name: Two-residual test craft
      dry_mass: "1000 kg"
    tanks:
      - {id: ox, fluid: MON-3, load: "100 kg", residual: "40 kg"}
      - {id: fuel, fluid: MMH, load: "60 kg", residual: "10 kg"}
    engines:
      - {id: main, isp: "300 s", thrust: "400 N", feeds: {ox: 1.5, fuel: 1}}
    reserves:
      - {id: eol, engine: main, dv: "20 m/s"}
    """)
SHARE = {"ox": 1.5 / 2.5, "fuel": 1.0 / 2.5}  # mixture ratio O/F 1.5 split by mass (common practice)
BURN_M_S = 10.0


def _ledger(tmp_path):
    craft = tmp_path / "craft.yaml"
    craft.write_text(CRAFT)
    path = str(tmp_path / "two.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    run("--ledger", path, "plan", "--engine", "main", "--dv", f"{BURN_M_S} m/s", "--at", "2027-01-01T00:00:00Z",
        "--by", "test", check=True)
    return path


def _expected(status, dv_m_s):
    """Runs-out-first tank from status's usable kg and the feed shares; least-margin tank by hand:
    Tsiolkovsky (m_p = m0 (1 - exp(-dv / (Isp g0)))) for the burns, then the reserve at the mass left."""
    usable = {t: v["usable_kg"] for t, v in status["tanks"].items()}
    runs_out_first = min(usable, key=lambda t: usable[t] / SHARE[t])
    ve = 300.0 * G0
    m0 = status["mass_kg"]
    burn = m0 * (1 - math.exp(-dv_m_s / ve))
    reserve = (m0 - burn) * (1 - math.exp(-20.0 / ve))
    margin = {t: usable[t] - SHARE[t] * (burn + reserve) for t in usable}
    return runs_out_first, min(margin, key=margin.get), margin


def test_check_status_and_approve_agree_on_the_limiting_tank(tmp_path):
    path = _ledger(tmp_path)
    status = json.loads(run("--ledger", path, "status", "--json", "--samples", "500", check=True).stdout)
    # check flies the pending plan first, then the burn: 2 x 10 m/s on one engine (delta-v adds).
    limiting, least, margin = _expected(status, 2 * BURN_M_S)
    assert (limiting, least) == ("ox", "fuel"), "the invented craft must make the two figures differ"
    assert status["engines"]["main"]["limiting_tank"] == limiting

    check = json.loads(run("--ledger", path, "check", "--engine", "main", "--dv", f"{BURN_M_S} m/s",
                           "--samples", "500", "--json").stdout)
    for t, kg in margin.items():
        assert math.isclose(check["margin_after_reserves_kg"][t], kg, rel_tol=1e-9)
    # Before the fix check said limiting_tank "fuel" (the least margin) while status said "ox".
    assert check["limiting_tank"] == limiting
    assert check["least_margin_tank"] == least

    approve = json.loads(run("--ledger", path, "approve", "--plan", "1", "--by", "lead", "--samples", "500", "--json",
                             check=True).stdout)
    assert approve["check"]["limiting_tank"] == limiting
    assert approve["check"]["least_margin_tank"] == least


def test_check_text_labels_both_tanks(tmp_path):
    path = _ledger(tmp_path)
    out = run("--ledger", path, "check", "--engine", "main", "--dv", f"{BURN_M_S} m/s", "--samples", "500").stdout
    assert "limiting tank ox" in out and "least margin after reserves: fuel" in out


def test_handover_uses_the_same_keys(tmp_path):
    path = _ledger(tmp_path)
    out = tmp_path / "h.json"
    proc = run("--ledger", path, "handover", "--from", "a", "--to", "b", "--format", "json", "--out", str(out),
               "--no-record")
    assert proc.returncode == 0, proc.stderr
    report = json.loads(out.read_text())
    plan = report["plans"][0]["check"]
    assert plan["limiting_tank"] == "ox" and plan["least_margin_tank"] == "fuel"
    assert {e["id"]: e["limiting_tank"] for e in report["state"]["engines"]} == {"main": "ox"}
