"""``propledger handover`` end to end: output, recording, --out, and refusals that leave the ledger untouched."""
from __future__ import annotations

import json
import os

import pytest

from ledger.cli import main
from ledger.services.timefmt import iso


def _bytes(path: str) -> bytes:
    with open(path, "rb") as fh:
        return fh.read()


def test_preview_prints_the_report_and_writes_nothing(two_shifts, capsys):
    path = two_shifts.ledger.path
    before = _bytes(path)
    rc = main(["--ledger", path, "handover", "--from", "Bo", "--to", "Cy", "--no-record"])
    out = capsys.readouterr()
    assert rc == 0 and _bytes(path) == before
    assert out.out.startswith("Shift handover: GEO-TEST\n")
    assert "LOGGED LATE" in out.out and "recorded handover entry" not in out.err
    assert max(len(line) for line in out.out.splitlines()) <= 80


def test_recording_appends_the_entry_and_writes_a_backup(two_shifts, capsys, fake_backup):
    path = two_shifts.ledger.path
    rc = main(["--ledger", path, "handover", "--from", "Bo", "--to", "Cy", "--format", "json", "--note", "quiet"])
    out = capsys.readouterr()
    report = json.loads(out.out)
    assert rc == 0 and report["record"]["entry"] == 9
    assert f"recorded handover entry 9; backup: {path}.backup-test" in out.err and fake_backup == [path]
    last = two_shifts.ledger.file.records()[-1]
    assert last["kind"] == "handover" and last["note"] == "quiet" and last["by"] == "Bo"
    # "--since last" now starts at this handover.
    main(["--ledger", path, "handover", "--from", "Cy", "--to", "Di", "--format", "json", "--no-record",
          "--since", "last"])
    assert json.loads(capsys.readouterr().out)["window"]["start"] == iso(two_shifts.t2)


def test_html_to_a_file(two_shifts, tmp_path, capsys, fake_backup):
    target = tmp_path / "handover.html"
    rc = main(["--ledger", two_shifts.ledger.path, "handover", "--from", "Bo", "--to", "Cy", "--format", "html",
               "--out", str(target)])
    err = capsys.readouterr().err
    assert rc == 0 and f"wrote {target}" in err
    page = target.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "<svg" in page and "entry #9" in page
    assert not [f for f in os.listdir(tmp_path) if f.startswith(".handover-")]   # no temporary left


@pytest.mark.parametrize("extra, message", [
    (["--since", "2999-01-01T00:00:00Z"], "--since"),
    (["--since", "soon"], "--since"),
    (["--out", "/no/such/folder/h.txt"], "--out"),
    (["--format", "pdf"], "invalid choice"),
])
def test_refusals_leave_the_ledger_unchanged(two_shifts, capsys, extra, message):
    path = two_shifts.ledger.path
    before = _bytes(path)
    rc = main(["--ledger", path, "handover", "--from", "Bo", "--to", "Cy", *extra])
    err = capsys.readouterr().err
    assert rc == 2 and message in err and len(err.strip().splitlines()) == 1
    assert _bytes(path) == before


def test_names_are_required(two_shifts, capsys):
    rc = main(["--ledger", two_shifts.ledger.path, "handover", "--from", "Bo"])
    assert rc == 2 and "--to" in capsys.readouterr().err


def test_status_shows_the_forecast_line(two_shifts, capsys):
    assert main(["--ledger", two_shifts.ledger.path, "status"]) == 0
    out = capsys.readouterr().out
    assert "Lifetime: thr at 45.60 m/s/yr runs out of dv free" in out
    assert main(["--ledger", two_shifts.ledger.path, "status", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["forecast"]["engines"][0]["engine"] == "thr"


def test_recording_writes_a_real_backup_and_head_record(two_shifts, capsys):
    # No stand-in: the handover calls ledger.store.backup.make_backup, which copies the ledger and records
    # the chain head beside it; the backup must be a ledger whose chain verifies.
    import os

    from ledger.store.backup import list_backups
    from ledger.store.ledgerfile import LedgerFile

    path = two_shifts.ledger.path
    assert main(["--ledger", path, "handover", "--from", "Bo", "--to", "Cy", "--format", "text"]) == 0
    backups = list_backups(path)
    assert backups, "a handover writes a backup"
    newest = backups[0]  # newest first
    assert LedgerFile(newest).verify() is None
    assert os.path.exists(path + ".head")


def test_the_state_now_carries_low_bounds(two_shifts, capsys):
    # No stand-ins: the handover runs the Monte Carlo (cached by chain head) for the state's low bounds.
    path = two_shifts.ledger.path
    assert main(["--ledger", path, "handover", "--from", "Bo", "--to", "Cy", "--format", "text", "--no-record"]) == 0
    out = capsys.readouterr().out
    assert "usable low kg" in out and "dv free low m/s" in out and "Low bounds at 99% confidence" in " ".join(out.split())
