"""A ledger kept in a PostgreSQL database (psycopg 3): many craft in one database, each its own chain.

Selected by ``--ledger postgresql://[user@]host[:port]/db?craft=NAME`` (or PROPLEDGER_LEDGER); the rest of
the address is libpq's, so ``?host=/run/postgresql`` for a Unix socket, passwords from ~/.pgpass or
PGPASSWORD. The records and their SHA-256 chain are those of the file store (``chain.py``); the database
keeps the rules the file's lock keeps on one disk, and more (``pgschema``): append-only, each entry
the next link of its chain, ``by`` the authenticated session user (a different ``--by`` is kept as
``on_behalf_of``). An append is one transaction under a per-craft advisory lock, acknowledged only
once it has committed with ``synchronous_commit = on``: outside ``locked()`` that is one round trip
(``pgschema``'s ``append_entries``: lock, head check and insert in one autocommitted statement), linked
on the head this process last saw and relinked on the head the server returns when another writer was first.
"""
from __future__ import annotations

import threading
import time
from contextlib import contextmanager
from typing import Any, Iterator, Mapping, Sequence
from urllib.parse import parse_qsl, quote, urlencode, urlsplit, urlunsplit

import orjson

from .. import __version__
from ..errors import InputError, StoreError
from . import pgprefetch, pgschema
from .chain import GENESIS_PREV, Break, digest, verify_chain

class _LazyPsycopg:
    """psycopg, imported on first use: a command that only reads goes through libpq directly (``pgread``)
    and never pays psycopg's import (about 0.3 s of CPU)."""

    def __getattr__(self, name: str) -> Any:
        import psycopg as real  # noqa: PLC0415

        globals()["psycopg"] = real
        return getattr(real, name)


psycopg: Any = _LazyPsycopg()

