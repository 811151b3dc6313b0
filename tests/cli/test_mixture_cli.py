"""status shows each bipropellant pair's mixture-ratio outage; the craft file carries the ratio's sigma.

Invented craft. The outage is checked against a hand computation written out below; the shape against
tests/cli/schemas.py (docs/json.md).
"""
from __future__ import annotations

import json

import jsonschema
import pytest

from tests.cli import schemas
from tests.cli.conftest import run

CRAFT = """\
craft:
  name: Drift test
  dry_mass: "900 kg"
tanks:
  - {id: ox, fluid: MON-3, load: "62 kg", residual: "2 kg"}
  - {id: fuel, fluid: MMH, load: "40 kg", residual: "2 kg"}
engines:
  - {id: lae, isp: "318 s", thrust: "440 N", feeds: {ox: 1.65, fuel: 1}, mixture_ratio_sigma: 0.02}
  - {id: rcs, isp: "285 s", thrust: "20 N", feeds: {ox: {parts: 1.65, sigma: 0.03}, fuel: 1}}
"""


@pytest.fixture()
def drift_ledger(tmp_path):
    craft = tmp_path / "drift.yaml"
    craft.write_text(CRAFT)
    path = str(tmp_path / "drift.ledger.json")
    run("--ledger", path, "init", "--craft", str(craft), check=True)
    return path


def test_status_json_outage_against_hand_computation(drift_ledger):
    data = json.loads(run("--ledger", drift_ledger, "status", "--json", "--samples", "2000", check=True).stdout)
    jsonschema.validate(data, schemas.STATUS)
    (row,) = data["mixture_outage"]
    # Hand computation: usable ox 62 - 2 = 60 kg, fuel 40 - 2 = 38 kg; at 1.65 ox runs out first after
    # 60/1.65 = 36.3636 kg of fuel, so 38 - 36.3636 = 1.6364 kg of fuel is stranded.
    assert row["tanks"] == ["ox", "fuel"] and row["engine"] == "lae"
    assert row["mixture_ratio"] == pytest.approx(1.65) and row["mixture_ratio_sigma"] == pytest.approx(0.02)
    assert row["stranded_kg"] == pytest.approx(38.0 - 60.0 / 1.65, abs=1e-6)
    assert (row["stranded_tank"], row["runs_out_first"]) == ("fuel", "ox")
    assert row["stranded_high_kg"] > row["stranded_kg"]  # drawn ratios strand more in the worst cases
    assert sum(row["stranded_tank_share"].values()) == pytest.approx(1.0, abs=0.01)


def test_status_text_names_the_outage(drift_ledger):
    out = run("--ledger", drift_ledger, "status", "--samples", "2000", env_extra={"COLUMNS": "200"}, check=True).stdout
    assert "Mixture-ratio outage ox/fuel" in out
    assert "stranding 1.636 kg of fuel" in out


def test_feed_sigma_is_stored_as_the_ratio_sigma(drift_ledger):
    from ledger.services.craftfile import craft_from_document
    import yaml

    craft = craft_from_document(yaml.safe_load(CRAFT), "drift.yaml")
    rcs = craft.engine("rcs")
    # a sigma of 0.03 parts on ox with fuel held at 1 part: ratio ox/fuel sigma 0.03 / 1
    assert rcs.mixture_ratio_sigma == pytest.approx(0.03) and list(rcs.feeds) == ["ox", "fuel"]


@pytest.mark.parametrize("engine, needle", [
    ("{id: e, isp: 300, thrust: 1, feeds: {ox: 1}, mixture_ratio_sigma: 0.02}", "exactly two feeds"),
    ("{id: e, isp: 300, thrust: 1, feeds: {ox: 1.65, fuel: 1}, mixture_ratio_sigma: -1}", "a number >= 0"),
    ("{id: e, isp: 300, thrust: 1, feeds: {ox: {parts: 1.65, sigma: 0.02}, fuel: 1}, mixture_ratio_sigma: 0.02}",
     "not both"),
])
def test_bad_ratio_sigma_is_one_line(tmp_path, engine, needle):
    craft = tmp_path / "bad.yaml"
    craft.write_text(CRAFT.split("engines:")[0] + f"engines:\n  - {engine}\n")
    proc = run("--ledger", str(tmp_path / "bad.ledger.json"), "init", "--craft", str(craft))
    assert proc.returncode == 2
    assert needle in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
    assert proc.stderr.startswith("propledger:")
    assert not (tmp_path / "bad.ledger.json").exists()
