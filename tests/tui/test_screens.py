"""Screenshots at 80x24 and 160x48: every panel's label, the footer keys and the safety caution are on
screen (exported SVG text). ``python tests/tui/make_screens.py`` renders the same views to PNG."""
from __future__ import annotations

import html
import re

import pytest

from ledger.tui import actions
from ledger.tui.app import make_app
from tui_support import lows_done, ready, run, type_text, until

LABELS = ["Tanks", "Engines", "Watch", "Ledger", "free", "reserve", "residual", "dv free", "chain intact",
          "PLAN", "BURN", "MASS", "USE", "WITHDRAW", "CORRECT", "#13", "8.0", "m/s", "Decision support only",
          "flight-dynamics system", "low", "runs out", "undecided"]
KEYS = [(a.key_display or a.key, a.label, a.short) for a in actions.ACTIONS]


def svg_text(svg: str) -> str:
    """The characters on screen, from an exported SVG (one <text> per styled run)."""
    runs = re.findall(r"<text[^>]*>([^<]*)</text>", svg)
    return html.unescape(" ".join(runs)).replace("\xa0", " ")


async def shoot(path: str, size: tuple[int, int], keys=(), until_done=None) -> str:
    """The screen after the keys (and, with ``until_done(app)``, after that turns true: a worker's result)."""
    app = make_app(path)
    async with app.run_test(size=size) as pilot:
        await ready(app, pilot)
        await lows_done(app, pilot)
        for k in keys:
            if k.startswith("type:"):
                await type_text(pilot, k[5:])
            else:
                await pilot.press(k)
            await pilot.pause(0.2)
        if until_done is not None:
            await until(pilot, lambda: until_done(app), what="the dialog's worker")
        await pilot.pause(0.2)
        return app.export_screenshot()


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_main_view_shows_every_label(ledger_path, size):
    text = svg_text(run(shoot(ledger_path, size)))
    labels = LABELS if size[1] > 24 else [x for x in LABELS if x not in ("MASS", "CORRECT")]  # older than the page
    # a run of text can split a label at a style change: compare without spaces too
    squeezed = text.replace(" ", "")
    missing = [lab for lab in labels if lab not in text and lab.replace(" ", "") not in squeezed]
    # every key is in the key bar, with its full label or (on narrow terminals) its short one
    missing += [f"{k} {label}" for k, label, short in KEYS
                if f"{k}{label}" not in squeezed and f"{k}{short}" not in squeezed]
    assert not missing, f"not on screen at {size}: {missing}"


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_forms_and_check_fit(ledger_path, size):
    for key, label in (("b", "Log an executed burn"), ("k", "Check a manoeuvre"), ("t", "dv free")):
        text = svg_text(run(shoot(ledger_path, size, [key])))
        assert label in text and "Decision support only" in text, (key, size)
        if key == "b":
            assert "Record" in text and "Cancel" in text


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_main_view_shows_the_low_bounds_once_sampled(ledger_path, size):
    text = svg_text(run(shoot(ledger_path, size)))
    engines = text.split("Watch")[0].split("Engines")[1]  # lines beside it (the ledger) come along at 160
    # a low cell still sampling holds a lone '…'; a ledger cell cut to fit ends in one ('undec…')
    assert "low = 99% bound" in text and not re.search(r"(?<!\S)…(?!\S)", engines)
    assert "runs out" in text and "Decision support only" in text


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_gauge_dialog_fits_with_its_preview_and_the_caution(ledger_path, size):
    keys = ["g", "type:20.5 bar", "tab", "type:21 degC", "ctrl+s"]
    text = svg_text(run(shoot(ledger_path, size, keys, lambda app: getattr(app.screen, "previewed", None))))
    squeezed = text.replace(" ", "")
    for label in ("Gauge a tank", "pressure", "temperature", "gauged", "bookkeeping", "difference", "σ",
                  "Record", "Cancel", "Decision support only", "responsible", "engineers before acting"):
        assert label in text or label.replace(" ", "") in squeezed, (label, size)


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
def test_handover_view_fits_with_its_report_and_the_caution(ledger_path, size):
    keys = ["h", "type:A. Day", "tab", "type:B. Night"]
    text = svg_text(run(shoot(ledger_path, size, keys, lambda app: getattr(app.screen, "report", None))))
    squeezed = text.replace(" ", "")
    for label in ("from", "to", "since", "Report preview", "Shift handover", "ctrl+s Record", "ctrl+o Export",
                  "esc Back", "Decision support only", "responsible engineers"):
        assert label in text or label.replace(" ", "") in squeezed, (label, size)
