"""The layout check every read makes: the quick pass over a well-numbered table and the full walk that names
the first bad entry give the same verdicts; a file changed behind a checked one is checked again."""
from __future__ import annotations

import copy
import os

import orjson
import pytest

from ledger.errors import StoreError
from ledger.store import durable
from ledger.store.ledgerfile import ENTRIES, Damaged, LedgerFile, check_layout


def _doc(path: str) -> dict:
    with open(path, "rb") as fh:
        return orjson.loads(fh.read())


def test_a_written_ledger_passes(ledger):
    check_layout(_doc(ledger), ledger)


@pytest.mark.parametrize("damage, words", [
    (lambda t: t.update({"01": t.pop("1")}), "entry id '01' is not a sequence number"),
    (lambda t: t.update({"x": t.pop("2")}), "entry id 'x' is not a sequence number"),
    (lambda t: t["2"].update(seq=5), "entry 2 is malformed"),
    (lambda t: t["3"].pop("hash"), "entry 3 is malformed"),
    (lambda t: t.update({"2": [1, 2]}), "entry 2 is malformed"),
])
def test_each_damage_is_named(ledger, damage, words):
    doc = copy.deepcopy(_doc(ledger))
    damage(doc[ENTRIES])
    with pytest.raises(Damaged, match=words):
        check_layout(doc, ledger)


def test_out_of_order_but_well_formed_ids_pass(ledger):
    # The quick pass wants "1".."N" in order; another order falls to the full walk, which accepts it.
    doc = _doc(ledger)
    doc[ENTRIES] = dict(reversed(list(doc[ENTRIES].items())))
    check_layout(doc, ledger)


def test_a_file_replaced_after_a_checked_read_is_checked_again(ledger):
    lf = LedgerFile(ledger)
    lf.document()  # checked and remembered
    doc = _doc(ledger)
    doc[ENTRIES]["2"]["seq"] = 9
    with open(ledger, "wb") as fh:  # another program rewrites the file with a broken entry
        fh.write(orjson.dumps(doc))
    os.utime(ledger, ns=(1, 1))  # a different modification time whatever the clock's resolution
    with pytest.raises(StoreError, match="entry 2 is malformed"):
        LedgerFile(ledger).document()


def test_an_append_keeps_the_checked_table_in_step(ledger):
    lf = LedgerFile(ledger)
    before = len(lf.records())
    stored = lf.append({"kind": "mass", "at": "2026-01-01T00:00:00Z", "recorded": "2026-01-01T00:00:00Z",
                        "by": "t", "note": "", "data": {"delta": -1.0}})
    doc = lf.document()
    assert len(doc[ENTRIES]) == before + 1 and doc[ENTRIES][str(stored["seq"])]["hash"] == stored["hash"]
    assert doc is not None and durable.content_digest(lf.path) is not None
