"""Fixtures for the store tests (helpers in storekit.py)."""
from __future__ import annotations

import pytest
from storekit import CRAFT_YAML

from ledger.services.craftfile import load_craft
from ledger.services.ledger import Ledger, create


@pytest.fixture
def craft_file(tmp_path):
    path = tmp_path / "craft.yaml"
    path.write_text(CRAFT_YAML)
    return str(path)


@pytest.fixture
def new_ledger(tmp_path, craft_file):
    """A fresh ledger holding only the craft definition."""
    path = str(tmp_path / "ops.ledger.json")
    create(path, load_craft(craft_file), by="tester")
    return path


@pytest.fixture
def ledger(new_ledger):
    """A ledger with three burns logged."""
    led = Ledger(new_ledger)
    for k in range(3):
        led.record("burn", {"engine": "lae", "dv": 1.0 + k}, at=1.7e9 + 3600 * k, by="tester", note=f"burn {k}")
    return new_ledger
