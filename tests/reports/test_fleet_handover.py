"""`propledger handover --fleet`: one report over every craft, each part the same as that craft's own
handover, recorded in every readable ledger; 80-column text, Markdown, HTML with one margin chart (issue 15,
point 3). The reference is the single-craft `handover --format json` on the same ledger."""
from __future__ import annotations

import json
import os

import pytest

from ledger.services import scenario
from tests.cli.conftest import run

NAMES = ["--from", "A. Vey", "--to", "B. Kol"]


@pytest.fixture
def folder(tmp_path):
    d = tmp_path / "fleet"
    d.mkdir()
    found = scenario.bundled()
    for name in ("geo-comsat", "lunar-orbiter"):
        scenario.build(found[name], str(d / f"{name}.json"))
    (d / "junk.json").write_text("{")
    return str(d)


def test_each_part_is_that_craft_own_handover(folder):
    doc = json.loads(run("handover", "--fleet", folder, *NAMES, "--no-record", "--format", "json", check=True).stdout)
    assert [p["row"]["state"] for p in doc["craft"]] == ["unreadable", "ok", "ok"]  # attention order
    for part in doc["craft"][1:]:
        one = json.loads(run("--ledger", part["row"]["ledger"], "handover", *NAMES, "--no-record", "--format",
                             "json", check=True).stdout)
        mine = part["report"]
        assert [b["id"] for b in mine["burns"]] == [b["id"] for b in one["burns"]]
        assert [e["id"] for e in mine["other_entries"]] == [e["id"] for e in one["other_entries"]]
        assert mine["window"]["start"] == one["window"]["start"] and mine["state"] == one["state"]


def test_text_fits_80_columns_and_names_every_craft_with_the_caution(folder):
    text = run("handover", "--fleet", folder, *NAMES, "--no-record", check=True).stdout
    assert max(len(line) for line in text.splitlines()) <= 80
    for word in ("Vantrel-2", "Pallenor", "junk.json", "UNREADABLE", "Fleet overview", "Sign-off"):
        assert word in text
    assert text.count("Decision support only") == 2  # at the top and at the sign-off
    md = run("handover", "--fleet", folder, *NAMES, "--no-record", "--format", "md", check=True).stdout
    assert "## Vantrel-2" in md and "> **Caution:**" in md


def test_html_has_one_overview_chart(folder, tmp_path):
    out = tmp_path / "fleet.html"
    run("handover", "--fleet", folder, *NAMES, "--no-record", "--format", "html", "--out", str(out), check=True)
    page = out.read_text()
    assert page.count("<svg") == 1 and "attention threshold" in page and "Vantrel-2" in page
    assert "Decision support only" in page


def test_recording_appends_a_handover_to_each_readable_ledger_and_moves_its_window(folder):
    junk = open(os.path.join(folder, "junk.json"), "rb").read()
    first = json.loads(run("handover", "--fleet", folder, *NAMES, "--format", "json", check=True).stdout)
    for part in first["craft"][1:]:
        entry = part["report"]["record"]["entry"]
        log = json.loads(run("--ledger", part["row"]["ledger"], "log", "--json", check=True).stdout)
        newest = max(log, key=lambda r: r["id"])  # log is in replay order; the newest entry by id
        assert newest["id"] == entry and newest["kind"] == "handover"
    assert open(os.path.join(folder, "junk.json"), "rb").read() == junk  # nothing written to it
    again = json.loads(run("handover", "--fleet", folder, *NAMES, "--no-record", "--format", "json",
                           check=True).stdout)
    for before, after in zip(first["craft"][1:], again["craft"][1:]):
        assert after["report"]["window"]["start"] == before["report"]["window"]["end"]
        assert after["report"]["burns"] == []


@pytest.mark.parametrize("extra, words", [
    (["--from", "", "--to", "B"], "--from"),
    (["--out", "INSIDE"], "fleet folder"),
])
def test_bad_input_writes_nothing(folder, extra, words):
    extra = [os.path.join(folder, "report.txt") if x == "INSIDE" else x for x in extra]
    args = ["handover", "--fleet", folder] + (NAMES if "--from" not in extra else []) + extra
    before = {n: open(os.path.join(folder, n), "rb").read() for n in os.listdir(folder) if n.endswith(".json")}
    proc = run(*args)
    assert proc.returncode == 2 and words in proc.stderr and proc.stderr.count("propledger:") == 1
    assert {n: open(os.path.join(folder, n), "rb").read() for n in before} == before
    assert not os.path.exists(os.path.join(folder, "report.txt"))
