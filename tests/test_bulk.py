"""The collector pause around bulk reads leaves the collector as it found it, also when the block fails."""
from __future__ import annotations

import gc

import pytest

from ledger.bulk import paused_gc


def test_paused_inside_and_restored_after():
    assert gc.isenabled()
    with paused_gc():
        assert not gc.isenabled()
    assert gc.isenabled()


def test_restored_after_an_error():
    with pytest.raises(RuntimeError):
        with paused_gc():
            raise RuntimeError("boom")
    assert gc.isenabled()


def test_a_disabled_collector_stays_disabled():
    gc.disable()
    try:
        with paused_gc():
            pass
        assert not gc.isenabled()
    finally:
        gc.enable()
