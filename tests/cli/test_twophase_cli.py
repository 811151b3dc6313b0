"""gauge on a xenon tank through the real entry point: a two-phase reading's range and exit codes, the
re-baseline refused, status showing it, and the --gas-temperature-offset option; shapes per
tests/cli/schemas.py (docs/json.md).

Invented craft. Saturation densities: CoolProp 8.0.0 PropsSI called directly (Lemmon & Span 2006 xenon EOS)."""
import json

import jsonschema
import pytest
from CoolProp.CoolProp import PropsSI

from tests.cli import schemas
from tests.cli.conftest import run
from tests.cli.test_gauging_cli import gledger  # noqa: F401 - the fixture (xenon tank 'xe' of 15 L)

T = 284.0


def xe(path, pressure, *extra):
    return run("--ledger", path, "gauge", "--tank", "xe", "--pressure", pressure, "--temperature", f"{T} K",
               "--at", "2026-03-02T00:00Z", *extra)


def test_two_phase_gauge_json_rebaseline_refused_and_status(gledger):  # noqa: F811
    p_sat = PropsSI("P", "T", T, "Q", 0, "Xenon")
    proc = xe(gledger, f"{p_sat:.1f} Pa", "--json", "--by", "ops")
    assert proc.returncode == 0, proc.stderr
    r = json.loads(proc.stdout)
    jsonschema.validate(r, schemas.GAUGE)
    assert r["phase"] == "two-phase" and r["id"] is not None
    assert r["min_kg"] == pytest.approx(PropsSI("D", "T", T, "Q", 1, "Xenon") * 0.015, rel=1e-9)
    assert r["max_kg"] == pytest.approx(PropsSI("D", "T", T, "Q", 0, "Xenon") * 0.015, rel=1e-9)
    reb = run("--ledger", gledger, "rebaseline", "--tank", "xe", "--gauge", str(r["id"]), "--by", "ops")
    assert reb.returncode == 2 and "two-phase" in reb.stderr and len(reb.stderr.strip().splitlines()) == 1
    status = json.loads(run("--ledger", gledger, "status", "--json", "--samples", "1000", check=True).stdout)
    jsonschema.validate(status, schemas.STATUS)
    g = status["tanks"]["xe"]["gauge"]
    assert g["phase"] == "two-phase" and g["propellant_kg"] is None and g["min_kg"] == pytest.approx(r["min_kg"])
    text = run("--ledger", gledger, "status", "--samples", "1000", env_extra={"COLUMNS": "160"}, check=True).stdout
    assert "two-phase" in text
    shown = run("--ledger", gledger, "gauge", "--tank", "xe", "--pressure", f"{p_sat:.1f} Pa", "--temperature",
                f"{T} K", "--dry-run", env_extra={"COLUMNS": "160"})
    assert shown.returncode == 0 and "two-phase: any mass between" in shown.stdout and "no rebaseline" in shown.stdout


def test_single_phase_xenon_json_and_offset_option(gledger):  # noqa: F811
    r = json.loads(xe(gledger, "8 MPa", "--json", "--dry-run").stdout)
    jsonschema.validate(r, schemas.GAUGE)
    assert "phase" not in r and r["sigmas"]["gas_temperature_offset_k"] == 0.0
    bad = xe(gledger, "8 MPa", "--gas-temperature-offset", "1 K", "--dry-run")
    assert bad.returncode == 2 and "gas-stored" in bad.stderr
    hz = run("--ledger", gledger, "gauge", "--tank", "hz", "--pressure", "10 bar", "--temperature", "30 degC",
             "--at", "2026-03-02T00:00Z", "--gas-temperature-offset", "2 K", "--dry-run", "--json")
    assert hz.returncode in (0, 1), hz.stderr
    out = json.loads(hz.stdout)
    jsonschema.validate(out, schemas.GAUGE)
    assert out["sigmas"]["gas_temperature_offset_k"] == 2.0


def test_unusable_reading_is_one_line(gledger):  # noqa: F811
    proc = run("--ledger", gledger, "gauge", "--tank", "xe", "--pressure", "1 bar", "--temperature", "150 K")
    assert proc.returncode == 2 and proc.stderr.startswith("propledger:")
    assert "triple point" in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
