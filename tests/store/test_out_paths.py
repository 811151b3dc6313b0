"""``--out`` never lands on the ledger, its side files or backups, nor on an existing file without --force;
the report is written whole (issue 16, point 2). Common practice (no single source): refuse to clobber."""
from __future__ import annotations

import os

import pytest
from storekit import folder_state, run

from ledger.services.outpaths import checked
from ledger.errors import InputError

HO = ("handover", "--from", "A", "--to", "B", "--no-record")


@pytest.mark.parametrize("suffix", ["", ".head", ".lock", ".verified", ".confidence-cache.json", ".key",
                                    ".backups/head.json", ".backups/backup-x.json", ".damaged-20260101T000000Z"])
def test_out_refuses_the_ledger_and_everything_beside_it(ledger, suffix):
    run("--ledger", ledger, "backup")
    before = folder_state(os.path.dirname(ledger))
    code, _, err = run("--ledger", ledger, *HO, "--out", ledger + suffix, "--force")
    assert code == 2 and "side files" in err and err.count("\n") == 1
    assert folder_state(os.path.dirname(ledger)) == before


def test_out_through_a_link_to_the_ledger_is_refused(ledger, tmp_path):
    link = tmp_path / "innocent.txt"
    os.symlink(ledger, link)
    with pytest.raises(InputError):
        checked(str(link), ledger, force=True)


def test_existing_file_needs_force_and_is_replaced_whole(ledger, tmp_path):
    target = tmp_path / "report.txt"
    target.write_text("older report")
    code, _, err = run("--ledger", ledger, *HO, "--out", str(target))
    assert code == 2 and "--force" in err and target.read_text() == "older report"
    code, _, err = run("--ledger", ledger, *HO, "--out", str(target), "--force")
    assert code == 0, err
    assert "Decision support only" in target.read_text()
    assert not [n for n in os.listdir(tmp_path) if n.startswith(".propledger-out-")]


def test_new_file_is_written(ledger, tmp_path):
    target = tmp_path / "new.md"
    code, _, err = run("--ledger", ledger, *HO, "--format", "md", "--out", str(target))
    assert code == 0, err and target.exists()
