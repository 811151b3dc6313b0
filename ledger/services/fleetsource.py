"""Where a fleet's ledgers come from: a folder of ledger files or a PostgreSQL database of many craft.

A source lists its ``members()`` (the name each row is listed under: a file path, or a craft's address as
its own ``status`` shows it), gives each a ``fingerprint(member)`` that changes with any change to that
ledger (the fleet cache's key, ``services.fleet``), and builds a member's row (``row_for``; a picklable
``row_function`` so that cold rows run in worker processes). ``open_source`` picks the kind from the
``--fleet`` value: a ``postgresql://`` address without ``craft=`` is every craft in that database.

For a database the fingerprint is the craft's chain head (seq and hash), its definition's hash and the
database's count of edited rows (``store.pgfleet``): all read for every craft in one query. The fleet cache
of a database lives in the user's cache folder (platformdirs), in a file named by the SHA-256 of the
address without its password, sealed like every side cache; it may only save work, never change an answer.
Each worker process opens its own connection (nothing is left open when the workers start).
"""
from __future__ import annotations

import functools
import hashlib
import os
from typing import Any, Callable, Protocol

from ..errors import StoreError
from ..store.seam import is_url
from . import fleet


class Source(Protocol):
    """What ``services.fleet`` asks of a source."""

    kind: str
    label: str

    def members(self) -> list[str]: ...
    def fingerprint(self, member: str) -> str | None: ...
    def cache_base(self) -> str: ...


def open_source(spec: str):
    """The source for a ``--fleet`` value: ``FolderSource`` or ``DatabaseSource``."""
    if is_url(spec):
        return DatabaseSource(spec)
    return fleet.FolderSource(spec)


def spec_of(source) -> str:
    """The ``--fleet`` value that opens ``source`` again (a database address as given)."""
    return source.url if isinstance(source, DatabaseSource) else source.folder


def address(source, member: str) -> str:
    """What ``Ledger`` opens for ``member``: the file path, or the craft's full address."""
    return source.address(member) if isinstance(source, DatabaseSource) else member


def row_function(source) -> Callable[[str], dict[str, Any]]:
    return getattr(source, "row_function", None) or fleet.row_for_path


def row_for(source, member: str) -> dict[str, Any]:
    """The fleet row of one member (a ledger that cannot be read is an unreadable row, never an error)."""
    return row_function(source)(member)


def _craft_in(member: str) -> str:
    from urllib.parse import parse_qsl, urlsplit  # noqa: PLC0415

    return dict(parse_qsl(urlsplit(member).query))["craft"]


def _db_row(url: str, member: str) -> dict[str, Any]:
    """A database craft's row (module level, so worker processes can be handed it); the connection this
    opens is closed before returning."""
    from ..store.pgfleet import craft_address  # noqa: PLC0415
    from .ledger import Ledger  # noqa: PLC0415

    opened = []

    def opener(path: str):
        led = Ledger(path)
        opened.append(led)
        return led

    try:
        row = fleet._row_for_path(craft_address(url, _craft_in(member)), opener)
    finally:
        for led in opened:
            close = getattr(led.file, "close", None)
            if close is not None:
                close()
    row["ledger"] = member  # the craft's address as shown: never one with a password
    return row


class DatabaseSource:
    """Every craft in one PostgreSQL database (``postgresql://host/db``, no ``craft=``)."""

    kind = "database"

    def __init__(self, url: str):
        from ..store import pgfleet  # noqa: PLC0415 - psycopg only for a database fleet

        self.url = url
        self.conninfo, self.shown = pgfleet.parse_fleet_address(url)
        self._heads: dict[str, Any] = {}
        self._seen: dict[str, int] = {}
        self._names: dict[str, str] = {}
        self._members: dict[str, str] = {}
        self.listener = None
        self.row_function = functools.partial(_db_row, url)

    @property
    def label(self) -> str:
        return self.shown

    def _member(self, craft: str) -> str:
        name = self._members.get(craft)
        if name is None:
            from ..store.pgfleet import shown_craft  # noqa: PLC0415

            name = self._members[craft] = shown_craft(self.url, craft)
            self._names[name] = craft
        return name

    def craft_of(self, member: str) -> str:
        if member not in self._names:
            self._names[member] = _craft_in(member)
        return self._names[member]

    def address(self, member: str) -> str:
        from ..store.pgfleet import craft_address  # noqa: PLC0415

        return craft_address(self.url, self.craft_of(member))

    def _generations(self) -> dict[str, int]:
        lst = self.listener
        return {} if lst is None else lst.snapshot()[1]

    def members(self) -> list[str]:
        """Every craft, with its head read in the same one query (the fingerprints come from it)."""
        from ..store import pgfleet  # noqa: PLC0415

        gens = self._generations()  # before the query: a commit during it makes the next look read again
        heads = pgfleet.heads(self.conninfo, self.shown)
        self._heads, self._seen = dict(heads), gens
        return [self._member(c) for c in heads]

    def fingerprint(self, member: str) -> str | None:
        """The head as listed, or read again for this craft when a notification came in since (the key is
        always read before the row it is stored with, so it can only be older than the row, never newer)."""
        craft = self.craft_of(member)
        gen = self._generations().get(craft, 0)
        if craft in self._heads and self._seen.get(craft, 0) == gen:
            return self._heads[craft].key()
        from ..store import pgfleet  # noqa: PLC0415

        try:
            fresh = pgfleet.heads(self.conninfo, self.shown, craft)
        except StoreError:  # the server away: no key, so nothing is cached for this craft
            return None
        if craft not in fresh:
            return None
        self._heads[craft], self._seen[craft] = fresh[craft], gen
        return fresh[craft].key()

    def cache_base(self) -> str:
        """This database's fleet cache: in the user's cache folder, named by the address without password."""
        from platformdirs import user_cache_dir  # noqa: PLC0415

        folder = os.path.join(user_cache_dir("propledger", appauthor=False), "fleets")
        os.makedirs(folder, mode=0o700, exist_ok=True)
        return os.path.join(folder, hashlib.sha256(self.shown.encode()).hexdigest()[:32] + ".fleet-cache.json")

    # --- live (the console's fleet screen) ----------------------------------------------------------
    def stamps(self) -> dict[str, Any]:
        """member -> a value that changes when that craft does: its notification count. No query here: the
        listener thread LISTENs, and reads the one listing on (re)connection and every ``RELIST_S``."""
        from ..store import pgfleet  # noqa: PLC0415

        if self.listener is None:
            self.listener = pgfleet.FleetListener(self.conninfo, self.shown)
            self.listener.start()
            self.listener.ready.wait(10.0)
        heads, gens = self.listener.snapshot()
        if heads is None:
            raise StoreError(pgfleet.describe(self.listener) or f"{self.shown}: cannot list the fleet")
        return {self._member(c): (gens.get(c, 0), heads[c].edits) for c in heads}

    def live_note(self) -> str | None:
        from ..store.pgfleet import describe  # noqa: PLC0415

        return describe(self.listener)

    def close(self) -> None:
        if self.listener is not None:
            self.listener.stop()
