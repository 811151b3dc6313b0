"""The PostgreSQL store on a real server: same records and chain as the file store, the rules kept by the
server (append-only, next link only, authenticated names), and copies file -> database -> file.

The chain rule checked here is the project's own (store/chain.py, SHA-256 over canonical JSON, FIPS 180-4
for the hash); the head hashes are compared with hashlib's SHA-256 recomputation in ``verify_chain``."""
from __future__ import annotations

import json

import psycopg
import pytest

from ledger.cli import main
from ledger.services.ledger import Ledger
from ledger.store.chain import verify_chain
from ledger.store.pgstore import PgStore

from tests.pg.conftest import CRAFT_FILE


def run(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_init_creates_versioned_schema_and_craft(pg_schema, craft_url):
    # layout 1 as it first shipped, then the migration to 2 (set-wise chain check, one-round-trip append)
    assert pg_schema.psql("SELECT string_agg(version::text, ',' ORDER BY version) FROM propledger.versions").strip() == "1,2"
    meta = PgStore(craft_url).meta()
    assert meta["by"] == "alice" and meta["prev"] == "0" * 64


def test_same_craft_twice_refused(capsys, craft_url):
    code, _, err = run(capsys, "--ledger", craft_url, "init", "--craft", CRAFT_FILE)
    assert code == 2 and err.count("\n") == 1 and "already exists" in err


def test_append_records_session_user_and_on_behalf_of(capsys, craft_url):
    assert run(capsys, "--ledger", craft_url, "plan", "--engine", "lae", "--dv", "2", "--at", "2027-01-01T00:00Z")[0] == 0
    assert run(capsys, "--ledger", craft_url, "plan", "--engine", "lae", "--dv", "3", "--at", "2027-01-02T00:00Z",
               "--by", "R. Okafor")[0] == 0
    records = PgStore(craft_url).records()
    assert [r["by"] for r in records] == ["alice", "alice"]
    assert "on_behalf_of" not in records[0] and records[1]["on_behalf_of"] == "R. Okafor"
    code, out, _ = run(capsys, "--ledger", craft_url, "log", "--json")
    rows = json.loads(out)
    assert rows[1]["by"] == "alice" and rows[1]["on_behalf_of"] == "R. Okafor"
    store = PgStore(craft_url)
    assert verify_chain(store.meta(), store.records()) is None and store.head() == (2, records[1]["hash"])


def test_two_crafts_are_two_chains(pg_schema, craft_url):
    other = craft_url.replace("craft=", "craft=x")
    assert main(["--ledger", other, "init", "--craft", CRAFT_FILE]) == 0
    Ledger(craft_url).record("mass", {"delta": -1.0})
    assert PgStore(other).head()[0] == 0 and PgStore(craft_url).head()[0] == 1


def _sql_as(pg, url_user: str, sql: str) -> None:
    with psycopg.connect(f"postgresql://{url_user}@/ledgers?host={pg.sock}", autocommit=True) as conn:
        conn.execute(sql)


@pytest.mark.parametrize("sql", [
    "UPDATE propledger.entries SET body = body WHERE craft = '{c}'",
    "DELETE FROM propledger.entries WHERE craft = '{c}'",
    "TRUNCATE propledger.entries",
    "UPDATE propledger.crafts SET hash = hash WHERE name = '{c}'",
])
def test_program_role_cannot_edit(pg_schema, craft_url, sql):
    Ledger(craft_url).record("mass", {"delta": -1.0})
    craft = PgStore(craft_url).craft
    with pytest.raises(psycopg.errors.InsufficientPrivilege):
        _sql_as(pg_schema, "alice", sql.format(c=craft))
    assert PgStore(craft_url).head()[0] == 1


def test_owner_is_refused_by_the_trigger(pg_schema, craft_url):
    """Grants aside (the owner has every privilege on its tables), the trigger refuses the change."""
    Ledger(craft_url).record("mass", {"delta": -1.0})
    craft = PgStore(craft_url).craft
    with pytest.raises(psycopg.errors.InsufficientPrivilege, match="append-only"):
        _sql_as(pg_schema, "pl_owner", f"DELETE FROM propledger.entries WHERE craft = '{craft}'")


def test_forged_name_and_forked_link_refused(pg_schema, craft_url):
    led = Ledger(craft_url)
    led.record("mass", {"delta": -1.0})
    first = led.file.records()[0]
    craft = led.file.craft
    with psycopg.connect(f"postgresql://bob@/ledgers?host={pg_schema.sock}", autocommit=True) as conn:
        with pytest.raises(psycopg.errors.RaiseException, match="not the session user"):  # alice's name, by bob
            forged = dict(first, seq=2, prev=first["hash"], hash="a" * 64)
            conn.execute("INSERT INTO propledger.entries (craft, seq, prev, hash, body) VALUES (%s,2,%s,%s,%s::json)",
                         [craft, first["hash"], "a" * 64, json.dumps(forged)])
        with pytest.raises(psycopg.errors.UniqueViolation):  # a second entry 1: a fork
            conn.execute("INSERT INTO propledger.entries (craft, seq, prev, hash, body) VALUES (%s,1,%s,%s,%s::json)",
                         [craft, first["prev"], "b" * 64, json.dumps(dict(first, by="bob", hash="b" * 64))])


def test_superuser_edit_is_found_by_verify(capsys, pg_schema, craft_url):
    Ledger(craft_url).record("mass", {"delta": -1.0})
    Ledger(craft_url).record("mass", {"delta": -2.0})
    craft = PgStore(craft_url).craft
    assert Ledger(craft_url).snapshot().integrity is None  # verified once: the sealed mark now skips the check
    pg_schema.psql("SET session_replication_role = replica; "  # a superuser switches the triggers off
                   "UPDATE propledger.entries SET body = jsonb_set(body::jsonb, '{data,delta}', '-0.5')::json "
                   f"WHERE craft = '{craft}' AND seq = 1")
    code, _, err = run(capsys, "--ledger", craft_url, "verify")
    assert code == 1 and "chain broken at entry 1" in err
    assert "chain broken at entry 1" in str(Ledger(craft_url).snapshot().integrity)  # the mark does not hide it


def test_copy_file_to_database_and_back_same_head(capsys, tmp_path, pg_schema):
    src = str(tmp_path / "a.ledger.json")
    assert run(capsys, "--ledger", src, "init", "--craft", CRAFT_FILE, "--by", "R. Okafor")[0] == 0
    for i in range(5):
        assert run(capsys, "--ledger", src, "mass", "--delta", f"-{i + 1} kg", "--by", "J. Ito")[0] == 0
    url = pg_schema.url(craft="copied1")
    code, out, _ = run(capsys, "copy", src, url, "--json")
    assert code == 0
    head = Ledger(src).file.head()
    assert json.loads(out)["head"] == head[1] and PgStore(url).head() == head
    assert PgStore(url).records()[0]["by"] == "J. Ito"  # the file's names travel with the records
    Ledger(url).record("mass", {"delta": -1.0})  # alice appends to the copy
    back = str(tmp_path / "b.ledger.json")
    assert run(capsys, "copy", url, back)[0] == 0
    assert Ledger(back).file.head() == PgStore(url).head() and Ledger(back).file.verify() is None
    assert run(capsys, "--ledger", back, "verify")[0] == 0
    code, _, err = run(capsys, "copy", src, url)
    assert code == 2 and "already exists" in err and err.count("\n") == 1


def test_missing_craft_name_is_one_line(capsys, pg_schema):
    code, _, err = run(capsys, "--ledger", f"postgresql://alice@/ledgers?host={pg_schema.sock}", "status")
    assert code == 2 and err.startswith("propledger: error: --ledger: a database address names one craft")


def test_handover_on_a_database_craft(capsys, craft_url):
    """The handover entry is alice's (the session user), for the engineer named by --from; no file backup."""
    assert run(capsys, "--ledger", craft_url, "mass", "--delta", "-1 kg")[0] == 0
    code, _, err = run(capsys, "--ledger", craft_url, "handover", "--from", "R. Okafor", "--to", "J. Ito")
    assert code == 0 and "recorded handover entry 2" in err
    # no file backup is written for a database ledger, and it does not say "none" as if backups were missing
    assert "backup: the database server's (not checked by propledger)" in err and "backup: none" not in err
    last = PgStore(craft_url).records()[-1]
    assert last["kind"] == "handover" and last["by"] == "alice" and last["on_behalf_of"] == "R. Okafor"


def test_newer_layout_is_refused_and_missing_rights_are_one_line(capsys, pg_schema):
    pg_schema.psql("CREATE DATABASE later OWNER pl_owner", db="postgres")
    owner = f"postgresql://pl_owner@/later?host={pg_schema.sock}&craft=s1"
    assert run(capsys, "--ledger", owner, "init", "--craft", CRAFT_FILE)[0] == 0
    code, _, err = run(capsys, "--ledger", owner.replace("pl_owner", "alice"), "status")
    assert code == 2 and "permission denied" in err and err.count("\n") == 1  # no grants in this database
    pg_schema.psql("INSERT INTO propledger.versions (version) VALUES (99)", db="later", user="pl_owner")
    code, _, err = run(capsys, "--ledger", owner, "status")
    assert code == 2 and "layout is version 99, newer than this propledger reads (2)" in err


def test_init_without_create_rights_is_one_line(capsys, pg_schema):
    pg_schema.psql("CREATE DATABASE bare OWNER pl_owner", db="postgres")
    pg_schema.psql("REVOKE CREATE ON DATABASE bare FROM PUBLIC", db="postgres")
    code, _, err = run(capsys, "--ledger", f"postgresql://alice@/bare?host={pg_schema.sock}&craft=s1", "init",
                       "--craft", CRAFT_FILE)
    assert code == 2 and err.count("\n") == 1 and "permission denied" in err and "nothing was created" in err
