"""Every craft of one PostgreSQL database as a fleet: the listing with each craft's chain head, and the
notifications that say which craft changed.

A fleet address is a ledger address without ``craft=`` (``postgresql://host/db``). ``heads`` answers in ONE
query for all craft: each craft's name, its definition's hash and its chain head (the last entry's seq and
hash, read off the primary-key index, not a scan of the entries), plus a database-wide count of rows ever
updated or deleted in the ledger tables. The server refuses such edits to everyone (``pgschema``); a
superuser who switches the triggers off still moves that count (PostgreSQL's cumulative statistics,
``pg_stat_user_tables``), so an edit that leaves a head in place still changes every craft's fingerprint.
``FleetListener`` LISTENs on the ``propledger`` channel ('<craft> <seq>' per commit) on a connection of its
own and counts notifications per craft: the live fleet screen reads only the craft that changed.
"""
from __future__ import annotations

import threading
import time
from typing import Any, NamedTuple
from urllib.parse import parse_qsl, urlencode, urlsplit, urlunsplit

import psycopg

from ..errors import InputError, StoreError
from . import pgschema
from .pgstore import CONNECT_TIMEOUT_S, _first_line, _shown, parse_address

RELIST_S = 2.0
"""How often the listener re-reads the listing: a new craft sends no notification (only entries do), and a
superuser's edit sends none either, so this bounds how late they show. The listing is one indexed query
(about 11 ms of server time for 500 craft, docs/postgresql.md), so every 2 s costs the server under 1 %."""

_HEADS = """
SELECT c.name, c.hash, coalesce(h.seq, 0), coalesce(h.hash, c.hash),
       (SELECT coalesce(sum(s.n_tup_upd + s.n_tup_del), 0)::bigint FROM pg_stat_user_tables s
         WHERE s.schemaname = 'propledger')
FROM propledger.crafts c
LEFT JOIN LATERAL (SELECT e.seq, e.hash FROM propledger.entries e WHERE e.craft = c.name
                   ORDER BY e.seq DESC LIMIT 1) h ON true
{where}
ORDER BY c.name
"""


class Head(NamedTuple):
    """One craft's change signal: its definition's hash, the chain head and the database's edit count."""

    meta_hash: str
    seq: int
    hash: str
    edits: int

    def key(self) -> str:
        return f"{self.seq}:{self.hash}:{self.meta_hash}:{self.edits}"


def parse_fleet_address(url: str) -> tuple[str, str]:
    """(libpq address, the address as shown: no password) of a whole database; a ``craft=`` is refused."""
    parts = urlsplit(url)
    query = parse_qsl(parts.query, keep_blank_values=True)
    if any(k == "craft" for k, _ in query):
        raise InputError(f"--fleet: a database fleet is every craft in the database: leave out craft= "
                         f"(got {_shown(parts, query)!r})")
    return urlunsplit((parts.scheme, parts.netloc, parts.path, urlencode(query), "")), _shown(parts, query)


def craft_address(url: str, craft: str) -> str:
    """The ledger address of one craft of the fleet at ``url`` (its password kept, if it had one)."""
    parts = urlsplit(url)
    query = parse_qsl(parts.query, keep_blank_values=True) + [("craft", craft)]
    return urlunsplit((parts.scheme, parts.netloc, parts.path, urlencode(query, safe="/"), ""))


def shown_craft(url: str, craft: str) -> str:
    """The craft's address as its own ``status`` shows it (``PgStore.path``: no password)."""
    return parse_address(craft_address(url, craft))[2]


def connect(conninfo: str, shown: str, name: str = "propledger-fleet") -> psycopg.Connection:
    try:
        return psycopg.connect(conninfo, autocommit=True, connect_timeout=CONNECT_TIMEOUT_S, application_name=name)
    except psycopg.Error as exc:
        raise StoreError(f"{shown}: cannot reach the database ({_first_line(exc)})") from None


def heads_on(conn: psycopg.Connection, shown: str, craft: str | None = None) -> dict[str, Head]:
    """craft name -> Head, for every craft (or the one named), in one query."""
    where, args = ("WHERE c.name = %s", [craft]) if craft is not None else ("", [])
    try:
        rows = conn.execute(_HEADS.format(where=where), args).fetchall()
    except psycopg.errors.UndefinedTable:
        raise StoreError(f"{shown}: no propledger tables in this database; create them and a craft with "
                         "'propledger init --craft FILE'") from None
    except psycopg.Error as exc:
        raise StoreError(f"{shown}: the database refused the fleet listing ({_first_line(exc)})") from None
    return {str(n): Head(str(mh), int(seq), str(h), int(ed)) for n, mh, seq, h, ed in rows}


def heads(conninfo: str, shown: str, craft: str | None = None) -> dict[str, Head]:
    """``heads_on`` over a connection opened and closed here (nothing open is left to forked workers)."""
    with connect(conninfo, shown) as conn:
        return heads_on(conn, shown, craft)


class FleetListener(threading.Thread):
    """Counts the server's notifications per craft; on every (re)connection and every ``RELIST_S`` it reads
    the listing again and counts a change for each craft whose head moved (or that appeared)."""

    def __init__(self, conninfo: str, shown: str):
        super().__init__(daemon=True, name="propledger-fleet-listen")
        self.conninfo, self.shown = conninfo, shown
        self.generation: dict[str, int] = {}
        self.heads: dict[str, Head] | None = None
        self.down_since: float | None = None
        self.reason = ""
        self.ready = threading.Event()
        self._halt = threading.Event()
        self._lock = threading.Lock()

    def stop(self) -> None:
        self._halt.set()

    def snapshot(self) -> tuple[dict[str, Head] | None, dict[str, int]]:
        with self._lock:
            return (None if self.heads is None else dict(self.heads)), dict(self.generation)

    def _bump(self, craft: str) -> None:
        with self._lock:
            self.generation[craft] = self.generation.get(craft, 0) + 1

    def _relist(self, conn: psycopg.Connection) -> None:
        new = heads_on(conn, self.shown)
        with self._lock:
            old = self.heads
            for name, head in new.items():
                if old is not None and old.get(name) != head:
                    self.generation[name] = self.generation.get(name, 0) + 1
            self.heads = new

    def run(self) -> None:
        while not self._halt.is_set():
            try:
                with psycopg.connect(self.conninfo, autocommit=True, connect_timeout=CONNECT_TIMEOUT_S,
                                     application_name="propledger-fleet-listen") as conn:
                    conn.execute(f"LISTEN {pgschema.CHANNEL}")
                    self._relist(conn)  # after LISTEN: a commit in between is seen either way
                    self.down_since = None
                    self.ready.set()
                    last = time.monotonic()
                    while not self._halt.is_set():
                        for note in conn.notifies(timeout=0.25):
                            self._bump(note.payload.split(" ", 1)[0])
                        if time.monotonic() - last > RELIST_S:
                            self._relist(conn)
                            last = time.monotonic()
            except (psycopg.Error, StoreError) as exc:
                if self.down_since is None:
                    self.down_since = time.time()
                self.reason = _first_line(exc)
                self.ready.set()
                self._halt.wait(1.0)


def describe(listener: FleetListener | None) -> Any:
    """'disconnected ...' while the listener is down, else None."""
    if listener is None or listener.down_since is None:
        return None
    return (f"disconnected from the database since {time.strftime('%H:%M:%S', time.gmtime(listener.down_since))} "
            f"UTC ({listener.reason}); reconnecting: rows may be out of date")
