"""Blowdown tanks and performance tables through the command line: parsing, status text and --json
(shapes as docs/json.md, checked with jsonschema, JSON Schema draft 2020-12), one-line errors on bad input."""
from __future__ import annotations

import json

import jsonschema
import pytest

from tests.cli import schemas
from tests.cli.conftest import run

pytest.importorskip("CoolProp")

CRAFT = """\
craft: {name: Blowdown test, dry_mass: "200 kg"}
tanks:
  - {id: hyd, fluid: hydrazine, load: "57 kg", residual: "1 kg", volume: "79 L",
     pressurant: {gas: helium, pressure: "22 bar", temperature: "20 degC"}, expansion: 1.0}
engines:
  - id: mono
    feeds: {hyd: 1}
    performance:
      pressure: [5.5 bar, 10 bar, 15 bar, 22 bar]
      thrust:   [0.26 N, 0.48 N, 0.71 N, 1.02 N]
      isp:      [204.5 s, 218.3 s, 226.4 s, 231.5 s]
    qualified_pressure: [5.5 bar, 24 bar]
"""


def _ledger(tmp_path, text=CRAFT):
    craft = tmp_path / "c.yaml"
    craft.write_text(text)
    ledger = str(tmp_path / "l.json")
    return ledger, run("--ledger", ledger, "init", "--craft", str(craft))


def test_status_shows_predicted_pressure_and_the_gauge_comparison(tmp_path):
    ledger, proc = _ledger(tmp_path)
    assert proc.returncode == 0, proc.stderr
    run("--ledger", ledger, "use", "--engine", "mono", "--duration", "20000 s", "--at", "2026-01-01T00:00Z", check=True)
    before = json.loads(run("--ledger", ledger, "status", "--json", "--samples", "2000", check=True).stdout)
    measured = round(before["tanks"]["hyd"]["pressure_pa"] / 1e5 + 0.05, 2)
    run("--ledger", ledger, "gauge", "--tank", "hyd", "--pressure", f"{measured} bar", "--temperature", "20 degC",
        "--at", "2026-01-02T00:00Z", check=True)
    status = json.loads(run("--ledger", ledger, "status", "--json", "--samples", "2000", check=True).stdout)
    jsonschema.Draft202012Validator(schemas.STATUS).validate(status)
    tank = status["tanks"]["hyd"]
    assert 5e5 < tank["pressure_pa"] < 22e5
    g = tank["gauge"]
    assert g["measured_pressure_pa"] == pytest.approx(measured * 1e5)
    assert g["predicted_pressure_pa"] == pytest.approx(before["tanks"]["hyd"]["pressure_pa"])
    assert g["pressure_difference_sigma"] == pytest.approx(
        (g["measured_pressure_pa"] - g["predicted_pressure_pa"]) / g["pressure_sigma_pa"])
    text = run("--ledger", ledger, "status", "--samples", "2000", check=True).stdout
    assert "Predicted pressure (blowdown): hyd" in text
    assert f"hyd pressure: measured {measured:.3f} bar" in text


@pytest.mark.parametrize("change,needle", [
    ("pressure:   [5.5 bar, 10 bar, 15 bar, 22 bar]", "pressure:   [5.5 bar, 10 bar, 10 bar, 22 bar]"),
    ("expansion: 1.0", "expansion: 2.0"),
    ("thrust:   [0.26 N, 0.48 N, 0.71 N, 1.02 N]", "thrust:   [0.26 N, 0.48 N, 0.71 N]"),
    ("qualified_pressure: [5.5 bar, 24 bar]", "qualified_pressure: [24 bar, 5.5 bar]"),
])
def test_bad_tables_are_one_line_errors_and_nothing_is_written(tmp_path, change, needle):
    text = CRAFT.replace(change.replace("pressure:   ", "pressure: ") if change not in CRAFT else change, needle)
    assert text != CRAFT
    ledger, proc = _ledger(tmp_path, text)
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("propledger: ") and lines[0].count("propledger:") == 1
    assert not (tmp_path / "l.json").exists()
