"""psycopg is imported only when a postgresql:// address is written to (the ledger file needs no driver, and
a database read goes through libpq itself)."""
from __future__ import annotations

import os
import subprocess
import sys

from tests.test_boundaries import ROOT, loaded_after


def test_file_ledger_commands_never_import_psycopg(tmp_path):
    craft = os.path.join(ROOT, "scenarios", "geo-comsat.yaml")
    ledger = str(tmp_path / "l.json")
    subprocess.run([sys.executable, "-m", "ledger", "--ledger", ledger, "init", "--craft", craft], cwd=ROOT,
                   check=True, capture_output=True, env=dict(os.environ, PYTHONPATH=ROOT))
    mods = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            assert main(["--ledger", {ledger!r}, "mass", "--delta", "-1 kg"]) == 0
            assert main(["--ledger", {ledger!r}, "status", "--json"]) == 0
            assert main(["--ledger", {ledger!r}, "verify"]) == 0
        from ledger.services.live import LiveLedger
        LiveLedger({ledger!r}).snapshot()
    """)
    assert "psycopg" not in mods and "ledger.store.pgstore" not in mods


def test_database_reads_go_through_libpq_and_writes_import_psycopg(pg_schema, craft_url):
    """status, verify and log read through libpq itself (store/pgread.py: psycopg's import alone is about
    0.3 s of CPU); a write still goes through psycopg."""
    reads = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            assert main(["--ledger", {craft_url!r}, "status", "--json"]) == 0
            assert main(["--ledger", {craft_url!r}, "verify"]) == 0
            assert main(["--ledger", {craft_url!r}, "log"]) == 0
    """)
    assert "psycopg" not in reads and "ledger.store.pgread" in reads
    writes = loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()):
            assert main(["--ledger", {craft_url!r}, "mass", "--delta", "-1 kg"]) == 0
    """)
    assert "psycopg" in writes
