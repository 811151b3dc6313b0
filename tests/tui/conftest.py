"""Fixtures for the console tests."""
from __future__ import annotations

import os
import sys

import pytest

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from tui_support import fill  # noqa: E402


@pytest.fixture
def ledger_path(tmp_path) -> str:
    path = str(tmp_path / "test.ledger.json")
    fill(path)
    return path