FILE_SCHEMA = 1
"""The record layout (the craft link's ``schema``): the same as the ledger file's (ledgerfile.SCHEMA)."""
LOCK_TIMEOUT_S = 10.0
RELINKS = 200
"""How often an append relinks onto a head another writer moved, before it gives up."""
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
    conninfo = urlunsplit((parts.scheme, parts.netloc, parts.path, urlencode(rest, quote_via=quote), ""))  # libpq reads "+" as itself
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
        self._last_read: _Read | None = None
        """The last read (extended by this store's own appends): the verified mark's key, and reused by the
        next read while the server's head is still its head."""
        self._head_seen: tuple[int, str] | None = None
        """The chain head as this process last saw it (read or appended), to link the next append on."""
        self._layout_ok = False
        """The layout version was checked on this connection."""
        self._direct: Any = None
        """A libpq connection for reads before psycopg is needed (``pgread``)."""

    # --- connection --------------------------------------------------------------------------
    def _connection(self) -> psycopg.Connection:
        conn = self._conn
        if conn is not None and not conn.closed and not conn.broken:
            return conn
        try:
            conn = psycopg.connect(self.conninfo, autocommit=True, connect_timeout=CONNECT_TIMEOUT_S,
                                   application_name="propledger", options=self._options())
        except psycopg.Error as exc:
            raise StoreError(f"{self.path}: cannot reach the database ({_first_line(exc)}); nothing was changed") from None
        self._conn, self.user, self._layout_ok = conn, None, False
        self._close_direct()
        return conn

    def _close_direct(self) -> None:
        if self._direct is not None:
            self._direct.close()
            self._direct = None

    def _query_direct(self, sql: str, params: Sequence[str]) -> list[tuple[bytes | None, ...]] | None:
        """Rows of one read statement through libpq itself, before psycopg is needed (None: use psycopg)."""
        from . import pgread  # noqa: PLC0415

        try:
            if self._direct is None:
                self._direct = pgread.connect(self.conninfo, CONNECT_TIMEOUT_S)
                if self._direct is None:
                    return None
            return self._direct.query(sql.replace("%s", "$1"), params)  # one parameter, libpq's spelling
        except pgread.ReadError as exc:
            self._close_direct()
            first = _first_line(exc)
            if exc.connecting:
                raise StoreError(f"{self.path}: cannot reach the database ({first}); nothing was changed") from None
            if exc.sqlstate in ("42P01", "3F000"):  # undefined table, invalid schema name
                raise self._fail_text("tables", first, "nothing was changed") from None
            if exc.sqlstate is None or exc.sqlstate.startswith("08"):
                raise self._fail_text("lost", first, "nothing was changed") from None
            raise self._fail_text("refused", first, "nothing was changed") from None

    def _options(self) -> str:
        """The session settings, sent with the connection (no round trip of their own): synchronous commit
        on whatever the server's default, and the lock timeout; after any ``options`` the address gives."""
        from psycopg.conninfo import conninfo_to_dict  # noqa: PLC0415

        given = str(conninfo_to_dict(self.conninfo).get("options") or "")
        return f"{given} -c synchronous_commit=on -c lock_timeout={int(self.lock_timeout * 1000)}".strip()

    def _session_user(self, conn: psycopg.Connection) -> str:
        if self.user is None:
            self.user = str(conn.execute("SELECT session_user").fetchone()[0])
        return self.user

    def _idle_connection(self) -> psycopg.Connection:
        """The connection for a statement that must not be sent twice: when the server has spoken on an idle
        connection (it does so before it closes one: shutdown, restart, idle timeout), probe it first, so
        a connection that died while idle is replaced before anything is sent, as a BEGIN used to find out."""
        conn = self._connection()
        import select  # noqa: PLC0415

        try:
            readable = select.select([conn.fileno()], [], [], 0)[0]
        except (OSError, ValueError, psycopg.Error):
            readable = True
        if readable:
            try:
                conn.execute("SELECT 1")
            except psycopg.Error:
                self._drop(conn)
                conn = self._connection()
        return conn

    def close(self) -> None:
        self._close_direct()
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
            return self._fail_text("tables", _first_line(exc), doing)
        if isinstance(exc, psycopg.OperationalError):
            return self._fail_text("lost", _first_line(exc), doing)
        return self._fail_text("refused", _first_line(exc), doing)

    def _fail_text(self, kind: str, first: str, doing: str) -> StoreError:
        if kind == "tables":
            return StoreError(f"{self.path}: no propledger tables in this database; create them and the craft "
                              "with 'propledger init --craft FILE'")
        if kind == "lost":
            return StoreError(f"{self.path}: database connection lost ({first}); {doing}")
        return StoreError(f"{self.path}: the database refused ({first}); {doing}")

    def _read(self, fn):
        """Run a read (retried once on a fresh connection if the old one had dropped)."""
        with self._guard:
            for attempt in (1, 2):
                conn = self._connection()
                try:
                    return fn(conn)  # one statement is one snapshot: no transaction of its own
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
            st._session_user(conn)
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
            conn.execute(pgschema.CREATE)  # layout 1, then every migration, as an older database gets them
            self._check_version(conn, announce=False)
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

    def _check_version(self, conn: psycopg.Connection, version: Any = False, announce: bool = True) -> None:
        """Refuse a layout newer than this program's, migrate an older one (``version``: already read)."""
        if version is False:
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
            if announce:
                self.notices.append(f"database layout migrated from version {version} to {version + 1}")
            version += 1
        self._layout_ok = True

    # --- reading -----------------------------------------------------------------------------
    def exists(self) -> bool:
        return self._read(lambda c: c.execute(
            "SELECT 1 FROM pg_namespace n JOIN pg_class t ON t.relnamespace = n.oid "
            "WHERE n.nspname = 'propledger' AND t.relname = 'crafts'").fetchone() is not None
            and c.execute("SELECT 1 FROM propledger.crafts WHERE name = %s", [self.craft]).fetchone() is not None)

    def _meta(self, conn: psycopg.Connection) -> dict[str, Any]:
        if not self._layout_ok:
            self._check_version(conn)
        row = conn.execute("SELECT meta::text FROM propledger.crafts WHERE name = %s", [self.craft]).fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no craft {self.craft!r} in this database; create it with "
                             "'propledger init --craft FILE'")
        return orjson.loads(row[0])

    _READ_ANY = ("SELECT (SELECT max(version) FROM propledger.versions), c.meta::text, "
                 "(SELECT coalesce(json_agg(e.body), '[]')::text "
                 "FROM propledger.entries e WHERE e.craft = c.name) FROM propledger.crafts c WHERE c.name = %s")
    """Every entry in the order the server finds them: for an append-only table that is the order they were
    inserted, so in sequence, and the server skips sorting 20,000 rows (about 20-35 ms of a 50-70 ms read:
    its sort of a 7 MB aggregate spills to disk at the default work_mem). ``_in_order`` checks each read;
    one that is not in sequence (a scan that started mid-table, a table rewritten) is read again sorted."""
    _READ = _READ_ANY.replace("json_agg(e.body)", "json_agg(e.body ORDER BY e.seq)")
    _HEAD = ("SELECT (SELECT max(version) FROM propledger.versions), coalesce(e.seq, 0), coalesce(e.hash, c.hash) "
             "FROM propledger.crafts c LEFT JOIN LATERAL (SELECT seq, hash FROM propledger.entries "
             "WHERE craft = c.name ORDER BY seq DESC LIMIT 1) e ON true WHERE c.name = %s")

    def read(self) -> tuple[dict[str, Any], list[dict[str, Any]]]:
        """The craft link and the entry records in sequence order: one statement (the layout version, the
        craft link and every entry as one JSON array, decoded once). When this store read the craft before
        and the server's head is still the head of what it read (and appended since), the records of that
        read are returned again without fetching them (the entries are append-only in the server, and the
        head hash pins every link before it)."""
        with self._guard:
            if self._conn is None and not self._depth and self._last_read is None:
                got = pgprefetch.take(self.url, self.conninfo, self.craft) if pgprefetch.started() else None
                if got is not None:
                    if self._direct is None:
                        self._direct = got[0]
                    elif got[0] is not None:
                        got[0].close()
                    rows = got[1]
                else:
                    rows = self._query_direct(self._READ_ANY, [self.craft])
                if rows is not None and rows and rows[0][0] == str(pgschema.VERSION).encode():
                    meta, records = orjson.loads(rows[0][1]), orjson.loads(rows[0][2])
                    if not _in_order(records):
                        rows = self._query_direct(self._READ, [self.craft])
                        meta, records = orjson.loads(rows[0][1]), orjson.loads(rows[0][2])
                    self._last_read = _Read(meta, records, (rows[0][1], rows[0][2]))
                    self._head_seen = self._last_read.head
                    return meta, records
                self._close_direct()  # no craft, another layout or no libpq: psycopg says which, or migrates

        def go(conn):
            last = self._last_read
            if last is not None:
                head = self._head(conn)
                if head == last.head:
                    return last.meta, last.records
            row = conn.execute(self._READ_ANY, [self.craft]).fetchone()
            if row is None or row[0] != pgschema.VERSION or not self._layout_ok:
                self._check_version(conn, row[0] if row is not None else False)
                if row is None or row[0] != pgschema.VERSION:
                    row = conn.execute(self._READ_ANY, [self.craft]).fetchone()
                if row is None:
                    self._meta(conn)  # the one error for a missing craft
            meta, records = orjson.loads(row[1]), orjson.loads(row[2])
            if not _in_order(records):
                row = conn.execute(self._READ, [self.craft]).fetchone()
                meta, records = orjson.loads(row[1]), orjson.loads(row[2])
            self._last_read = _Read(meta, records, (row[1], row[2]))
            self._head_seen = self._last_read.head
            return meta, records
        return self._read(go)

    def meta(self) -> dict[str, Any]:
        return self._read(self._meta)

    def records(self) -> list[dict[str, Any]]:
        return self.read()[1]

    def _head(self, conn: psycopg.Connection) -> tuple[int, str]:
        """(seq, hash) of the craft's last link, in one statement (the layout checked on the way)."""
        row = conn.execute(self._HEAD, [self.craft]).fetchone()
        if row is None or row[0] != pgschema.VERSION or not self._layout_ok:
            self._check_version(conn, row[0] if row is not None else False)
            if row is None:
                self._meta(conn)  # the one error for a missing craft
        self._head_seen = (int(row[1]), str(row[2]))
        return self._head_seen

    def head(self) -> tuple[int, str]:
        with self._guard:
            if self._conn is None and not self._depth:
                rows = self._query_direct(self._HEAD, [self.craft])
                if rows is not None and rows and rows[0][0] == str(pgschema.VERSION).encode():
                    self._head_seen = (int(rows[0][1]), rows[0][2].decode())
                    return self._head_seen
            return self._read(self._head)

    def verify(self) -> Break | None:
        """The full chain check, and that every stored row agrees with its record and its server-recorded user."""
        self._last_read = None  # from the server, never from this process's memory
        meta, records = self.read()
        brk = verify_chain(meta, records)
        if brk is not None:
            return brk

        def rows(conn):
            return conn.execute(self._ROWS, [self.craft]).fetchone()
        bad = None
        direct = self._query_direct(self._ROWS, [self.craft]) if self._conn is None else None
        if direct is not None:
            if direct:
                seq, by, db_user, columns = direct[0]
                bad = (int(seq), by.decode() if by is not None else None, db_user.decode(), columns == b"t")
        else:
            bad = self._read(rows)
        if bad is None:
            return None
        seq, by, db_user, columns = bad
        if columns:
            return Break(int(seq), "the row's seq, prev or hash columns differ from its record (edited in the database)")
        return Break(int(seq), f"recorded by {by!r} but the database user who inserted it was {db_user!r} "
                               "(edited in the database)")

    _ROWS = ("SELECT e.seq, e.body->>'by', e.db_user, (e.body->>'hash') IS DISTINCT FROM e.hash "
             "OR (e.body->>'prev') IS DISTINCT FROM e.prev OR (e.body->>'seq') IS DISTINCT FROM e.seq::text "
                "FROM propledger.entries e JOIN propledger.crafts c ON c.name = e.craft WHERE e.craft = %s AND "
                "((e.seq > c.imported_through AND (e.body->>'by') IS DISTINCT FROM e.db_user::text) "
                "OR (e.body->>'hash') IS DISTINCT FROM e.hash OR (e.body->>'prev') IS DISTINCT FROM e.prev "
                "OR (e.body->>'seq') IS DISTINCT FROM e.seq::text) ORDER BY e.seq LIMIT 1")

    def verify_cached(self, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> Break | None:
        """The chain check, skipped when exactly these bytes (by SHA-256) verified before, under a mark sealed
        with a key in the user's cache folder (``seam.side_path``, ``verifiedmark``), as for a ledger file:
        the server refuses edits, but a superuser's edit changes the bytes and brings the full check back.
        ``propledger verify`` always does the full check."""
        last = self._last_read
        if last is None or last.meta is not meta or last.records is not records:
            return verify_chain(meta, records)
        if last.verified:  # checked in this process already (and extended only by links it made itself)
            return None
        if last.texts is None:
            brk = verify_chain(meta, records)
            last.verified = brk is None
            return brk
        import hashlib  # noqa: PLC0415

        from . import verifiedmark  # noqa: PLC0415
        from .seam import side_path  # noqa: PLC0415

        h = hashlib.sha256(_bytes(last.texts[0]))
        h.update(b"\n")
        h.update(_bytes(last.texts[1]))
        digest = h.hexdigest()
        where = side_path(self.path)
        if verifiedmark.is_marked(where, digest):
            last.verified = True
            return None
        brk = verify_chain(meta, records)
        if brk is None:
            verifiedmark.mark(where, digest)
        last.verified = brk is None
        return brk

    def recorded_heads(self) -> list[Any]:
        return []

    def hint(self) -> str:
        return ("The database keeps no backups of its own here: restore the database from its backup, or copy a "
                "good ledger file in with 'propledger copy'")

    # --- locking and the one write path ------------------------------------------------------
    @contextmanager
    def _errors(self, nothing: str) -> Iterator[None]:
        """One line for whatever the database says during a write (``nothing``: what was not changed)."""
        try:
            yield
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

    @contextmanager
    def _write(self, nothing: str) -> Iterator[psycopg.Connection]:
        """A write transaction holding the craft's advisory lock (re-entrant); committed when the block ends.
        BEGIN and the lock go in one message (one round trip), the COMMIT in another."""
        with self._guard:
            if self._depth:
                self._depth += 1
                try:
                    yield self._conn
                finally:
                    self._depth -= 1
                return
            try:
                with self._errors(nothing):
                    conn = self._idle_connection()
                    try:
                        conn.execute(self._begin_locked(), prepare=False)
                    except BaseException:
                        self._rollback(conn)
                        raise
                    self._depth = 1
                    try:
                        yield conn
                    except BaseException:
                        self._depth = 0
                        self._rollback(conn)
                        raise
                    self._depth = 0
                    if conn.info.transaction_status != psycopg.pq.TransactionStatus.INTRANS:
                        self._rollback(conn)
                        raise StoreError(f"{self.path}: the write transaction failed; {nothing}")
                    cur = conn.execute("COMMIT")  # the write is acknowledged only after this returns
                    if cur.statusmessage != "COMMIT":
                        raise StoreError(f"{self.path}: the server did not commit ({cur.statusmessage}); {nothing}")
            finally:
                self._depth = 0

    def _begin_locked(self):
        from psycopg import sql  # noqa: PLC0415

        return sql.SQL("BEGIN; SELECT pg_advisory_xact_lock(hashtext({}))").format(
            sql.Literal("propledger " + self.craft))

    def _rollback(self, conn: psycopg.Connection) -> None:
        if conn.closed or conn.broken:
            return
        try:
            if conn.info.transaction_status != psycopg.pq.TransactionStatus.IDLE:
                conn.execute("ROLLBACK")
        except psycopg.Error:
            self._drop(conn)

    def _drop(self, conn: psycopg.Connection) -> None:
        """Forget a connection that failed (closing it may fail too); the next use opens a new one."""
        try:
            conn.close()
        except psycopg.Error:
            pass
        self._conn = None

    @contextmanager
    def locked(self) -> Iterator[None]:
        """Hold off other writers of this craft around a whole read-validate-append (one transaction)."""
        with self._write("nothing was recorded"):
            yield

    def recorded_name(self, by: str | None) -> str:
        """The name a new entry will carry as ``by``: the session user, whatever ``--by`` says (the
        two-person rule compares this, so one role cannot approve twice under two typed names)."""
        with self._guard:
            try:
                return self._session_user(self._connection())
            except psycopg.Error as exc:
                raise self._fail(exc, "nothing was changed") from None

    def _names(self, by: str | None, default: str | None = None) -> dict[str, str]:
        """``by`` is the session user; a different name the writer gave is kept as ``on_behalf_of``
        (the operating-system login, the default when no --by is given, is not kept)."""
        out = {"by": str(self.user)}
        import getpass  # noqa: PLC0415 - only to write

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
        """Number, link and insert entries in one transaction (all or none); returned once committed.

        Outside ``locked()`` this is one autocommitted call of ``append_entries`` (one round trip when this
        store knows the head); inside, it joins the lock's transaction, committed when the block ends."""
        records = list(records)
        if not records:
            return []
        with self._guard:
            if self._depth:
                return self._append_on(self._conn, records)
            with self._errors("nothing was recorded"):
                return self._append_on(self._idle_connection(), records)

    _APPEND = ("SELECT head_seq, head_hash FROM propledger.append_entries(%s, %s, %s, %s::text[], %s::json[])")

    def _append_on(self, conn: psycopg.Connection, records: list[Mapping[str, Any]]) -> list[dict[str, Any]]:
        head = self._head_seen if self._head_seen is not None and self._layout_ok else self._head(conn)
        self._session_user(conn)
        import socket  # noqa: PLC0415 - only to write (its import is about 6 ms of a read-only command)

        host, program = socket.gethostname(), f"propledger {__version__}"
        for _ in range(RELINKS):
            seq, prev = head
            stored_all, texts = [], []
            for record in records:
                seq += 1
                stored: dict[str, Any] = dict(record)
                stored.pop("on_behalf_of", None)
                stored.update(self._names(record.get("by")))
                stored.update(seq=seq, prev=prev, host=host, program=program)
                stored["hash"] = prev = digest(stored, new=True)
                stored_all.append(stored)
                texts.append(orjson.dumps(stored).decode())
            row = conn.execute(self._APPEND, [self.craft, head[0] + 1, head[1], [s["hash"] for s in stored_all],
                                              texts]).fetchone()
            if row is None or row[0] is None:
                self._meta(conn)  # the one error for a missing craft
                raise StoreError(f"{self.path}: craft {self.craft!r} has no chain head; nothing was recorded")
            got = (int(row[0]), str(row[1]))
            if got == (seq, prev):  # ours: the server linked them on the head they name
                self._linked(head, texts)
                self._head_seen = got
                return stored_all
            head = got  # another writer was first: link onto the head the server returned
        raise StoreError(f"{self.path}: craft {self.craft!r} kept moving under {RELINKS} attempts; nothing was "
                         "recorded; try again")

    def _linked(self, base: tuple[int, str], texts: list[str]) -> None:
        """Extend the last read with the entries just linked on its head (as a fresh read would parse them)."""
        last = self._last_read
        if last is None or last.head != base:
            self._last_read = None
            return
        self._last_read = _Read(last.meta, last.records + [orjson.loads(t) for t in texts], None, last.verified)

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


def _in_order(records: Sequence[Any]) -> bool:
    """Whether the records carry the sequence numbers 1, 2, ... in this order (as a chain that verifies
    does): then they are in the order ``ORDER BY seq`` gives. Anything else, including a record edited
    out of shape, is read again in the server's order of the seq column, which ``verify`` judges."""
    try:
        return all(r["seq"] == i for i, r in enumerate(records, 1))
    except (KeyError, TypeError):
        return False


def _bytes(text: str | bytes) -> bytes:
    return text if isinstance(text, bytes) else text.encode()


class _Read:
    """One read of a craft: the parsed link and records, the texts they came from (the verified mark's key;
    None once this store's own appends extended the records) and whether they were verified here."""

    __slots__ = ("meta", "records", "texts", "verified")

    def __init__(self, meta: dict[str, Any], records: list[dict[str, Any]], texts: tuple[Any, Any] | None,
                 verified: bool = False):
        self.meta, self.records, self.texts, self.verified = meta, records, texts, verified

    @property
    def head(self) -> tuple[int, str]:
        last = self.records[-1] if self.records else self.meta
        return int(last.get("seq", 0)), str(last.get("hash", ""))


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
