"""Read-only statements on a database ledger through libpq itself (ctypes), for commands that only read.

Why: importing psycopg costs about 0.3 s of CPU in a fresh process (its adapters, error classes, package
metadata), as much as the whole ``status`` of a 20k-entry ledger file; a read needs one connection and a
parameterised SELECT whose results are text. libpq is the library psycopg itself calls, so the address,
the authentication (~/.pgpass, PGPASSWORD, certificates), TLS and the error texts are the same. Writes,
LISTEN and layout migrations go through psycopg (``pgstore``). ``connect`` returns None when no libpq can
be loaded (the caller then uses psycopg): the system's ``libpq.so.5``, else the one psycopg-binary ships.
"""
from __future__ import annotations

import ctypes
import os
from typing import Any, Iterator, Sequence

CONNECTION_OK = 0
PGRES_TUPLES_OK = 2
PG_DIAG_SQLSTATE = ord("C")
_lib: Any = None


class ReadError(Exception):
    """A failed connection (``sqlstate`` None, ``connecting`` True) or statement, with libpq's message."""

    def __init__(self, message: str, sqlstate: str | None, connecting: bool = False):
        super().__init__(message)
        self.sqlstate, self.connecting = sqlstate, connecting


def _candidates() -> Iterator[str]:
    """The system's libpq first; only when it does not load, the one psycopg-binary ships (looked for then)."""
    yield from ("libpq.so.5", "libpq.5.dylib")
    try:
        import importlib.util  # noqa: PLC0415

        spec = importlib.util.find_spec("psycopg_binary")  # found, not imported
    except (ImportError, ValueError):
        spec = None
    import glob  # noqa: PLC0415

    for folder in (spec.submodule_search_locations or []) if spec else []:
        yield from sorted(glob.glob(os.path.join(os.path.dirname(folder), "psycopg_binary.libs", "libpq*.so*")))


def _libpq() -> Any:
    global _lib
    if _lib is None:
        _lib = False
        for name in _candidates():
            try:
                lib = ctypes.CDLL(name)
            except OSError:
                continue
            p, i, s = ctypes.c_void_p, ctypes.c_int, ctypes.c_char_p
            for fn, res, args in (("PQconnectdbParams", p, [ctypes.POINTER(s), ctypes.POINTER(s), i]),
                                  ("PQstatus", i, [p]), ("PQerrorMessage", s, [p]), ("PQfinish", None, [p]),
                                  ("PQexecParams", p, [p, s, i, p, ctypes.POINTER(s), p, p, i]),
                                  ("PQresultStatus", i, [p]), ("PQresultErrorField", s, [p, i]),
                                  ("PQresultErrorMessage", s, [p]), ("PQntuples", i, [p]), ("PQnfields", i, [p]),
                                  ("PQgetisnull", i, [p, i, i]), ("PQgetvalue", p, [p, i, i]),
                                  ("PQgetlength", i, [p, i, i]), ("PQclear", None, [p])):
                f = getattr(lib, fn)
                f.restype, f.argtypes = res, args
            _lib = lib
            break
    return _lib or None


def _strings(values: Sequence[str]) -> Any:
    return (ctypes.c_char_p * (len(values) + 1))(*[v.encode() for v in values], None)


class Reader:
    """One libpq connection; ``query`` gives rows of bytes (None for NULL)."""

    def __init__(self, lib: Any, handle: int):
        self.lib, self.handle = lib, handle

    def query(self, sql: str, params: Sequence[str]) -> list[tuple[bytes | None, ...]]:
        lib = self.lib
        res = lib.PQexecParams(self.handle, sql.encode(), len(params), None, _strings(params), None, None, 0)
        try:
            if not res or lib.PQresultStatus(res) != PGRES_TUPLES_OK:
                msg = (lib.PQresultErrorMessage(res) if res else None) or lib.PQerrorMessage(self.handle) or b""
                state = lib.PQresultErrorField(res, PG_DIAG_SQLSTATE) if res else None
                raise ReadError(msg.decode(errors="replace").strip(), state.decode() if state else None)
            rows = []
            for r in range(lib.PQntuples(res)):
                rows.append(tuple(None if lib.PQgetisnull(res, r, c) else
                                  ctypes.string_at(lib.PQgetvalue(res, r, c), lib.PQgetlength(res, r, c))
                                  for c in range(lib.PQnfields(res))))
            return rows
        finally:
            if res:
                lib.PQclear(res)

    def close(self) -> None:
        if self.handle:
            self.lib.PQfinish(self.handle)
            self.handle = None


def connect(conninfo: str, timeout: int) -> Reader | None:
    """A read connection to ``conninfo`` (a libpq address), or None when libpq is not available here."""
    lib = _libpq()
    if lib is None:
        return None
    keys = _strings(["dbname", "client_encoding", "application_name", "connect_timeout"])
    values = _strings([conninfo, "UTF8", "propledger", str(timeout)])
    handle = lib.PQconnectdbParams(keys, values, 1)
    if not handle:
        raise ReadError("out of memory", None, connecting=True)
    if lib.PQstatus(handle) != CONNECTION_OK:
        msg = (lib.PQerrorMessage(handle) or b"").decode(errors="replace").strip()
        lib.PQfinish(handle)
        raise ReadError(msg, None, connecting=True)
    return Reader(lib, handle)
