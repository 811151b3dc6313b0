"""Text a user typed, or that a file holds, never reaches the terminal as rich markup, emoji codes or
control sequences; YAML is read with safe loading only; files are private to their owner."""
from __future__ import annotations

import json
import os

from storekit import run

from ledger.store.migrate import relink

HOSTILE = "\x1b[2J\x1b]0;pwned\x07[bold red]alarm[/] :warning: \u202eevil\r"
CONTROL = ("\x1b", "\x07", "\r", "\u202e")


def _clean(text: str) -> bool:
    return not any(c in text for c in CONTROL)


def test_typed_text_is_stored_without_control_characters(ledger):
    code, _, _ = run("--ledger", ledger, "burn", "--engine", "lae", "--dv", "1", "--note", HOSTILE, "--by", HOSTILE)
    assert code == 0
    rec = json.load(open(ledger))["entries"]["4"]
    assert _clean(rec["note"]) and _clean(rec["by"]) and "[bold red]alarm[/]" in rec["note"]


def test_text_from_the_file_is_shown_literally_and_inert(ledger, monkeypatch):
    monkeypatch.setenv("COLUMNS", "400")  # one table row per line, so the literal text can be found
    doc = json.load(open(ledger))
    doc["entries"]["1"]["note"] = HOSTILE   # as if an older program had stored it: the chain is consistent
    doc["entries"]["2"]["by"] = HOSTILE
    doc["meta"]["1"]["craft"]["name"] = HOSTILE
    open(ledger, "w").write(json.dumps(relink(doc)))
    os.remove(ledger + ".head")  # the recorded head (craft link) describes the file before this rewrite
    os.remove(ledger + ".backups/head.json")
    for argv in (["status"], ["log"], ["check", "--engine", "lae", "--dv", "1"], ["verify"]):
        code, out, err = run("--ledger", ledger, *argv)
        assert code in (0, 1), err
        assert _clean(out) and _clean(err)
    code, out, _ = run("--ledger", ledger, "log")
    assert "[bold red]alarm[/] :warning: ?evil?" in out  # markup and emoji code printed as typed, not applied
    code, out, _ = run("--ledger", ledger, "status")
    assert out.splitlines()[0].startswith("?[2J?]0;pwned?[bold red]alarm[/] :warning: ?evil?")


def test_error_messages_are_one_inert_line(ledger):
    code, _, err = run("--ledger", ledger, "burn", "--engine", HOSTILE, "--dv", "1")
    assert code == 2 and _clean(err) and err.count("\n") == 1


def test_craft_text_with_control_characters_is_refused(tmp_path):
    craft = tmp_path / "c.yaml"
    craft.write_text('craft: {name: "Sat\\e[2J", dry_mass: 100 kg}\n'
                     "tanks: [{id: t, fluid: N2H4, load: 10 kg}]\n"
                     "engines: [{id: e, isp: 220 s, thrust: 1 N, feeds: {t: 1}}]\n")
    code, _, err = run("--ledger", str(tmp_path / "l.json"), "init", "--craft", str(craft))
    assert code == 2 and "craft.name" in err and _clean(err) and not os.path.exists(tmp_path / "l.json")


def test_yaml_is_loaded_safely(tmp_path):
    marker = tmp_path / "ran"
    craft = tmp_path / "c.yaml"
    craft.write_text(f'craft: !!python/object/apply:os.system ["touch {marker}"]\n')
    code, _, err = run("--ledger", str(tmp_path / "l.json"), "init", "--craft", str(craft))
    assert code == 2 and "not valid YAML" in err
    assert not marker.exists() and not os.path.exists(tmp_path / "l.json")
