"""Render the console's main views to SVG and PNG under docs/screens/ (run from the repository root:
``python tests/tui/make_screens.py``). PNGs come from rsvg-convert, which keeps the monospace grid;
non-breaking spaces are turned into preserved spaces first so runs of text keep their columns."""
from __future__ import annotations

import asyncio
import os
import re
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path[:0] = [ROOT, HERE]

from ledger.services import approvals, gauging  # noqa: E402
from ledger.services.records import make_record  # noqa: E402
from ledger.services.timefmt import parse_time  # noqa: E402
from ledger.tui.app import make_app  # noqa: E402
from tui_support import KEY_NAMES, fill, lows_done, ready, until  # noqa: E402

OUT = os.path.join(ROOT, "docs", "screens")


def busy_ledger(path: str) -> None:
    """The test ledger plus four months of weekly thruster use and fortnightly station-keeping burns."""
    led = fill(path)
    t0 = parse_time("2026-02-12T06:00Z")
    day = 86400.0
    recs = []
    for k in range(120):
        t = t0 + k * day
        if k % 14 == 0:
            recs.append(make_record("burn", t, t + 600, "ops", "station keeping", {"engine": "lae", "dv": 1.6}))
        elif k % 3 == 0:
            recs.append(make_record("use", t, t + 300, "ops", "wheel offload", {"engine": "rcs", "duration": 35.0}))
    led.file.append_many(recs)
    return led


def decorated_ledger(path: str) -> None:
    """The busy ledger with plan 13 approved and a gauge reading of the hydrazine tank (within 3 sigma)."""
    led = busy_ledger(path)
    approvals.decide(led, "approve", 13, "F. Lead", note="inclination trim as planned")
    gauging.record_gauge(led, "hyd", 17.4e5, 293.65, at=parse_time("2026-06-10T08:00Z", "at"), by="ops")


def to_png(svg_path: str, png_path: str) -> None:
    with open(svg_path, encoding="utf-8") as fh:
        svg = fh.read()
    svg = svg.replace("&#160;", " ").replace("<svg ", '<svg xml:space="preserve" ', 1)
    with tempfile.NamedTemporaryFile("w", suffix=".svg", delete=False, encoding="utf-8") as tmp:
        tmp.write(svg)
    try:
        subprocess.run(["rsvg-convert", "-z", "0.8", tmp.name, "-o", png_path], check=True)
    finally:
        os.unlink(tmp.name)
    from PIL import Image  # noqa: PLC0415 - a matplotlib dependency; keeps the committed PNGs small

    with Image.open(png_path) as im:
        small = im.convert("RGB").quantize(colors=128, method=Image.Quantize.FASTOCTREE)
    small.save(png_path, optimize=True)


async def shoot(path: str, name: str, size, keys=(), done=None) -> None:
    app = make_app(path)
    async with app.run_test(size=size) as pilot:
        await ready(app, pilot)
        await lows_done(app, pilot)
        for k in keys:
            if k.startswith("type:"):
                await pilot.press(*[KEY_NAMES.get(c, c) for c in k[5:]])
            else:
                await pilot.press(k)
            await pilot.pause(0.2)
        if done is not None:
            await until(pilot, lambda: done(app), what=name)
        await pilot.pause(0.3)
        svg = os.path.join(OUT, f"{name}.svg")
        app.save_screenshot(filename=os.path.basename(svg), path=OUT)
    to_png(svg, os.path.join(OUT, f"{name}.png"))
    os.unlink(svg)


GAUGE_KEYS = ["g", "type:17.4 bar", "tab", "type:20.5 degC", "ctrl+s"]
HANDOVER_KEYS = ["h", "type:A. Day", "tab", "type:B. Night"]


def previewed(app) -> bool:
    return getattr(app.screen, "previewed", None) is not None


def reported(app) -> bool:
    return getattr(app.screen, "report", None) is not None


def checked(app) -> bool:
    return getattr(app.screen, "confidence", None) is not None


SHOTS = [
    ("main-80x24", (80, 24), [], None),
    ("main-160x48", (160, 48), [], None),
    ("main-200x60", (200, 60), [], None),
    ("burn-form-80x24", (80, 24), ["b", "type:12", "ctrl+s"], None),
    ("check-160x48", (160, 48), ["k", "type:25 m/s"], checked),
    ("check-80x24", (80, 24), ["k", "type:25 m/s"], checked),
    ("trend-160x48", (160, 48), ["t"], None),
    ("detail-100x40", (100, 40), ["up", "enter"], None),
    ("gauge-80x24", (80, 24), GAUGE_KEYS, previewed),
    ("gauge-160x48", (160, 48), GAUGE_KEYS, previewed),
    ("decide-80x24", (80, 24), ["d", "type:F. Lead"], None),
    ("handover-80x24", (80, 24), HANDOVER_KEYS, reported),
    ("handover-160x48", (160, 48), HANDOVER_KEYS, reported),
]


def main(only: list[str]) -> None:
    os.makedirs(OUT, exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "screens.ledger.json")
        decorated_ledger(path)
        for name, size, keys, done in SHOTS:
            if only and not any(re.search(o, name) for o in only):
                continue
            asyncio.run(shoot(path, name, size, keys, done))
            print(os.path.join("docs", "screens", f"{name}.png"))


if __name__ == "__main__":
    main(sys.argv[1:])
