"""The console's heavy imports stay off the command line's other paths: a read-only command such as
status must not load textual or plotext (it pays for them in start-up time, docs/sources.md §9)."""
from __future__ import annotations

import os
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def test_status_does_not_import_textual(ledger_path):
    code = ("import sys, io, contextlib; from ledger.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    rc = main(['--ledger', {ledger_path!r}, 'status'])\n"
            "print(rc, 'textual' in sys.modules, 'textual_plotext' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.split() == ["0", "False", "False"], out.stdout + out.stderr


def test_console_services_do_not_import_textual():
    code = ("import sys; import ledger.services.live, ledger.services.browse, ledger.services.trend\n"
            "print('textual' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip() == "False"


def test_console_opens_without_plotext_until_the_trend_is_asked_for():
    code = "import sys; import ledger.tui.app; print('plotext' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip() == "False"


def test_console_opens_and_samples_without_coolprop(ledger_path):
    """CoolProp (1.7 s to import, measured with CoolProp 8.0.0; docs/sources.md §9) loads only when a gauge
    reading is computed: not when the console opens, paints, verifies the chain and computes the low bounds."""
    code = ("import asyncio, sys; sys.path.insert(0, 'tests/tui')\n"
            "from ledger.tui.app import make_app\n"
            "from tui_support import lows_done, ready\n"
            "async def go():\n"
            f"    app = make_app({ledger_path!r})\n"
            "    async with app.run_test(size=(100, 30)) as pilot:\n"
            "        await ready(app, pilot)\n"
            "        await lows_done(app, pilot)\n"
            "asyncio.run(go())\n"
            "print(any(m.split('.')[0] == 'CoolProp' for m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True)
    assert out.stdout.strip().splitlines()[-1] == "False", out.stdout + out.stderr
