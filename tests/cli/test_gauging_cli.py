"""gauge and rebaseline through the real entry point: exit codes, JSON keys, nothing written on a
rejection or a dry run, the latest reading in status, and status never loading CoolProp."""
import json
import subprocess
import sys
import textwrap

import pytest
from CoolProp.CoolProp import PropsSI

from tests.cli.conftest import ROOT, run

# Invented test craft: a blowdown hydrazine tank (the hand-worked loading record of tests/core/test_gauging.py,
# read as a tank pressure of 22.014 bar = 2.2 MPa helium + 1.4 kPa vapour), a xenon tank, a regulated MMH tank,
# a tank of a fluid the ledger does not know and a nitrogen tank with no volume.
CRAFT = textwrap.dedent("""\
    craft: {name: Test gauging craft, dry_mass: "300 kg"}
    tanks:
      - {id: hz, fluid: hydrazine, load: "60 kg", volume: "80 L", load_sigma: "0.06 kg",
         pressurant: {gas: helium, pressure: "22.014 bar", temperature: "20 degC"}}
      - {id: xe, fluid: xenon, load: "20 kg", volume: "15 L"}
      - {id: mmh, fluid: MMH, load: "50 kg", volume: "70 L"}
      - {id: odd, fluid: ADN blend, load: "5 kg", volume: "5 L"}
      - {id: gn2, fluid: nitrogen, load: "1 kg"}
    engines:
      - {id: thr, isp: "220 s", thrust: "22 N", feeds: {hz: 1}, isp_sigma: "4.4 s"}
      - {id: hall, isp: "1600 s", thrust: "0.05 N", feeds: {xe: 1}}
      - {id: biprop, isp: "290 s", thrust: "10 N", feeds: {mmh: 1}}
    """)
KEYS = {"propellant_kg", "sigma_kg", "bookkeeping_kg", "difference_sigma", "difference_kg", "flagged", "method"}


@pytest.fixture()
def gledger(tmp_path):
    craft = tmp_path / "gauge-craft.yaml"
    craft.write_text(CRAFT)
    path = str(tmp_path / "g.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    run("--ledger", path, "burn", "--engine", "thr", "--propellant", "26.5 kg", "--at", "2026-03-01T00:00Z",
        check=True)
    return path


def gauge(path, *extra):
    return run("--ledger", path, "gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature", "30 degC",
               "--at", "2026-03-02T00:00Z", *extra)


def test_gauge_json_records_an_entry_and_status_shows_it(gledger):
    proc = gauge(gledger, "--by", "P. Ilves", "--json")
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    assert KEYS <= set(out) and out["method"] == "blowdown PVT" and out["id"] == 2
    # The hand-worked case of tests/core/test_gauging.py: 33.503 kg against 33.5 kg booked.
    assert out["propellant_kg"] == pytest.approx(33.503, abs=0.001) and out["bookkeeping_kg"] == pytest.approx(33.5)
    assert out["flagged"] is False and "Decision support only" in out["caution"]
    status = json.loads(run("--ledger", gledger, "status", "--json", check=True).stdout)
    g = status["tanks"]["hz"]["gauge"]
    assert g["at"] == "2026-03-02T00:00:00Z" and g["propellant_kg"] == out["propellant_kg"]
    assert set(g) >= {"at", "propellant_kg", "sigma_kg", "bookkeeping_kg", "difference_kg", "difference_sigma",
                      "flagged"}
    assert status["tanks"]["xe"]["gauge"] is None
    text = run("--ledger", gledger, "status", check=True).stdout
    assert "Latest gauge reading" in text and "agrees" in text
    rows = json.loads(run("--ledger", gledger, "log", "--json", check=True).stdout)
    assert [r["kind"] for r in rows] == ["burn", "gauge"]


def test_dry_run_writes_nothing(gledger):
    before = open(gledger, "rb").read()
    proc = gauge(gledger, "--dry-run", "--json")
    assert proc.returncode == 0 and json.loads(proc.stdout)["id"] is None
    assert open(gledger, "rb").read() == before
    text = gauge(gledger, "--dry-run").stdout
    assert "nothing recorded" in text and "33.503" in text


