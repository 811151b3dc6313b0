"""Files beside the ledger can only save work, never change an answer (issue 16, point 1).

Each derived file is forged the way an outsider without the ledger's secret could (the verified mark with
the SHA-256 of a tampered file, the confidence cache with a low bound of 9999 m/s and an approval never
recorded), and status, handover, appends and the console must behave as if the file were absent.
Method: common practice for keyed integrity (HMAC, RFC 2104; Schneier & Kelsey 1998, secure audit logs).
"""
from __future__ import annotations

import hashlib
import json
import os

import orjson
from storekit import run

from ledger.services import confcache, uncertainty
from ledger.services.ledger import VERIFIED_SUFFIX, Ledger
from ledger.store import durable, sidefiles

FAST = ["--samples", "400", "--confidence", "0.9"]


def _tamper(path: str) -> None:
    raw = open(path, "rb").read()
    i = raw.index(b'"dv":') + 5
    with open(path, "r+b") as fh:
        fh.write(raw[:i] + (b"7" if raw[i:i + 1] != b"7" else b"8") + raw[i + 1:])
    durable._CACHE.clear()


def test_forged_verified_mark_does_not_hide_a_tampered_chain(ledger):
    assert Ledger(ledger).snapshot().integrity is None  # a genuine mark exists now
    _tamper(ledger)
    digest = hashlib.sha256(open(ledger, "rb").read()).hexdigest()
    with open(ledger + VERIFIED_SUFFIX, "w") as fh:  # the old forgery: the digest alone
        fh.write(digest + "\n")
    code, out, err = run("--ledger", ledger, "status", "--json", *FAST)
    assert code == 0 and json.loads(out)["integrity"] != "intact"
    with open(ledger + VERIFIED_SUFFIX, "w") as fh:  # a seal made with some other key
        fh.write(f"{digest} {sidefiles.seal(b'x' * 32, 'propledger verified-bytes mark v1', digest.encode())}\n")
    assert Ledger(ledger).snapshot().integrity is not None
    before = open(ledger, "rb").read()
    code, _, err = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1")
    assert code == 2 and "does not verify" in err
    assert open(ledger, "rb").read() == before  # no entry landed on the tampered chain


def test_edited_confidence_cache_is_ignored(ledger):
    code, out, _ = run("--ledger", ledger, "status", "--json", *FAST)
    honest = json.loads(out)
    cache = confcache.cache_path(ledger)
    tag, body = open(cache, "rb").read().split(b"\n", 1)
    doc = orjson.loads(body)
    doc["value"]["engines"]["lae"]["dv_free_low_m_s"] = 9999.0
    for variant in (tag + b"\n" + orjson.dumps(doc), orjson.dumps(doc)):  # old seal kept, or none at all
        with open(cache, "wb") as fh:
            fh.write(variant)
        code, out, _ = run("--ledger", ledger, "status", "--json", *FAST)
        assert code == 0
        got = json.loads(out)
        assert got["engines"]["lae"]["dv_free_low_m_s"] == honest["engines"]["lae"]["dv_free_low_m_s"] != 9999.0


def test_forged_cache_approval_and_bound_never_reach_handover(ledger):
    led = Ledger(ledger)
    stored, _ = led.record("plan", {"engine": "lae", "dv": 2.0}, at=1.8e9, by="fd")
    snap = led.snapshot()
    honest = uncertainty.confidence_status(snap)  # writes the genuine, sealed cache
    cache = confcache.cache_path(ledger)
    tag, body = open(cache, "rb").read().split(b"\n", 1)
    doc = orjson.loads(body)
    doc["value"]["engines"]["lae"]["dv_free_low_m_s"] = 9999.0
    doc["value"]["approvals"][str(stored["seq"])] = {"approval": "approved", "entry": 99, "by": "nobody"}
    with open(cache, "wb") as fh:
        fh.write(tag + b"\n" + orjson.dumps(doc))
    code, out, err = run("--ledger", ledger, "handover", "--from", "A", "--to", "B", "--format", "json",
                         "--no-record")
    assert code == 0, err
    assert "9999" not in out and '"nobody"' not in out
    assert honest["approvals"][str(stored["seq"])]["approval"] == "none"


def test_unusable_secret_disables_the_caches_instead_of_trusting_them(ledger):
    key = sidefiles.key_path(ledger)
    Ledger(ledger).snapshot()
    assert os.path.exists(key) and (os.stat(key).st_mode & 0o777) == 0o600
    os.chmod(key, 0o644)  # readable by others: no longer a secret
    assert sidefiles.secret(ledger) is None
    os.unlink(key)
    os.symlink(ledger, key)  # a planted link is never followed, never overwritten
    assert sidefiles.secret(ledger) is None and os.path.islink(key)
    assert Ledger(ledger).snapshot().integrity is None  # full check, same answer


def test_planted_link_at_a_side_file_is_replaced_not_followed(ledger, tmp_path):
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me")
    for suffix in (VERIFIED_SUFFIX, confcache.SUFFIX):
        side = ledger + suffix
        if os.path.lexists(side):
            os.unlink(side)
        os.symlink(victim, side)
    durable._CACHE.clear()
    code, _, err = run("--ledger", ledger, "status", *FAST)
    assert code == 0, err
    assert victim.read_text() == "keep me"
