"""Send a read-only command's first read of a database ledger while the command's modules import.

Why: ``status`` from a database waits 40-60 ms for the server (a new backend, then the scan and aggregate
of every entry), and its first quarter second goes to importing numpy and the command's modules while the
other core stays idle. Here the read statement goes out on a thread at start-up: libpq releases the
interpreter lock while it connects and waits, so the server works during the imports. The store's first
read takes the rows (or the error) exactly as if it had sent the statement itself at that moment; a read
is a snapshot of the chain either way. Only commands that write nothing are prefetched (``READ_ONLY``), and
whatever a command did not take is dropped when it ends, so no later command can be answered from it.
"""
from __future__ import annotations

import threading
from typing import Any

READ_ONLY = frozenset({"status", "check", "log", "export"})
"""Commands whose first act on the ledger is this read and that write nothing to it."""

_pending: dict[str, "_Fetch"] = {}


class _Fetch(threading.Thread):
    def __init__(self, url: str):
        super().__init__(name="propledger-prefetch", daemon=True)
        self.url = url
        self.store: Any = None
        self.rows: Any = None
        self.error: BaseException | None = None
        self._state = threading.Lock()
        self.finished = self.abandoned = False

    def run(self) -> None:
        try:
            from .pgstore import PgStore  # noqa: PLC0415

            self.store = PgStore(self.url)
            self.rows = self.store._query_direct(PgStore._READ_ANY, [self.store.craft])
        except Exception as exc:  # noqa: BLE001 - handed to the store's own read, which reports it
            self.error = exc
        with self._state:
            self.finished, abandoned = True, self.abandoned
        if abandoned:
            _close(self)

    def abandon(self) -> None:
        """No one will take this read: close its connection now, or when the thread ends (not waited for:
        a command that failed early must not wait out the connect timeout of a server that is away)."""
        with self._state:
            self.abandoned, done = True, self.finished
        if done:
            _close(self)


def start(url: str) -> None:
    """Begin the read of the craft at ``url`` (a postgresql:// address) on a thread."""
    if url in _pending:
        return
    fetch = _Fetch(url)
    _pending[url] = fetch
    fetch.start()


def started() -> bool:
    return bool(_pending)


def take(url: str, conninfo: str, craft: str) -> tuple[Any, Any] | None:
    """(the read connection, the rows) fetched for ``url``, once; None when none was started for it.
    The error the fetch met is raised instead, so an unreachable server is waited for only once."""
    fetch = _pending.pop(url, None)
    if fetch is None:
        return None
    fetch.join()
    if fetch.error is not None:
        raise fetch.error
    if fetch.store is None or fetch.store.conninfo != conninfo or fetch.store.craft != craft:
        _close(fetch)
        return None
    reader, fetch.store._direct = fetch.store._direct, None
    return reader, fetch.rows


def drop() -> None:
    """Forget every fetch not taken (at the end of a command); each closes its connection."""
    while _pending:
        _pending.popitem()[1].abandon()


def _close(fetch: _Fetch) -> None:
    if fetch.store is not None:
        fetch.store._close_direct()
