"""A ledger kept in a PostgreSQL database (psycopg 3): many craft in one database, each its own chain.

Selected by ``--ledger postgresql://[user@]host[:port]/db?craft=NAME`` (or PROPLEDGER_LEDGER); the rest of
the address is libpq's, so ``?host=/run/postgresql`` for a Unix socket, passwords from ~/.pgpass or
PGPASSWORD. The records and their SHA-256 chain are those of the file store (``chain.py``); the database
keeps the rules the file's lock keeps on one disk, and more (``pgschema``): append-only, each entry
the next link of its chain, ``by`` the authenticated session user (a different ``--by`` is kept as
``on_behalf_of``). An append is one transaction under a per-craft advisory lock, acknowledged only
once it has committed with ``synchronous_commit = on``.
"""
from __future__ import annotations

import getpass
import socket
import threading
import time
from contextlib import contextmanager
from typing import Any, Iterator, Mapping, Sequence
from urllib.parse import parse_qsl, urlencode, urlsplit, urlunsplit

import orjson
import psycopg

from .. import __version__
from ..errors import InputError, StoreError
from . import pgschema
from .chain import GENESIS_PREV, Break, digest, verify_chain

FILE_SCHEMA = 1
"""The record layout (the craft link's ``schema``): the same as the ledger file's (ledgerfile.SCHEMA)."""
LOCK_TIMEOUT_S = 10.0
CONNECT_TIMEOUT_S = 5


def _first_line(exc: BaseException) -> str:
    text = str(exc).strip() or type(exc).__name__
    return text.splitlines()[0].strip()


def parse_address(url: str) -> tuple[str, str, str]:
    """(libpq address without ``craft``, craft name, the address as shown: no password)."""
    parts = urlsplit(url)
    query = parse_qsl(parts.query, keep_blank_values=True)
    crafts = [v for k, v in query if k == "craft"]
    if len(crafts) != 1 or not crafts[0]:
        raise InputError(f"--ledger: a database address names one craft, e.g. "
                         f"'postgresql://host/db?craft=sat1' (got {_shown(parts, query)!r})")
    craft = crafts[0]
    rest = [(k, v) for k, v in query if k != "craft"]
    conninfo = urlunsplit((parts.scheme, parts.netloc, parts.path, urlencode(rest), ""))
    return conninfo, craft, _shown(parts, query)


def _shown(parts, query) -> str:
    netloc = parts.netloc
    if "@" in netloc:
        user, host = netloc.rsplit("@", 1)
        netloc = user.split(":", 1)[0] + "@" + host
    shown = [(k, "***" if k == "password" else v) for k, v in query]
    return urlunsplit((parts.scheme, netloc, parts.path, urlencode(shown, safe="/"), ""))