def test_flagged_reading_exits_1_and_is_still_recorded(gledger):
    # 14 bar means far more hydrazine than the 33.5 kg booked.
    proc = run("--ledger", gledger, "gauge", "--tank", "hz", "--pressure", "14 bar", "--temperature", "30 degC",
               "--json")
    assert proc.returncode == 1
    out = json.loads(proc.stdout)
    assert out["flagged"] is True and out["difference_sigma"] > 3 and out["id"] == 2


def test_gas_stored_tank_and_sensor_sigmas(gledger):
    # Xenon in 15 L read at 8.4 MPa and 30 degC (22.0 kg; the 20 kg booked would read 7.93 MPa, CoolProp);
    # a tighter pressure sensor narrows the sigma.
    args = ("--ledger", gledger, "gauge", "--tank", "xe", "--pressure", "8.4 MPa", "--temperature", "30 degC",
            "--dry-run", "--json")
    wide = json.loads(run(*args).stdout)
    tight = json.loads(run(*args, "--pressure-sigma", "10 kPa", "--temperature-sigma", "0.1 degC").stdout)
    assert wide["method"] == tight["method"] == "gas density"
    assert wide["pressure_sigma_pa"] == 100e3 and tight["pressure_sigma_pa"] == 10e3
    assert tight["temperature_sigma_k"] == pytest.approx(0.1)  # a spread: 0.1 degC is 0.1 K
    assert tight["sigma_kg"] < wide["sigma_kg"]
    # m = rho(P, T) * V with CoolProp's reference equation of state for xenon (Lemmon & Span 2006).
    rho = PropsSI("D", "P", 8.4e6, "T", 303.15, "Xenon")
    assert tight["propellant_kg"] == wide["propellant_kg"] == pytest.approx(rho * 0.015, rel=1e-12)


@pytest.mark.parametrize("args, message", [
    (["gauge", "--tank", "nope", "--pressure", "10 bar", "--temperature", "300 K"], "unknown tank"),
    (["gauge", "--tank", "mmh", "--pressure", "17 bar", "--temperature", "300 K"], "no `pressurant"),
    (["gauge", "--tank", "odd", "--pressure", "17 bar", "--temperature", "300 K"], "known liquids: hydrazine"),
    (["gauge", "--tank", "gn2", "--pressure", "17 bar", "--temperature", "300 K"], "no `volume`"),
    (["gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature", "80 degC"], "valid"),
    (["gauge", "--tank", "hz", "--pressure", "1 kPa", "--temperature", "20 degC"], "vapour pressure"),
    (["gauge", "--tank", "hz", "--pressure", "10 kg", "--temperature", "20 degC"], "not a pressure"),
    (["gauge", "--tank", "hz", "--temperature", "20 degC"], "required"),
    (["gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature", "20 degC", "--at", "soon"], "ISO 8601"),
    (["rebaseline", "--tank", "hz", "--gauge", "1"], "--by"),
    (["rebaseline", "--tank", "hz", "--gauge", "1", "--by", "P. Ilves"], "not a gauge reading"),
    (["rebaseline", "--tank", "hz", "--gauge", "x", "--by", "P. Ilves"], "expected an entry id"),
    (["gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature", "20 degC", "--pressure-sigma", "-1 kPa"],
     "must not be negative"),
])
def test_rejections_are_one_line_exit_2_and_write_nothing(gledger, args, message):
    before = open(gledger, "rb").read()
    proc = run("--ledger", gledger, *args)
    assert proc.returncode == 2, proc.stdout
    assert message in proc.stderr and proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert open(gledger, "rb").read() == before


