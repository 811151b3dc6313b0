"""The database read on a real server: rows the server hands back out of sequence order are read again in
order; a read-only command's prefetched read answers exactly as a read of its own; a prefetch that is not
taken is dropped with the command; an unreachable server is tried once; an address's `options` with spaces
reach the server as written (libpq decodes %20, not "+").

The ordering rule checked is the SQL one (PostgreSQL 15 manual, 7.5 "Sorting Rows": without ORDER BY
"the rows are returned in an unspecified order"; with it, in the order of the sort key), and the chain
is the project's own (store/chain.py, SHA-256 per FIPS 180-4 via hashlib).
"""
from __future__ import annotations

import json
from urllib.parse import quote

from ledger.cli import main
from ledger.store import pgprefetch, pgread
from ledger.store.chain import verify_chain
from ledger.store.pgstore import PgStore


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def no_index(url: str) -> str:
    """The address with index scans off for its sessions, so the server reads the table in its heap order."""
    return url + "&options=" + quote("-c enable_indexscan=off -c enable_bitmapscan=off")


def test_rows_out_of_sequence_order_are_read_again_in_order(capsys, pg_schema, craft_url, monkeypatch):
    for i in range(3):
        assert run(capsys, "--ledger", craft_url, "mass", "--delta", f"-{i + 1} kg")[0] == 0
    craft = PgStore(craft_url).craft
    # A superuser moves entry 1 to the end of the table's heap, the record itself unchanged (what a table
    # rewrite or a restore can do to the physical order).
    pg_schema.psql("SET session_replication_role = replica; "
                   f"CREATE TEMP TABLE moved AS SELECT * FROM propledger.entries WHERE craft = '{craft}' AND seq = 1; "
                   f"DELETE FROM propledger.entries WHERE craft = '{craft}' AND seq = 1; "
                   "INSERT INTO propledger.entries SELECT * FROM moved;")
    url = no_index(craft_url)
    unordered = PgStore(url)._query_direct(PgStore._READ_ANY, [craft])
    assert [r["seq"] for r in json.loads(unordered[0][2])] == [2, 3, 1]  # the server's own (heap) order

    sent: list[str] = []
    real = PgStore._query_direct

    def spy(self, sql, params):
        sent.append(sql)
        return real(self, sql, params)
    monkeypatch.setattr(PgStore, "_query_direct", spy)
    meta, records = PgStore(url).read()
    assert [r["seq"] for r in records] == [1, 2, 3]
    assert sent == [PgStore._READ_ANY, PgStore._READ]
    assert verify_chain(meta, records) is None


def test_prefetched_status_equals_a_status_that_reads_for_itself(capsys, craft_url, monkeypatch):
    assert run(capsys, "--ledger", craft_url, "mass", "--delta", "-2 kg")[0] == 0
    taken = []
    real = pgprefetch.take

    def spy(*a):
        got = real(*a)
        taken.append(got is not None)
        return got
    monkeypatch.setattr(pgprefetch, "take", spy)
    code, with_prefetch, _ = run(capsys, "--ledger", craft_url, "status", "--json")
    assert code == 0 and taken == [True]
    monkeypatch.setattr(pgprefetch, "READ_ONLY", frozenset())
    code, without, _ = run(capsys, "--ledger", craft_url, "status", "--json")
    assert code == 0 and taken == [True]  # not prefetched this time
    assert json.loads(with_prefetch) == json.loads(without)


def test_a_prefetch_the_command_did_not_take_is_dropped(capsys, craft_url):
    code, _, err = run(capsys, "--ledger", craft_url, "status", "--no-such-option")  # refused before any read
    assert code == 2 and "--no-such-option" in err
    assert not pgprefetch.started()  # nothing left for a later command to be answered from
    PgStore(craft_url).append({"kind": "mass", "at": "2026-12-03T00:00:00.000000Z",
                               "recorded": "2026-12-03T00:00:00.000000Z", "by": "alice", "note": "",
                               "data": {"delta": -0.5}})
    code, out, _ = run(capsys, "--ledger", craft_url, "status", "--json")
    assert code == 0 and json.loads(out)["entries"] == len(PgStore(craft_url).read()[1])


def test_an_unreachable_server_is_tried_once(capsys, tmp_path, monkeypatch):
    calls = []
    real = pgread.connect

    def counting(*a):
        calls.append(a)
        return real(*a)
    monkeypatch.setattr(pgread, "connect", counting)
    url = f"postgresql://alice@/ledgers?host={tmp_path}&craft=sat1"  # no server listens there
    code, out, err = run(capsys, "--ledger", url, "status")
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and "cannot reach the database" in err
    assert len(calls) == 1


def test_an_early_error_does_not_wait_for_a_slow_server(capsys, tmp_path, monkeypatch):
    import threading  # noqa: PLC0415
    import time  # noqa: PLC0415

    release = threading.Event()

    def slow(*a):  # a server that takes long to answer the connection
        release.wait(10)
        return None
    monkeypatch.setattr(pgread, "connect", slow)
    url = f"postgresql://alice@/ledgers?host={tmp_path}&craft=sat1"
    t0 = time.perf_counter()
    code, _, err = run(capsys, "--ledger", url, "status", "--no-such-option")
    took = time.perf_counter() - t0
    release.set()
    assert code == 2 and "--no-such-option" in err and not pgprefetch.started()
    assert took < 5.0, took  # the command ended with its error; the fetch thread was left to finish alone
