"""A throwaway PostgreSQL cluster for the tests and the benchmark: initdb and pg_ctl in a temporary folder,
listening only on a Unix socket there; run as the ``postgres`` user (through runuser) when we are root,
since the server refuses to run as root. Nothing of the machine's own PostgreSQL set-up is touched.
"""
from __future__ import annotations

import glob
import os
import shutil
import subprocess
import tempfile

SUPERUSER = "postgres"
OWNER = "pl_owner"
"""The role that runs ``propledger init`` (creates the tables) and owns them."""
OPERATORS = ("alice", "bob")
"""Login roles of engineers, members of ``pl_ops``: SELECT and INSERT on the ledger tables, nothing else."""


def _bin(name: str) -> str:
    found = shutil.which(name)
    if found:
        return found
    for cand in sorted(glob.glob(f"/usr/lib/postgresql/*/bin/{name}"), reverse=True):
        return cand
    raise RuntimeError(f"PostgreSQL's {name} is not installed (Debian: apt-get install postgresql)")


class Cluster:
    def __init__(self, base: str | None = None):
        self.base = tempfile.mkdtemp(prefix="propledger-pg-", dir=base)
        self.data = os.path.join(self.base, "data")
        self.sock = os.path.join(self.base, "sock")
        self.log = os.path.join(self.base, "server.log")
        self.as_root = os.geteuid() == 0
        os.mkdir(self.sock)
        if self.as_root:
            os.chmod(self.base, 0o755)
            shutil.chown(self.base, SUPERUSER)
            shutil.chown(self.sock, SUPERUSER)

    def _run(self, *cmd: str, check: bool = True) -> subprocess.CompletedProcess:
        full = ["runuser", "-u", SUPERUSER, "--", *cmd] if self.as_root else list(cmd)
        return subprocess.run(full, capture_output=True, text=True, check=check, timeout=120)

    def init(self) -> None:
        self._run(_bin("initdb"), "-D", self.data, "-U", SUPERUSER, "--auth=trust", "--no-sync", "-E", "UTF8",
                  "--locale=C")

    def running(self) -> bool:
        return self._run(_bin("pg_ctl"), "-D", self.data, "status", check=False).returncode == 0

    def start(self) -> None:
        """Start the server (nothing to do when it already runs)."""
        if os.path.exists(os.path.join(self.data, "postmaster.pid")) and self.running():
            return
        opts = f"-k {self.sock} -c listen_addresses='' -c fsync=on -c synchronous_commit=on -c max_connections=60"
        res = self._run(_bin("pg_ctl"), "-D", self.data, "-o", opts, "-l", self.log, "-w", "-t", "60", "start",
                        check=False)
        if res.returncode != 0:
            tail = open(self.log).read()[-2000:] if os.path.exists(self.log) else ""
            raise RuntimeError(f"pg_ctl start failed: {res.stdout} {res.stderr} {tail}")

    def stop(self, mode: str = "fast") -> None:
        self._run(_bin("pg_ctl"), "-D", self.data, "-m", mode, "-w", "-t", "60", "stop", check=False)

    def destroy(self) -> None:
        self.stop("immediate")
        shutil.rmtree(self.base, ignore_errors=True)

    def url(self, db: str = "ledgers", user: str = "alice", craft: str = "sat1") -> str:
        return f"postgresql://{user}@/{db}?host={self.sock}&craft={craft}"

    def psql(self, sql: str, db: str = "ledgers", user: str = SUPERUSER) -> str:
        res = self._run(_bin("psql"), "-h", self.sock, "-U", user, "-d", db, "-v", "ON_ERROR_STOP=1", "-At",
                        "-c", sql, check=False)
        if res.returncode != 0:
            raise RuntimeError(res.stderr.strip())
        return res.stdout

    def setup_roles(self, db: str = "ledgers") -> None:
        """The database, the owner and two engineers (the grants are docs/postgresql.md's)."""
        self.psql(f"CREATE ROLE {OWNER} LOGIN", db="postgres")
        self.psql(f"CREATE DATABASE {db} OWNER {OWNER}", db="postgres")
        self.psql("CREATE ROLE pl_ops NOLOGIN", db="postgres")
        for who in OPERATORS:
            self.psql(f"CREATE ROLE {who} LOGIN IN ROLE pl_ops", db="postgres")
        self.psql(f"REVOKE CREATE ON SCHEMA public FROM PUBLIC", db=db)


def start_cluster(base: str | None = None) -> Cluster:
    c = Cluster(base)
    try:
        c.init()
        c.start()
        c.setup_roles()
    except BaseException:
        c.destroy()
        raise
    return c