def test_rebaseline_by_a_named_person_then_status(gledger):
    gid = json.loads(gauge(gledger, "--json").stdout)["id"]
    before = open(gledger, "rb").read()
    for args, message in ((["--tank", "xe", "--by", "P. Ilves"], "is of tank hz"),
                          (["--tank", "hz", "--by", ""], "--by is required")):
        proc = run("--ledger", gledger, "rebaseline", "--gauge", str(gid), *args)
        assert proc.returncode == 2 and message in proc.stderr and open(gledger, "rb").read() == before
    proc = run("--ledger", gledger, "rebaseline", "--tank", "hz", "--gauge", str(gid), "--by", "P. Ilves",
               "--reason", "PVT agrees", "--json")
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    assert out["by"] == "P. Ilves" and out["gauge"] == gid and out["at"] == "2026-03-02T00:00:00Z"
    status = json.loads(run("--ledger", gledger, "status", "--json", check=True).stdout)
    assert status["tanks"]["hz"]["remaining_kg"] == pytest.approx(out["remaining_kg"])
    assert status["tanks"]["hz"]["gauge"]["adopted_by"] == out["id"]
    again = run("--ledger", gledger, "rebaseline", "--tank", "hz", "--gauge", str(gid), "--by", "P. Ilves")
    assert again.returncode == 2 and "already adopted" in again.stderr
    fix = run("--ledger", gledger, "correct", "--entry", str(gid), "--reason", "typo", "--note", "x")
    assert fix.returncode == 2 and "cannot be corrected" in fix.stderr


def test_reading_status_and_log_never_load_coolprop(gledger):
    gid = json.loads(gauge(gledger, "--json").stdout)["id"]
    run("--ledger", gledger, "rebaseline", "--tank", "hz", "--gauge", str(gid), "--by", "P. Ilves", check=True)
    code = ("import io, sys, contextlib\n"
            "from ledger.cli import main\n"
            "for cmd in (['status', '--json'], ['status'], ['log']):\n"
            "    with contextlib.redirect_stdout(io.StringIO()):\n"
            f"        assert main(['--ledger', {gledger!r}, *cmd]) == 0\n"
            "sys.exit(3 if 'CoolProp' in sys.modules else 0)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr


def test_status_and_check_after_a_rebaseline_carry_the_adopted_sigma(gledger):
    # Nothing draws from hz after the re-baseline, so in every sample hz holds an independent draw
    # N(adopted, sigma): its 99 % usable low bound (no residual) is adopted + z sigma, z = Phi^-1(0.01)
    # (scipy.stats.norm.ppf), within 4 standard errors of an empirical quantile of n samples:
    # sqrt(0.01 * 0.99 / n) / phi(z) * sigma.
    from scipy.stats import norm

    gid = json.loads(gauge(gledger, "--json").stdout)["id"]
    out = json.loads(run("--ledger", gledger, "rebaseline", "--tank", "hz", "--gauge", str(gid), "--by", "P. Ilves",
                         "--json", check=True).stdout)
    run("--ledger", gledger, "use", "--engine", "hall", "--propellant", "0.5 kg", "--at", "2026-03-03T00:00Z",
        check=True)
    n = 20000
    status = json.loads(run("--ledger", gledger, "status", "--json", "--samples", str(n), check=True).stdout)
    z = norm.ppf(0.01)
    se = (0.01 * 0.99 / n) ** 0.5 / norm.pdf(z) * out["sigma_kg"]
    assert status["tanks"]["hz"]["usable_low_kg"] == pytest.approx(out["remaining_kg"] + z * out["sigma_kg"], abs=4 * se)
    assert status["uncertainty"]["samples"] == n and status["uncertainty"]["segments"] >= 3
    proc = run("--ledger", gledger, "check", "--engine", "thr", "--dv", "5 m/s", "--json")
    assert proc.returncode == 0, proc.stderr
    chk = json.loads(proc.stdout)
    assert chk["verdict"] == "feasible" and chk["probability"] == 1.0
    assert chk["dv_free_after_low_m_s"] < chk["dv_free_after_m_s"]
    text = run("--ledger", gledger, "check", "--engine", "thr", "--dv", "5 m/s")
    assert text.returncode == 0 and "FEASIBLE" in text.stdout
