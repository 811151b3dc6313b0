"""`propledger fleet` through real subprocesses: JSON against its schema (jsonschema, JSON Schema draft
2020-12) and against each ledger's own `status --json`, the 80-column table, and one-line errors (issue 15)."""
from __future__ import annotations

import json
import os

import jsonschema
import pytest

from ledger.services import scenario
from tests.cli import schemas
from tests.cli.conftest import run


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("fleetcli")
    found = scenario.bundled()
    for name in ("geo-comsat", "lunar-orbiter"):
        scenario.build(found[name], str(d / f"{name}.json"))
    (d / "scratch.json").write_text("[]")
    return str(d)


def test_fleet_json_matches_schema_and_each_status(folder):
    proc = run("fleet", "--fleet", folder, "--json", "--sort", "name")
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(proc.stdout)
    jsonschema.Draft202012Validator(schemas.FLEET, format_checker=jsonschema.FormatChecker()).validate(doc)
    assert [(r["craft"], r["state"]) for r in doc["craft"]] == [("Pallenor", "ok"), (None, "unreadable"),
                                                                ("Vantrel-2", "ok")]  # by name: scratch.json 2nd
    for row in (doc["craft"][0], doc["craft"][2]):
        st = json.loads(run("--ledger", row["ledger"], "status", "--json", check=True).stdout)
        assert row["craft"] == st["craft"] and row["mass_kg"] == st["mass_kg"]
        assert {e: v["dv_free_low_m_s"] for e, v in row["engines"].items()} == {
            e: v["dv_free_low_m_s"] for e, v in st["engines"].items()}
    assert doc["summary"] == {"craft": 3, "attention": 3, "broken": 0, "unreadable": 1}


def test_fleet_table_fits_80_columns_with_the_caution(folder):
    proc = run("fleet", "--fleet", folder, "--print", env_extra={"COLUMNS": "80"})
    assert proc.returncode == 0, proc.stderr
    lines = proc.stdout.splitlines()
    assert max(map(len, lines)) <= 80
    assert any(line.startswith("scratch.json") and "ERROR" in line for line in lines)
    assert any(line.startswith("Vantrel-2") for line in lines)
    assert "Decision support only" in proc.stdout


def test_environment_folder_and_attention_filter(folder):
    proc = run("fleet", "--json", "--attention", "--margin", "100 m/s", env_extra={"PROPLEDGER_FLEET": folder})
    assert proc.returncode == 0, proc.stderr
    rows = json.loads(proc.stdout)["craft"]
    pallenor = next(r for r in rows if r["craft"] == "Pallenor")
    assert "margin under 100 m/s" in pallenor["attention"]  # its margin is below 100 m/s
    assert all(r["attention"] for r in rows)


@pytest.mark.parametrize("args, words", [
    (["--fleet", "/nonexistent/fleet"], "not a folder"),
    (["--margin", "-3 m/s"], "--margin"),
    (["--margin", "3 kg"], "--margin"),
    (["--sort", "colour"], "--sort"),
])
def test_bad_input_is_one_line_exit_2(folder, args, words):
    full = ["fleet", "--json", *args] + ([] if "--fleet" in args else ["--fleet", folder])
    proc = run(*full)
    assert proc.returncode == 2 and proc.stdout == ""
    assert proc.stderr.count("propledger:") == 1 and len(proc.stderr.strip().splitlines()) == 1 and words in proc.stderr


def test_no_fleet_given_is_one_clear_error():
    proc = run("fleet", "--json", env_extra={"PROPLEDGER_FLEET": ""})
    assert proc.returncode == 2 and "--fleet DIR" in proc.stderr