class PgStore:
    """One craft's chain in a database. Cheap to construct; connects on first use, reconnects when needed."""

    def __init__(self, url: str, lock_timeout: float = LOCK_TIMEOUT_S):
        self.url = url
        self.conninfo, self.craft, self.path = parse_address(url)
        self.lock_timeout = lock_timeout
        self.notices: list[str] = []
        self.user: str | None = None
        self._conn: psycopg.Connection | None = None
        self._depth = 0
        self._guard = threading.RLock()
        self._listener: _Listener | None = None
        self._last_read: tuple[Any, Any, bytes] | None = None
        """(meta, records, the bytes they were parsed from) of the last read: the verified mark's key."""

    # --- connection --------------------------------------------------------------------------
    def _connection(self) -> psycopg.Connection:
        conn = self._conn
        if conn is not None and not conn.closed and not conn.broken:
            return conn
        try:
            conn = psycopg.connect(self.conninfo, autocommit=True, connect_timeout=CONNECT_TIMEOUT_S,
                                   application_name="propledger")
            conn.execute("SET synchronous_commit = on")
            conn.execute(f"SET lock_timeout = '{int(self.lock_timeout * 1000)}ms'")
            self.user = str(conn.execute("SELECT session_user").fetchone()[0])
        except psycopg.Error as exc:
            raise StoreError(f"{self.path}: cannot reach the database ({_first_line(exc)}); nothing was changed") from None
        self._conn = conn
        return conn

    def close(self) -> None:
        if self._listener is not None:
            self._listener.stop()
        if self._conn is not None:
            self._conn.close()
            self._conn = None

    def _fail(self, exc: psycopg.Error, doing: str) -> StoreError:
        """One line for a database error (the connection is dropped when it broke)."""
        if self._conn is not None and (self._conn.broken or isinstance(exc, psycopg.OperationalError)):
            try:
                self._conn.close()
            except psycopg.Error:
                pass
            self._conn = None
        if isinstance(exc, psycopg.errors.UndefinedTable) or isinstance(exc, psycopg.errors.InvalidSchemaName):
            return StoreError(f"{self.path}: no propledger tables in this database; create them and the craft "
                              "with 'propledger init --craft FILE'")
        if isinstance(exc, psycopg.errors.InsufficientPrivilege):
            return StoreError(f"{self.path}: the database refused ({_first_line(exc)}); {doing}")
        if isinstance(exc, psycopg.OperationalError):
            return StoreError(f"{self.path}: database connection lost ({_first_line(exc)}); {doing}")
        return StoreError(f"{self.path}: the database refused ({_first_line(exc)}); {doing}")

    def _read(self, fn):
        """Run a read (retried once on a fresh connection if the old one had dropped)."""
        with self._guard:
            for attempt in (1, 2):
                conn = self._connection()
                try:
                    if self._depth:
                        return fn(conn)
                    with conn.transaction():
                        return fn(conn)
                except psycopg.OperationalError as exc:
                    err = self._fail(exc, "nothing was changed")
                    if attempt == 2 or self._depth:
                        raise err from None
                except psycopg.Error as exc:
                    raise self._fail(exc, "nothing was changed") from None

    # --- creation ----------------------------------------------------------------------------
    @classmethod
    def create(cls, url: str, craft: Mapping[str, Any], created: str, by: str) -> "PgStore":
        """The craft's first link in the database (the schema too, on a database without one)."""
        st = cls(url)
        meta: dict[str, Any] = {"schema": FILE_SCHEMA, "program": f"propledger {__version__}", "created": created,
                                "craft": dict(craft), "prev": GENESIS_PREV}
        with st._write("nothing was created") as conn:
            meta.update(st._names(by, default="unknown"))
            meta["hash"] = digest(meta, new=True)
            st._ensure_schema(conn)
            st._insert_craft(conn, meta)
        return st

    @classmethod
    def adopt(cls, url: str, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> "PgStore":
        """A new craft holding exactly ``meta`` and ``records`` (copied from another store: same links, same
        names, same head); refused unless their chain verifies. ``db_user`` records who copied them."""
        meta, records = dict(meta), [dict(r) for r in records]
        brk = verify_chain(meta, records)
        if brk is not None:
            raise StoreError(f"not copying a ledger whose {brk}; nothing was written")
        st = cls(url)
        with st._write("nothing was written") as conn:
            st._ensure_schema(conn)
            st._insert_craft(conn, meta, imported_through=len(records))
            with conn.cursor().copy("COPY propledger.entries (craft, seq, prev, hash, body) FROM STDIN") as cp:
                for r in records:
                    cp.write_row((st.craft, r["seq"], r["prev"], r["hash"], orjson.dumps(r).decode()))
        return st

    def _ensure_schema(self, conn: psycopg.Connection) -> None:
        have = conn.execute("SELECT 1 FROM pg_namespace WHERE nspname = %s", [pgschema.SCHEMA_NAME]).fetchone()
        if have is None:
            conn.execute(pgschema.CREATE)
            self.notices.append(f"created the propledger tables (layout version {pgschema.VERSION}) in this database")
        else:
            self._check_version(conn)

    def _insert_craft(self, conn: psycopg.Connection, meta: Mapping[str, Any], imported_through: int | None = None) -> None:
        if conn.execute("SELECT 1 FROM propledger.crafts WHERE name = %s", [self.craft]).fetchone():
            raise StoreError(f"{self.path}: craft {self.craft!r} already exists in this database; refusing to "
                             "overwrite it")
        conn.execute("INSERT INTO propledger.crafts (name, meta, hash, imported, imported_through) "
                     "VALUES (%s, %s::json, %s, %s, %s)",
                     [self.craft, orjson.dumps(meta).decode(), meta["hash"], imported_through is not None,
                      imported_through or 0])

    def _check_version(self, conn: psycopg.Connection) -> None:
        row = conn.execute("SELECT max(version) FROM propledger.versions").fetchone()
        version = row[0] if row else None
        if version is None:
            raise StoreError(f"{self.path}: the propledger tables have no layout version; not using them")
        if version > pgschema.VERSION:
            raise StoreError(f"{self.path}: the database layout is version {version}, newer than this propledger "
                             f"reads ({pgschema.VERSION}); upgrade propledger; nothing was changed")
        while version < pgschema.VERSION:
            step = pgschema.MIGRATIONS.get(version)
            if step is None:
                raise StoreError(f"{self.path}: no migration from database layout {version}; nothing was changed")
            with conn.transaction():
                conn.execute(step)
                conn.execute("INSERT INTO propledger.versions (version) VALUES (%s)", [version + 1])
            self.notices.append(f"database layout migrated from version {version} to {version + 1}")
            version += 1

    # --- reading -----------------------------------------------------------------------------
    def exists(self) -> bool:
        return self._read(lambda c: c.execute(
            "SELECT 1 FROM pg_namespace n JOIN pg_class t ON t.relnamespace = n.oid "
            "WHERE n.nspname = 'propledger' AND t.relname = 'crafts'").fetchone() is not None
            and c.execute("SELECT 1 FROM propledger.crafts WHERE name = %s", [self.craft]).fetchone() is not None)

    def _meta(self, conn: psycopg.Connection) -> dict[str, Any]:
        self._check_version(conn)
        row = conn.execute("SELECT meta::text FROM propledger.crafts WHERE name = %s", [self.craft]).fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no craft {self.craft!r} in this database; create it with "
                             "'propledger init --craft FILE'")
        return orjson.loads(row[0])

    def read(self) -> tuple[dict[str, Any], list[dict[str, Any]]]:
        """The craft link and the entry records in sequence order (one query for the entries)."""
        def go(conn):
            self._check_version(conn)
            row = conn.execute(
                "SELECT c.meta::text, (SELECT coalesce(json_agg(e.body ORDER BY e.seq), '[]')::text "
                "FROM propledger.entries e WHERE e.craft = c.name) FROM propledger.crafts c WHERE c.name = %s",
                [self.craft]).fetchone()
            if row is None:
                self._meta(conn)  # the one error for a missing craft
            meta, records = orjson.loads(row[0]), orjson.loads(row[1])
            self._last_read = (meta, records, row[0].encode() + b"\n" + row[1].encode())
            return meta, records
        return self._read(go)

    def meta(self) -> dict[str, Any]:
        return self._read(self._meta)

    def records(self) -> list[dict[str, Any]]:
        return self.read()[1]

    def _head(self, conn: psycopg.Connection) -> tuple[int, str]:
        row = conn.execute("SELECT seq, hash FROM propledger.entries WHERE craft = %s ORDER BY seq DESC LIMIT 1",
                           [self.craft]).fetchone()
        if row is not None:
            return int(row[0]), str(row[1])
        return 0, str(self._meta(conn)["hash"])

    def head(self) -> tuple[int, str]:
        return self._read(self._head)

    def verify(self) -> Break | None:
        """The full chain check, and that every stored row agrees with its record and its server-recorded user."""
        meta, records = self.read()
        brk = verify_chain(meta, records)
        if brk is not None:
            return brk

        def rows(conn):
            return conn.execute(
                "SELECT e.seq, e.body->>'by', e.db_user, (e.body->>'hash') IS DISTINCT FROM e.hash "
                "OR (e.body->>'prev') IS DISTINCT FROM e.prev OR (e.body->>'seq') IS DISTINCT FROM e.seq::text "
                "FROM propledger.entries e JOIN propledger.crafts c ON c.name = e.craft WHERE e.craft = %s AND "
                "((e.seq > c.imported_through AND (e.body->>'by') IS DISTINCT FROM e.db_user::text) "
                "OR (e.body->>'hash') IS DISTINCT FROM e.hash OR (e.body->>'prev') IS DISTINCT FROM e.prev "
                "OR (e.body->>'seq') IS DISTINCT FROM e.seq::text) ORDER BY e.seq LIMIT 1", [self.craft]).fetchone()
        bad = self._read(rows)
        if bad is None:
            return None
        seq, by, db_user, columns = bad
        if columns:
            return Break(int(seq), "the row's seq, prev or hash columns differ from its record (edited in the database)")
        return Break(int(seq), f"recorded by {by!r} but the database user who inserted it was {db_user!r} "
                               "(edited in the database)")

    def verify_cached(self, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> Break | None:
        """The chain check, skipped when exactly these bytes (by SHA-256) verified before, under a mark sealed
        with a key in the user's cache folder (``seam.side_path``, ``verifiedmark``), as for a ledger file:
        the server refuses edits, but a superuser's edit changes the bytes and brings the full check back.
        ``propledger verify`` always does the full check."""
        last = self._last_read
        if last is None or last[0] is not meta or last[1] is not records:
            return verify_chain(meta, records)
        import hashlib  # noqa: PLC0415

        from . import verifiedmark  # noqa: PLC0415
        from .seam import side_path  # noqa: PLC0415

        digest = hashlib.sha256(last[2]).hexdigest()
        where = side_path(self.path)
        if verifiedmark.is_marked(where, digest):
            return None
        brk = verify_chain(meta, records)
        if brk is None:
            verifiedmark.mark(where, digest)
        return brk

    def recorded_heads(self) -> list[Any]:
        return []

    def hint(self) -> str:
        return ("The database keeps no backups of its own here: restore the database from its backup, or copy a "
                "good ledger file in with 'propledger copy'")

    # --- locking and the one write path ------------------------------------------------------
    @contextmanager
    def _write(self, nothing: str) -> Iterator[psycopg.Connection]:
        """A write transaction holding the craft's advisory lock (re-entrant); committed when the block ends."""
        with self._guard:
            if self._depth:
                self._depth += 1
                try:
                    yield self._conn
                finally:
                    self._depth -= 1
                return
            conn = self._connection()
            try:
                try:
                    tx = conn.transaction()
                    tx.__enter__()
                except psycopg.OperationalError:  # a connection that dropped while idle: nothing was sent
                    self._conn = None
                    conn = self._connection()
                    tx = conn.transaction()
                    tx.__enter__()
                try:
                    conn.execute("SELECT pg_advisory_xact_lock(hashtext(%s))", ["propledger " + self.craft])
                    self._depth = 1
                    yield conn
                except BaseException as exc:
                    self._depth = 0
                    if not tx.__exit__(type(exc), exc, exc.__traceback__):
                        raise
                else:
                    self._depth = 0
                    tx.__exit__(None, None, None)  # COMMIT: the write is acknowledged only after this returns
            except psycopg.errors.LockNotAvailable:
                raise StoreError(f"{self.path}: another propledger writer holds craft {self.craft!r}; gave up after "
                                 f"{self.lock_timeout:g} s; {nothing}") from None
            except psycopg.errors.UniqueViolation:
                raise StoreError(f"{self.path}: another writer appended to craft {self.craft!r} at the same moment; "
                                 f"{nothing}; try again") from None
            except psycopg.OperationalError as exc:
                raise self._fail(exc, f"{nothing} unless 'propledger log' shows it (the commit may not have "
                                      "been acknowledged)") from None
            except psycopg.Error as exc:
                raise self._fail(exc, nothing) from None
            finally:
                self._depth = 0

    @contextmanager
    def locked(self) -> Iterator[None]:
        """Hold off other writers of this craft around a whole read-validate-append (one transaction)."""
        with self._write("nothing was recorded"):
            yield

    def recorded_name(self, by: str | None) -> str:
        """The name a new entry will carry as ``by``: the session user, whatever ``--by`` says (the
        two-person rule compares this, so one role cannot approve twice under two typed names)."""
        self._connection()
        return str(self.user)

    def _names(self, by: str | None, default: str | None = None) -> dict[str, str]:
        """``by`` is the session user; a different name the writer gave is kept as ``on_behalf_of``
        (the operating-system login, the default when no --by is given, is not kept)."""
        out = {"by": str(self.user)}
        try:
            login = getpass.getuser()
        except Exception:  # noqa: BLE001 - no login name in some containers
            login = None
        if by and by != self.user and by not in (login, default):
            out["on_behalf_of"] = by
        return out

    def append(self, record: Mapping[str, Any]) -> dict[str, Any]:
        return self.append_many([record])[0]

    def append_many(self, records: list[Mapping[str, Any]]) -> list[dict[str, Any]]:
        """Number, link and insert entries in one transaction (all or none); returned once committed."""
        with self._write("nothing was recorded") as conn:
            seq, prev = self._head(conn)
            host, program = socket.gethostname(), f"propledger {__version__}"
            stored_all = []
            for record in records:
                seq += 1
                stored: dict[str, Any] = dict(record)
                stored.pop("on_behalf_of", None)
                stored.update(self._names(record.get("by")))
                stored.update(seq=seq, prev=prev, host=host, program=program)
                stored["hash"] = prev = digest(stored, new=True)
                stored_all.append(stored)
            with conn.cursor() as cur:
                cur.executemany("INSERT INTO propledger.entries (craft, seq, prev, hash, body) "
                                "VALUES (%s, %s, %s, %s, %s::json)",
                                [(self.craft, s["seq"], s["prev"], s["hash"], orjson.dumps(s).decode())
                                 for s in stored_all])
        return stored_all

    # --- live --------------------------------------------------------------------------------
    def change_key(self) -> tuple[int, bool]:
        """Changes when another writer's entry commits (LISTEN/NOTIFY on a connection of its own)."""
        if self._listener is None:
            self._listener = _Listener(self.conninfo, self.craft)
            self._listener.start()
            self._listener.ready.wait(CONNECT_TIMEOUT_S)
        return self._listener.generation, self._listener.down_since is None

    def live_note(self) -> str | None:
        """'disconnected ...' while the notification connection is down, else None."""
        lst = self._listener
        if lst is None or lst.down_since is None:
            return None
        return (f"disconnected from the database since {time.strftime('%H:%M:%S', time.gmtime(lst.down_since))} "
                f"UTC ({lst.reason}); reconnecting: entries shown may be out of date")


class _Listener(threading.Thread):
    """Waits for the server's notifications of new entries; reconnects every second while the server is away."""

    def __init__(self, conninfo: str, craft: str):
        super().__init__(daemon=True, name="propledger-listen")
        self.conninfo, self.craft = conninfo, craft
        self.generation = 0
        self.down_since: float | None = None
        self.reason = ""
        self.ready = threading.Event()
        self._halt = threading.Event()

    def stop(self) -> None:
        self._halt.set()

    def run(self) -> None:
        while not self._halt.is_set():
            try:
                with psycopg.connect(self.conninfo, autocommit=True, connect_timeout=CONNECT_TIMEOUT_S,
                                     application_name="propledger-listen") as conn:
                    conn.execute(f"LISTEN {pgschema.CHANNEL}")
                    if self.down_since is not None:  # back: whatever was appended meanwhile is read again
                        self.generation += 1
                    self.down_since = None
                    self.ready.set()
                    last_ping = time.monotonic()
                    while not self._halt.is_set():
                        for note in conn.notifies(timeout=0.25):
                            if note.payload.split(" ", 1)[0] == self.craft:
                                self.generation += 1
                        if time.monotonic() - last_ping > 5.0:  # a silent server is found out too
                            conn.execute("SELECT 1")
                            last_ping = time.monotonic()
            except psycopg.Error as exc:
                if self.down_since is None:
                    self.down_since = time.time()
                self.reason = _first_line(exc)
                self.ready.set()
                self._halt.wait(1.0)
