"""Errors stay honest (issue 16, points 4 and 5): one line, the right cause, nothing changed on disk.
Common practice (no single source): POSIX ownership and mode bits, symbolic links resolved once."""
from __future__ import annotations

import json
import os

import orjson
import pytest
from storekit import folder_state, run

from ledger.services.ledger import Ledger
from ledger.store import durable
from ledger.store.chain import digest


def _rewrite_with_bad_data(path: str, seq: int) -> None:
    """An entry whose data is not an object, with every hash after it recomputed: the chain verifies."""
    doc = orjson.loads(open(path, "rb").read())
    table = doc["entries"]
    table[str(seq)]["data"] = 5
    prev = table[str(seq)]["prev"]
    for k in sorted(table, key=int)[seq - 1:]:
        table[k]["prev"] = prev
        table[k]["hash"] = prev = digest(table[k])
    open(path, "wb").write(orjson.dumps(doc))
    os.chmod(path, 0o600)
    durable._CACHE.clear()


def test_malformed_record_in_a_verifying_chain_is_named(ledger):
    _rewrite_with_bad_data(ledger, 2)
    for argv in (["verify"], ["status"], ["burn", "--engine", "lae", "--dv", "1"]):
        before = open(ledger, "rb").read()
        code, _, err = run("--ledger", ledger, *argv)
        assert code == 2 and "entry 2 is malformed" in err and err.count("\n") == 1, (argv, err)
        assert open(ledger, "rb").read() == before


def test_ledger_through_a_symbolic_link_never_forks(ledger, tmp_path):
    link = tmp_path / "current.json"
    os.symlink(ledger, link)
    code, _, err = run("--ledger", str(link), "burn", "--engine", "lae", "--dv", "1")
    assert code == 0, err
    assert os.path.islink(link) and len(Ledger(ledger).snapshot().entries) == 4
    code, out, err = run("--ledger", str(link), "backup", "--json")
    assert code == 0 and json.loads(out)["backup"].startswith(ledger + ".backups"), err


def test_ledger_readable_by_others_is_refused_for_writing(ledger):
    os.chmod(ledger, 0o644)
    before = open(ledger, "rb").read()
    code, _, err = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1")
    assert code == 2 and "readable or writable by other users" in err and "chmod 600" in err
    assert open(ledger, "rb").read() == before
    code, _, _ = run("--ledger", ledger, "status", "--samples", "400", "--confidence", "0.9")
    assert code == 0  # reading is still allowed


def test_cleanup_failure_after_a_write_is_success_with_a_warning(ledger, monkeypatch):
    real_unlink = os.unlink

    def stubborn(path, *a, **k):
        if str(path).endswith(durable.TMP_SUFFIX):
            raise PermissionError(13, "Permission denied")
        return real_unlink(path, *a, **k)
    monkeypatch.setattr(durable.os, "unlink", stubborn)
    code, out, err = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1")
    monkeypatch.setattr(durable.os, "unlink", real_unlink)
    assert code == 0 and "internal error" not in err and "could not remove" in err, err
    assert len(Ledger(ledger).snapshot().entries) == 4


@pytest.mark.parametrize("seed", [str(2**63), str(2**64 + 5), "-1"])
def test_seed_outside_the_stored_range_is_an_input_error(ledger, seed):
    before = folder_state(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, "status", "--seed", seed)
    assert code == 2 and "--seed" in err and err.count("\n") == 1
    assert folder_state(os.path.dirname(ledger)) == before


def test_escape_sequences_in_a_path_never_reach_the_terminal(tmp_path):
    bad = str(tmp_path / "l\x1b[31m.json")
    code, _, err = run("--ledger", bad, "status")
    assert code == 2 and "\x1b" not in err and err.count("\n") == 1


def test_a_ledger_of_a_newer_schema_is_never_rolled_back_without_force(ledger):
    assert run("--ledger", ledger, "backup")[0] == 0
    doc = orjson.loads(open(ledger, "rb").read())
    doc["meta"]["1"]["schema"] = 99  # what a newer propledger would write
    open(ledger, "wb").write(orjson.dumps(doc))
    durable._CACHE.clear()
    before = folder_state(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, "restore")
    assert code == 2 and "newer propledger" in err and "--force" in err
    assert folder_state(os.path.dirname(ledger)) == before
    code, out, err = run("--ledger", ledger, "restore", "--force", "--json")
    assert code == 0, err
    aside = json.loads(out)["kept_aside"]
    assert orjson.loads(open(aside, "rb").read())["meta"]["1"]["schema"] == 99  # named, and kept whole
