"""The store seam: the few calls services, CLI and console make on a ledger, whichever store keeps it.

Two stores stand behind it: the ledger file (``ledgerfile.LedgerFile``, the embedded default) and a
PostgreSQL database (``pgstore.PgStore``, chosen by a ``postgresql://...?craft=NAME`` address). Both
keep the same records linked by the same SHA-256 chain (``chain.py``), so a ledger moves between them
with its head hash unchanged. The database driver is imported only when such an address is used.
"""
from __future__ import annotations

from typing import Any, ContextManager, Hashable, Mapping, Protocol, Sequence

from .chain import Break

URL_SCHEMES = ("postgresql://", "postgres://")


class Store(Protocol):
    """One ledger: a craft definition (the chain's first link) and its entries in sequence order.

    Only ``append``/``append_many`` write; each new record's ``prev`` is the current head (the store
    numbers and links it). ``locked()`` holds off other writers around a read-validate-append."""

    path: str
    """Where the ledger lives, as shown to users (a file path, or the address without a password)."""
    notices: list[str]

    def exists(self) -> bool: ...
    def read(self) -> tuple[dict[str, Any], list[dict[str, Any]]]: ...
    def meta(self) -> dict[str, Any]: ...
    def records(self) -> list[dict[str, Any]]: ...
    def head(self) -> tuple[int, str]: ...
    def verify(self) -> Break | None: ...
    def verify_cached(self, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> Break | None: ...
    def locked(self) -> ContextManager[None]: ...
    def append(self, record: Mapping[str, Any]) -> dict[str, Any]: ...
    def append_many(self, records: list[Mapping[str, Any]]) -> list[dict[str, Any]]: ...
    def change_key(self) -> Hashable: ...
    def hint(self) -> str: ...
    def recorded_heads(self) -> list[Any]: ...


def is_url(path: str | None) -> bool:
    """Is ``path`` a database address rather than a file path?"""
    return bool(path) and str(path).lower().startswith(URL_SCHEMES)


def side_path(path: str) -> str:
    """Where the side caches of a ledger live: beside a ledger file; for a database craft, under a private
    folder of the user's cache directory named by the address's digest (they only ever save work)."""
    if not is_url(path):
        return path
    import hashlib  # noqa: PLC0415
    import os  # noqa: PLC0415

    from platformdirs import user_cache_dir  # noqa: PLC0415

    folder = os.path.join(user_cache_dir("propledger", appauthor=False), "databases")
    os.makedirs(folder, mode=0o700, exist_ok=True)
    return os.path.join(folder, hashlib.sha256(path.encode()).hexdigest()[:32] + ".ledger")


def open_store(path: str) -> Store:
    """The store for a ``--ledger`` value (a file path or a postgresql:// address)."""
    if is_url(path):
        from .pgstore import PgStore  # noqa: PLC0415 - psycopg only for a database address

        return PgStore(path)
    from .ledgerfile import LedgerFile  # noqa: PLC0415

    return LedgerFile(path)


def create_store(path: str, craft: Mapping[str, Any], created: str, by: str) -> Store:
    """A new ledger holding only the craft definition (never over an existing one)."""
    if is_url(path):
        from .pgstore import PgStore  # noqa: PLC0415

        return PgStore.create(path, craft, created, by)
    from .ledgerfile import LedgerFile  # noqa: PLC0415

    return LedgerFile.create(path, craft, created, by)


def adopt_store(path: str, meta: Mapping[str, Any], records: Sequence[Mapping[str, Any]]) -> Store:
    """A new ledger holding exactly ``meta`` and ``records`` as stored elsewhere (same links, same head)."""
    if is_url(path):
        from .pgstore import PgStore  # noqa: PLC0415

        return PgStore.adopt(path, meta, records)
    from .ledgerfile import LedgerFile  # noqa: PLC0415

    return LedgerFile.adopt(path, meta, records)
