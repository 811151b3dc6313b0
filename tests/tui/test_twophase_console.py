"""The console's gauge dialog on a two-phase xenon reading: the range from CoolProp's saturation densities,
no estimate; recorded, the tank panel shows the range and the re-baseline form does not offer it.

leo-imager (bundled demo, invented): xenon in 5.5 L. Saturation at 285 K: CoolProp 8.0.0 PropsSI directly
(Lemmon & Span 2006 equation of state for xenon)."""
from __future__ import annotations

import os

import pytest
from ledger.services.ledger import Ledger
from ledger.tui.app import make_app
from ledger.tui.dialogs.gauge import reading_options
from ledger.tui.screens.main import MainScreen
from ledger.tui.widgets.state import TankGauges
from test_gauging_console import open_gauge, result_text
from tui_support import count, run, until

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def test_two_phase_reading_shows_the_range_and_is_not_adoptable(tmp_path):
    CP = pytest.importorskip("CoolProp.CoolProp")
    from ledger.services import scenario  # noqa: PLC0415
    path = str(tmp_path / "leo.json")
    scenario.build(os.path.join(ROOT, "scenarios", "leo-imager.yaml"), path)
    before = count(path)
    p_sat = CP.PropsSI("P", "T", 285.0, "Q", 0, "Xenon")
    lo = CP.PropsSI("D", "T", 285.0, "Q", 1, "Xenon") * 5.5e-3
    hi = CP.PropsSI("D", "T", 285.0, "Q", 0, "Xenon") * 5.5e-3
    seen = {}

    async def go():
        app = make_app(path)
        async with app.run_test(size=(110, 44)) as pilot:
            form = await open_gauge(app, pilot, f"{p_sat / 1e6:.6f} MPa", "285 K", tank="xe", at="")
            await pilot.press("ctrl+s")
            await until(pilot, lambda: form.previewed is not None, what="preview")
            seen["preview"] = result_text(form)
            await pilot.press("ctrl+s")
            await until(pilot, lambda: isinstance(app.screen, MainScreen), what="record")
            await pilot.pause(0.3)
            seen["panel"] = str(app.main.query_one(TankGauges).render())
            seen["options"] = reading_options(app.snap)

    run(go())
    assert "two-phase" in seen["preview"] and "no point estimate" in seen["preview"]
    assert f"{lo:,.3f}" in seen["preview"] and f"{hi:,.3f}" in seen["preview"]
    assert count(path) == before + 1
    e = Ledger(path).snapshot().entries[-1]
    assert e.data["phase"] == "two-phase" and "propellant_kg" not in e.data
    assert e.data["min_kg"] == pytest.approx(lo, rel=1e-9) and e.data["max_kg"] == pytest.approx(hi, rel=1e-9)
    assert all(seq != e.seq for _, seq in seen["options"])
    assert f"#{e.seq} two-phase" in seen["panel"]
