"""ccsds_ndm and astropy are loaded only by the import and export commands (tests/test_boundaries.py
style: fresh subprocesses), and astropy only for a message whose TIME_SYSTEM is not UTC."""
import os
import subprocess
import sys

from tests.test_boundaries import ROOT, loaded_after

CRAFT = ("craft: {name: b, dry_mass: 10}\ntanks: [{id: t, fluid: hydrazine, load: 5}]\n"
         "engines: [{id: e, isp: 220, thrust: 1, feeds: {t: 1}}]\n")
OCM = """CCSDS_OCM_VERS = 3.0
CREATION_DATE = 2026-11-30T09:00:00
ORIGINATOR = FDS
META_START
TIME_SYSTEM = UTC
EPOCH_TZERO = 2026-12-01T00:00:00
META_STOP
MAN_START
MAN_ID = M1
MAN_BASIS = PLANNED
MAN_DEVICE_ID = e
MAN_REF_FRAME = RSW_ROTATING
MAN_COMPOSITION = TIME_ABSOLUTE, DV_X, DV_Y, DV_Z
2026-12-02T10:00:00 0.001 0 0
MAN_STOP
"""


def _ledger(tmp_path):
    craft = tmp_path / "c.yaml"
    craft.write_text(CRAFT)
    ledger = tmp_path / "l.json"
    subprocess.run([sys.executable, "-m", "ledger", "--ledger", str(ledger), "init", "--craft", str(craft)],
                   cwd=ROOT, check=True, capture_output=True, env=dict(os.environ, PYTHONPATH=ROOT))
    return str(ledger)


def _after(ledger: str, *argv: str) -> set[str]:
    return loaded_after(f"""
        import io, contextlib
        from ledger.cli import main
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            assert main(['--ledger', {ledger!r}, *{list(argv)!r}]) == 0
    """)


def test_read_and_write_commands_load_neither_ccsds_ndm_nor_astropy(tmp_path):
    ledger = _ledger(tmp_path)
    for argv in (["plan", "--engine", "e", "--dv", "1", "--at", "2026-12-02T00:00Z"], ["status"], ["log"]):
        mods = _after(ledger, *argv)
        assert [m for m in ("ccsds_ndm", "astropy") if m in mods] == []


def test_a_utc_import_loads_the_library_but_not_astropy(tmp_path):
    ledger = _ledger(tmp_path)
    msg = tmp_path / "m.ocm"
    msg.write_text(OCM)
    mods = _after(ledger, "import", str(msg), "--dry-run")
    assert "ccsds_ndm" in mods and "astropy" not in mods
    tai = tmp_path / "tai.ocm"
    tai.write_text(OCM.replace("TIME_SYSTEM = UTC", "TIME_SYSTEM = TAI"))
    assert "astropy" in _after(ledger, "import", str(tai), "--dry-run")
