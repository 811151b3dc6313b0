"""Unknown keys in a craft file are refused with one line naming the key and where it is.

Why (a project safety rule, not from a published source): a key in the wrong place was silently dropped,
and with it what it said, e.g. a two-person approval rule written beside ``operations:`` instead of
under it, or a pulse-mode Isp written on the engine instead of under ``pulse:``."""
from __future__ import annotations

import copy
import glob
import os

import pytest
import yaml

from ledger.errors import InputError
from ledger.services.craftfile import KEYS, craft_from_document
from tests.cli.conftest import run

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
DOC = yaml.safe_load("""
craft:
  name: Key test craft (invented)
  dry_mass: 90 kg
  operations: {routine: [{engine: acs, dv_per_year: 2 m/s}]}
tanks:
  - {id: hyd, fluid: hydrazine, load: 6 kg, residual: 0.1 kg}
engines:
  - id: acs
    isp: 220 s
    thrust: 2 N
    feeds: {hyd: 1}
    pulse: {isp_factor: 0.75}
    life: {pulses: 1000}
reserves:
  - {id: deorbit, engine: acs, dv: 5 m/s}
""")


def _with(change):
    doc = copy.deepcopy(DOC)
    change(doc)
    return doc


@pytest.mark.parametrize("change, words", [
    (lambda d: d.update(opertions={"approval": {"approvers": 2}}),
     "unknown key 'opertions' at top level (did you mean operations?)"),
    (lambda d: d.update(approval={"approvers": 2}),
     "unknown key 'approval' at top level (did you mean craft.operations.approval?)"),
    (lambda d: d["craft"].update(approval={"approvers": 2}),
     "unknown key 'approval' at craft (did you mean craft.operations.approval?)"),
    (lambda d: d["craft"]["operations"].update(aproval={"approvers": 2}),
     "unknown key 'aproval' at craft.operations (did you mean approval?)"),
    (lambda d: d["craft"]["operations"].update(approval={"approvers": 2, "above": "5 m/s"}),
     "unknown key 'above' at craft.operations.approval (did you mean above_dv?)"),
    (lambda d: d["craft"]["operations"]["routine"][0].update(dv_per_yr="2 m/s"),
     "unknown key 'dv_per_yr' at craft.operations.routine[0] (did you mean dv_per_year?)"),
    (lambda d: d.update(name="x"), "unknown key 'name' at top level (did you mean craft.name?)"),
    (lambda d: d["craft"].update(dry_mas="90 kg"), "unknown key 'dry_mas' at craft (did you mean dry_mass?)"),
    (lambda d: d["tanks"][0].update(residule="0.1 kg"), "unknown key 'residule' at tanks[0] (did you mean residual?)"),
    (lambda d: d["tanks"][0].update(pressurant={"gas": "helium", "pressure": "22 bar", "temp": "293 K"}),
     "unknown key 'temp' at tanks[0].pressurant"),
    (lambda d: d["engines"][0].update(isp_factor=0.7),
     "unknown key 'isp_factor' at engines[0] (did you mean engines[0].pulse.isp_factor?)"),
    (lambda d: d["engines"][0]["pulse"].update(impulse_bits={}),
     "unknown key 'impulse_bits' at engines[0].pulse (did you mean impulse_bit?)"),
    (lambda d: d["engines"][0].update(life={"pulses": 10, "cycles": 3}), "unknown key 'cycles' at engines[0].life"),
    (lambda d: d["engines"][0].update(feeds={"hyd": {"parts": 1, "sigmaa": 0.1}}),
     "unknown key 'sigmaa' at engines[0].feeds.hyd (did you mean sigma?)"),
    (lambda d: d["reserves"][0].update(delta_v="5 m/s"), "unknown key 'delta_v' at reserves[0]"),
    (lambda d: d.update({"import": {"firings": {"pass_gaps": "30 min"}}}),
     "unknown key 'pass_gaps' at import.firings (did you mean pass_gap?)"),
    (lambda d: d.update(history=[]), "unknown key 'history' at top level"),
    (lambda d: d.update({3: "x"}), "unknown key 3 at top level"),
])
def test_an_unknown_key_is_one_line_naming_it_and_where(change, words):
    with pytest.raises(InputError) as err:
        craft_from_document(_with(change), "scenarios/x.yaml")
    text = str(err.value)
    assert text.startswith("craft file scenarios/x.yaml: ") and words in text and "\n" not in text


def test_operations_both_at_top_level_and_under_craft_is_refused():
    """Before: craft.operations won and the top-level one (here a two-person rule) vanished without a word."""
    doc = _with(lambda d: d.update(operations={"approval": {"approvers": 2, "above_dv": "5 m/s"}}))
    with pytest.raises(InputError, match="operations given both at top level and under craft"):
        craft_from_document(doc, "x.yaml")


def test_operations_at_top_level_alone_still_reads_its_approval_rule():
    doc = _with(lambda d: d.update(operations=d["craft"].pop("operations")))
    doc["operations"]["approval"] = {"approvers": 2, "above_dv": "5 m/s"}
    craft = craft_from_document(doc, "x.yaml")
    assert craft.extra["approval"] == {"approvers": 2, "above_dv_m_s": 5.0}
    assert [r.engine for r in craft.routine] == ["acs"]


def test_every_key_the_schema_lists_is_accepted():
    """The schema holds every key of the base document and of the bundled scenarios (next test)."""
    assert set(DOC) <= set(KEYS)
    craft = craft_from_document(DOC, "x.yaml")
    assert craft.engines[0].pulse_isp_factor == 0.75


@pytest.mark.parametrize("path", sorted(glob.glob(os.path.join(ROOT, "scenarios", "*.yaml"))
                                        + glob.glob(os.path.join(ROOT, "scenarios", "fleet", "*.yaml"))))
def test_the_bundled_scenarios_still_load(path):
    from ledger.services.craftfile import load_yaml  # noqa: PLC0415

    craft = craft_from_document(load_yaml(path), path, extra_top=("history",))
    assert craft.engines


def test_init_refuses_an_unknown_key_with_exit_2_and_writes_nothing(tmp_path):
    text = yaml.safe_dump(_with(lambda d: d.update(operation={"approval": {"approvers": 2}})))
    craft = tmp_path / "x.yaml"
    craft.write_text(text)
    proc = run("--ledger", str(tmp_path / "x.json"), "init", "--craft", str(craft))
    assert proc.returncode == 2
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("propledger: error: craft file ")
    assert "unknown key 'operation' at top level (did you mean operations?)" in lines[0]
    assert os.listdir(tmp_path) == ["x.yaml"]


def test_a_scenario_file_still_makes_a_craft_for_init():
    """`init --craft scenarios/X.yaml` (docs/postgresql.md) reads the craft and leaves the demo history out."""
    from ledger.services.craftfile import load_craft, load_yaml  # noqa: PLC0415

    path = os.path.join(ROOT, "scenarios", "leo-smallsat.yaml")
    assert "history" in load_yaml(path)
    assert load_craft(path).engines
