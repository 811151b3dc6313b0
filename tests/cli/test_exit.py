"""The command line's output as it leaves the process: it ends without tearing the interpreter down (a large
heap took 0.1 s to free), yet every byte arrives, exit statuses hold and a reader that stops early is no
error; tables written to a pipe keep their columns; the demo's printed form has what status needs."""
from __future__ import annotations

import json
import os
import subprocess
import sys

from ledger.services.ledger import Ledger
from ledger.services.records import make_record
from tests.cli.conftest import ROOT, run


def test_large_output_arrives_whole_through_a_pipe(ledger):
    # 3,000 entries make a JSON log far beyond a pipe's 64 KiB buffer
    recs = [make_record("use", 1.7e9 + 60.0 * i, 1.7e9 + 60.0 * i, "ops", "", {"engine": "rcs", "propellant": 0.001})
            for i in range(3000)]
    Ledger(ledger).file.append_many(recs)
    proc = run("--ledger", ledger, "log", "--json", check=True)
    assert len(proc.stdout) > 65536
    assert len(json.loads(proc.stdout)) == 3000
    assert proc.stderr == ""


def test_error_line_and_status_survive_the_quick_exit(ledger):
    proc = run("--ledger", ledger, "burn", "--engine", "nope", "--dv", "1 m/s")
    assert proc.returncode == 2 and proc.stderr.startswith("propledger: error: --engine: unknown engine 'nope'")


def test_a_reader_that_stops_early_is_not_an_error(ledger):
    recs = [make_record("use", 1.7e9 + 60.0 * i, 1.7e9 + 60.0 * i, "ops", "", {"engine": "rcs", "propellant": 0.001})
            for i in range(3000)]
    Ledger(ledger).file.append_many(recs)
    env = dict(os.environ, PYTHONPATH=ROOT)
    cmd = [sys.executable, "-m", "ledger", "--ledger", ledger, "log", "--json"]
    with subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, cwd=ROOT) as proc:
        proc.stdout.read(100)
        proc.stdout.close()  # like '| head -c 100'
        err = proc.stderr.read()
        code = proc.wait(timeout=60)
    assert code == 0 and b"Traceback" not in err


def test_demo_prints_status_and_log_without_the_console(tmp_path):
    # 'demo --print' shares the status and log commands; it must bring everything they need
    proc = run("demo", "--folder", str(tmp_path), "--print")
    assert proc.returncode == 0, proc.stderr
    for words in ("demo ledger:", "Tanks", "Engines", "low 99%", "Decision support only", "replay order"):
        assert words in proc.stdout, words
    assert (tmp_path / "geo-comsat.ledger.json").exists()


def test_tables_written_to_a_pipe_are_not_cut_to_80_columns(ledger):
    # rich takes 80 columns when its output is not a terminal; a log saved to a file must keep every column
    note = "north-south station keeping, second of the pair"
    run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1.5 m/s", "--note", note, "--by", "R. Osei", check=True)
    env = {k: v for k, v in os.environ.items() if k != "COLUMNS"}
    env["PYTHONPATH"] = ROOT
    proc = subprocess.run([sys.executable, "-m", "ledger", "--ledger", ledger, "log"], capture_output=True, text=True,
                          env=env, cwd=ROOT)
    assert proc.returncode == 0 and note in proc.stdout and "R. Osei" in proc.stdout
    assert "…" not in proc.stdout


def test_demo_removes_its_temporary_folder_and_keeps_a_given_one(tmp_path):
    # issue 11 point 11: 'demo' without --folder says its folder is temporary and removes it on exit
    proc = run("demo", "--print")
    assert proc.returncode == 0, proc.stderr
    line = next(ln for ln in proc.stdout.splitlines() if ln.startswith("demo ledger:"))
    path = line.split()[2]
    assert "removed when the demo exits" in line and not os.path.exists(os.path.dirname(path))
    kept = run("demo", "--folder", str(tmp_path), "--print")
    assert kept.returncode == 0 and "kept" in kept.stdout
    assert any(name.endswith(".ledger.json") for name in os.listdir(tmp_path))
