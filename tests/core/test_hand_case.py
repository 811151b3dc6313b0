"""A multi-entry bipropellant case worked by hand: mixture ratio, residuals, cant, a mass change, a reserve.

Craft (tests/helpers.biprop): dry 800 kg; ox 300 kg (residual 4), fuel 190 kg (residual 3); both engines
draw at MR 1.65 (ox share 1.65/2.65, fuel share 1/2.65). main: Isp 320 s, cant 0 -> ve = 320*9.80665 =
3138.128 m/s. thr: Isp 290 s, cant 10 deg -> ve = 290*9.80665*cos(10 deg) = 2800.7228 m/s. Reserve: 30 m/s
on thr.

1. main burns 150 m/s at m0 = 1290 kg: p1 = 1290 (1 - exp(-150/3138.128)) = 60.21049 kg -> m1 = 1229.78951;
   ox 60.21049*1.65/2.65 = 37.48955, fuel 60.21049/2.65 = 22.72094.
2. thr uses 2 kg without delta-v -> m2 = 1227.78951 (ox 1.24528, fuel 0.75472).
3. mass change -20 kg (a cover released) -> m3 = 1207.78951.
Remaining: ox 300 - 62.21049*1.65/2.65 = 261.26516, fuel 190 - 62.21049/2.65 = 166.52434.
Usable: ox 257.26516, fuel 163.52434.
dv available: x = min(257.26516/0.622642, 163.52434/0.377358) = min(413.18344, 433.33951) = 413.18344 kg
(oxidiser-limited); main: 3138.128 ln(1207.78951/794.60607) = 1313.9362 m/s; thr: 2800.7228 ln(...) =
1172.6644 m/s.
dv free: both engines draw at the same ratio, so the reserve just shares the same 413.18344 kg:
1 - E E_r = x/m3, giving dv_free(main) = 1313.9362 - 3138.128*30/2800.7228 = 1280.3221 m/s and
dv_free(thr) = 1172.6644 - 30 = 1142.6644 m/s.
"""
import pytest

from ledger.core import capability as cap
from ledger.core.replay import replay, replay_loop
from tests.helpers import T0, biprop, ev


@pytest.fixture()
def case():
    craft = biprop(reserve_dv=30.0)
    events = [ev(1, "burn", T0, engine="main", dv=150.0), ev(2, "use", T0 + 60, engine="thr", propellant=2.0),
              ev(3, "mass", T0 + 120, delta=-20.0)]
    return craft, replay(craft, events), events


def test_masses_and_tanks(case):
    craft, rep, events = case
    assert rep.propellant[0] == pytest.approx(60.21049, abs=1e-5)
    assert rep.mass_after == pytest.approx([1229.78951, 1227.78951, 1207.78951], abs=1e-5)
    assert rep.drawn[0] == pytest.approx([37.48955, 22.72094], abs=1e-5)
    assert rep.remaining_kg == pytest.approx([261.26516, 166.52434], abs=1e-5)
    m, remaining = replay_loop(craft, events)
    assert m == pytest.approx(rep.mass_kg) and remaining == pytest.approx(rep.remaining_kg)


def test_capability(case):
    craft, rep, _ = case
    state = cap.State(rep.mass_kg, rep.remaining_kg)
    assert cap.usable(craft, state) == pytest.approx([257.26516, 163.52434], abs=1e-5)
    main, thr = cap.capability(craft, state)
    assert main.dv_available_m_s == pytest.approx(1313.9362, abs=1e-3)
    assert thr.dv_available_m_s == pytest.approx(1172.6644, abs=1e-3)
    assert main.dv_free_m_s == pytest.approx(1280.3221, abs=1e-3)
    assert thr.dv_free_m_s == pytest.approx(1142.6644, abs=1e-3)
    assert main.limiting_tank == "ox" and main.reserves_met


def test_check_flies_plans_then_burn_then_reserves(case):
    craft, rep, _ = case
    state = cap.State(rep.mass_kg, rep.remaining_kg)
    # With a pending 200 m/s plan on main, a further burn of dv_free - 200 (less a hair) still fits, and
    # a little more does not: the plan is a commitment spent first.
    res_ok = cap.check(craft, state, "main", 1280.3221 - 200.0 - 0.01, commitments=[("main", 200.0)])
    res_no = cap.check(craft, state, "main", 1280.3221 - 200.0 + 0.01, commitments=[("main", 200.0)])
    assert res_ok.feasible and not res_no.feasible
    assert res_ok.dv_free_after_m_s == pytest.approx(0.01, abs=2e-3)
    assert "reserves" in res_no.reason
