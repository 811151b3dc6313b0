"""The verified-bytes mark only skips the chain check for the exact bytes that passed it."""
import os

from ledger.services.ledger import VERIFIED_SUFFIX, Ledger
from ledger.store import durable


def test_mark_is_written_after_a_full_check_and_tampering_still_shows(ledger):
    path = ledger
    assert Ledger(path).snapshot().integrity is None
    assert os.path.exists(path + VERIFIED_SUFFIX)
    raw = open(path, "rb").read()
    # Change one digit of a stored amount without touching the hashes: same size, new bytes.
    i = raw.index(b'"dv":') + 5
    digit = raw[i:i + 1]
    tampered = raw[:i] + (b"7" if digit != b"7" else b"8") + raw[i + 1:]
    with open(path, "r+b") as fh:
        fh.write(tampered)
    durable._CACHE.clear()
    snap = Ledger(path).snapshot()
    assert snap.integrity is not None and "hash" in snap.integrity.problem
    assert any("INTEGRITY" in w for w in snap.warnings)


def test_a_stale_or_garbled_mark_is_ignored(ledger):
    path = ledger
    with open(path + VERIFIED_SUFFIX, "w") as fh:
        fh.write("not a digest\n")
    assert Ledger(path).snapshot().integrity is None
    assert open(path + VERIFIED_SUFFIX).read().split()[0] == durable.content_digest(os.path.abspath(path))
