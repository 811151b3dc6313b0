"""A real PostgreSQL server for the database-store tests: one throwaway cluster per test session, started
from the machine's initdb/pg_ctl in a temporary folder (as the postgres user when we are root) and
stopped at the end. If it cannot start, the tests fail: they are never skipped for want of a server.
"""
from __future__ import annotations

import itertools
import os
import sys

import pytest

sys.path.insert(0, os.path.dirname(__file__))
from cluster import OWNER, Cluster, start_cluster  # noqa: E402

from ledger.store import pgschema  # noqa: E402

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
CRAFT_FILE = os.path.join(ROOT, "scenarios", "geo-comsat.yaml")
_names = itertools.count(1)


@pytest.fixture(scope="session")
def pg() -> Cluster:
    cluster = start_cluster()  # raises (the test errors, never skips) when the server cannot start
    try:
        yield cluster
    finally:
        cluster.destroy()


@pytest.fixture(scope="session")
def pg_schema(pg: Cluster) -> Cluster:
    """The propledger tables created by ``init`` as the owner role, then the grants of docs/postgresql.md."""
    from ledger.cli import main  # noqa: PLC0415

    assert main(["--ledger", pg.url(user=OWNER, craft="first"), "init", "--craft", CRAFT_FILE]) == 0
    pg.psql(pgschema.GRANTS.format(role="pl_ops"), user=OWNER)
    return pg


@pytest.fixture
def craft_url(pg_schema: Cluster) -> str:
    """A fresh craft (its own chain) created by alice in the shared database."""
    from ledger.cli import main  # noqa: PLC0415

    url = pg_schema.url(craft=f"c{next(_names)}")
    assert main(["--ledger", url, "init", "--craft", CRAFT_FILE]) == 0
    return url
