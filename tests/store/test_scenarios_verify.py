"""Every bundled scenario builds a ledger whose chain verifies, backs up and restores (issue: 'propledger
verify passes on every bundled scenario'). With no scenarios bundled yet the parameter set is empty."""
from __future__ import annotations

import os

import pytest
from storekit import run

from ledger.services import scenario
from ledger.store import backup


@pytest.mark.parametrize("name", sorted(scenario.bundled()))
def test_bundled_scenario_verifies_and_round_trips_a_backup(tmp_path, name):
    path = str(tmp_path / f"{name}.ledger.json")
    scenario.build(scenario.bundled()[name], path)
    assert run("--ledger", path, "verify")[0] == 0
    dest = backup.make_backup(path)
    os.remove(path)
    code, _, err = run("--ledger", path, "restore")
    assert code == 0, err
    assert open(path, "rb").read() == open(dest, "rb").read()
    assert run("--ledger", path, "verify")[0] == 0
