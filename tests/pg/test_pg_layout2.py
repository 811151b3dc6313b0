"""Layout 2 on a real server: the chain check once per statement still refuses every broken link, whether
the rows come one by one, in one INSERT or in one COPY; the one-round-trip append relinks onto a head
another writer moved; a store's re-read of its own appends equals a fresh read.

The rule checked is the project's own chain (store/chain.py; SHA-256 per FIPS 180-4, recomputed with
hashlib in ``verify_chain``); statement-level triggers with transition tables are PostgreSQL's documented
behaviour (PostgreSQL 15 manual, CREATE TRIGGER, REFERENCING NEW TABLE)."""
from __future__ import annotations

import json

import psycopg
import pytest

from ledger.services.ledger import Ledger
from ledger.store.chain import digest, verify_chain
from ledger.store.pgstore import PgStore


def mass(note: str) -> dict:
    return {"kind": "mass", "at": "2026-12-03T00:00:00.000000Z", "recorded": "2026-12-03T00:00:00.000000Z",
            "by": "alice", "note": note, "data": {"delta": -0.5}}


def linked(store: PgStore, n: int, user: str = "alice") -> list[dict]:
    """n records linked on the store's head as the store would link them (by = the session user)."""
    seq, prev = store.head()
    out = []
    for i in range(n):
        seq += 1
        rec = dict(mass(f"raw{i}"), by=user, seq=seq, prev=prev, host="h", program="raw")
        rec["hash"] = prev = digest(rec, new=True)
        out.append(rec)
    return out


def copy_rows(pg, craft: str, rows: list[dict]) -> None:
    with psycopg.connect(f"postgresql://alice@/ledgers?host={pg.sock}", autocommit=True) as conn:
        with conn.transaction():
            with conn.cursor().copy("COPY propledger.entries (craft, seq, prev, hash, body) FROM STDIN") as cp:
                for r in rows:
                    cp.write_row((craft, r["seq"], r["prev"], r["hash"], json.dumps(r)))


def test_copy_of_a_good_chain_lands_and_a_broken_link_refuses_the_whole_copy(pg_schema, craft_url):
    store = PgStore(craft_url)
    rows = linked(store, 50)
    bad = [dict(r) for r in rows]
    bad[30]["prev"] = "f" * 64  # entry 31 no longer links on entry 30 (its body says the same prev)
    bad[30]["hash"] = digest({k: v for k, v in bad[30].items() if k != "hash"}, new=True)
    with pytest.raises(psycopg.errors.RaiseException, match="entry 31 .*prev is not the hash of the entry before"):
        copy_rows(pg_schema, store.craft, bad)
    assert PgStore(craft_url).head()[0] == 0  # nothing of the refused COPY was kept
    copy_rows(pg_schema, store.craft, rows)
    fresh = PgStore(craft_url)
    assert fresh.head() == (50, rows[-1]["hash"]) and fresh.verify() is None


def test_a_gap_or_a_set_server_column_is_refused(pg_schema, craft_url):
    store = PgStore(craft_url)
    rows = linked(store, 2)
    with pytest.raises(psycopg.errors.SerializationFailure, match="does not follow the chain head"):
        copy_rows(pg_schema, store.craft, rows[1:])  # entry 2 without entry 1
    with psycopg.connect(f"postgresql://alice@/ledgers?host={pg_schema.sock}", autocommit=True) as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="db_user and committed_at are the server"):
            conn.execute("INSERT INTO propledger.entries (craft, seq, prev, hash, body, db_user) "
                         "VALUES (%s, 1, %s, %s, %s::json, 'bob')",
                         [store.craft, rows[0]["prev"], rows[0]["hash"], json.dumps(rows[0])])
    assert PgStore(craft_url).head()[0] == 0


def test_append_relinks_when_another_writer_moved_the_head(craft_url):
    a, b = PgStore(craft_url), PgStore(craft_url)
    first = a.append(mass("a1"))
    b.append(mass("b1"))  # a's known head (entry 1) is stale now
    again = a.append(mass("a2"))
    assert (first["seq"], again["seq"]) == (1, 3)
    fresh = PgStore(craft_url)
    meta, records = fresh.read()
    assert [r["note"] for r in records] == ["a1", "b1", "a2"] and verify_chain(meta, records) is None
    assert records[2]["prev"] == records[1]["hash"] and fresh.verify() is None


def test_reread_after_own_append_equals_a_fresh_read_and_sees_other_writers(craft_url):
    led = Ledger(craft_url)
    led.record("mass", {"delta": -1.0})
    store = led.file
    store.append(mass("own"))
    assert store.read() == PgStore(craft_url).read()
    PgStore(craft_url).append(mass("other"))
    meta, records = store.read()
    assert [r.get("note") for r in records][-2:] == ["own", "other"]
    assert store.verify_cached(meta, records) is None
