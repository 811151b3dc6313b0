"""Schema migrations: a table of steps, each turning a whole ledger document of schema N into schema N+1.

Schema 1 is the first layout propledger has written, so the table is empty today; the next change of
layout registers ``MIGRATIONS[1]``. A step gets a deep copy of the document and returns the new one; it
need not touch ``prev``/``hash``: ``migrate_document`` re-links the chain afterwards and records, in the
craft link, the schema it came from and the old chain head. The old file itself is kept as a backup
(``LedgerFile`` writes it before calling this), so the old chain stays checkable.
"""
from __future__ import annotations

import copy
from typing import Any, Callable

from ..errors import StoreError
from .chain import GENESIS_PREV, digest

Migration = Callable[[dict[str, Any]], dict[str, Any]]
MIGRATIONS: dict[int, Migration] = {}
"""from-schema -> step to the next schema."""


def relink(doc: dict[str, Any]) -> dict[str, Any]:
    """Recompute every ``prev`` and ``hash`` in sequence order (after a migration changed the contents)."""
    meta = doc["meta"]["1"]
    meta["prev"] = GENESIS_PREV
    meta["hash"] = prev = digest(meta)
    table = doc["entries"]
    for key in sorted(table, key=int):
        rec = table[key]
        rec["prev"] = prev
        rec["hash"] = prev = digest(rec)
    return doc


def migrate_document(doc: dict[str, Any], target: int, *, path: str, note: dict[str, Any]) -> dict[str, Any]:
    """The document migrated step by step to schema ``target`` and re-linked; ``note`` is kept in the
    craft link's ``migrated`` list (old schema, old head, backup name)."""
    start = doc["meta"]["1"]["schema"]
    new = copy.deepcopy(doc)
    for version in range(start, target):
        step = MIGRATIONS.get(version)
        if step is None:
            raise StoreError(f"{path}: written with schema {version}, and this propledger has no migration "
                             f"from schema {version} to {version + 1}; nothing was changed")
        try:
            new = step(new)
            new["meta"]["1"]["schema"] = version + 1
        except StoreError:
            raise
        except Exception as exc:  # noqa: BLE001 - a failed migration must leave the file alone, with one line
            raise StoreError(f"{path}: migration from schema {version} failed ({type(exc).__name__}: {exc}); "
                             "nothing was changed") from None
    meta = new["meta"]["1"]
    meta["migrated"] = list(meta.get("migrated", [])) + [dict(note, to=target)]
    return relink(new)
