"""The bundled lunar orbiter (invented data) flown as a blowdown system with performance tables.

Checks: the predicted tank pressure against CoolProp PropsSI directly (P(D, T) at the helium density the
PVT relations give, docs/sources.md §4; CoolProp version in the message); the 60 s firing late in life
against the hand computation of the mass flow F/(Isp·g0) at the table's pressure (Sutton & Biblarz,
Rocket Propulsion Elements, 9th ed., ch. 2-3) and against the old constant-performance figure."""
import CoolProp
import numpy as np
import pytest

from ledger.core import blowdown as bd
from ledger.core.craft import G0
from ledger.services import scenario, views
from tests.services.test_gauging_scenarios import blowdown_pressure


@pytest.fixture(scope="module")
def snap(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lunar")
    return scenario.build(scenario.bundled()["lunar-orbiter"], str(folder / "l.json")).snapshot()


def test_predicted_pressure_is_coolprops(snap):
    for i, t in enumerate(snap.craft.tanks):
        want = blowdown_pressure(t, float(snap.state.remaining_kg[i]), t.pressurant.temperature_k)
        assert snap.blowdown.pressure_pa[i] == pytest.approx(want, rel=1e-5), f"CoolProp {CoolProp.__version__}"
        assert 6e5 < snap.blowdown.pressure_pa[i] < 8e5  # "about 7 bar from 22" late in life


def test_sixty_second_firing_late_in_life_books_about_a_third(snap):
    view = snap.blowdown
    e = snap.craft.engine_index("ocm")
    drawn = float(bd.timed_draw(view.model, e, snap.state.remaining_kg[None, :], view.temperature_k[None, :], 60.0)[0])
    # hand computation: table interpolated linearly at the feed pressure now (mean of the two tanks)
    p = float(np.mean(view.pressure_pa))
    table = snap.craft.engine("ocm").performance
    thrust = np.interp(p, table.pressure_pa, table.thrust_n)
    isp = np.interp(p, table.pressure_pa, table.isp_s)
    hand = 60.0 * thrust / (isp * G0)
    assert drawn == pytest.approx(hand, rel=0.01)  # the pressure falls only ~1 % over 0.8 kg
    assert 0.7 < drawn < 0.95
    constant = 60.0 * 88.0 / (226.0 * G0)  # the scenario's former constant 88 N, 226 s
    assert constant == pytest.approx(2.38, abs=0.01) and drawn < constant / 2.5


def test_status_reports_each_tanks_pressure(snap):
    out = views.status(snap)
    for tid in ("hz-1", "hz-2"):
        assert out["tanks"][tid]["pressure_pa"] == pytest.approx(
            float(snap.blowdown.pressure_pa[snap.craft.tank_index(tid)]))
    assert not [w for w in out["warnings"] if "qualified" in w]  # the history stays within 5.5-24 bar
