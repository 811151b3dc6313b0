"""The core against values from outside the project: standards, handbooks and textbook examples."""
import math

import numpy as np
import pytest
import scipy.constants

from ledger.core import capability as cap
from ledger.core.craft import G0, Craft, Engine, Tank
from ledger.core.replay import replay
from tests.helpers import ev


def test_g0_is_the_standard_value():
    # 3rd CGPM (1901) defines standard gravity as exactly 9.80665 m/s^2; scipy.constants.g is that value.
    assert G0 == scipy.constants.g == 9.80665


def single_tank(m_dry: float, load: float, isp: float, cant: float = 0.0, residual: float = 0.0) -> Craft:
    return Craft("t", m_dry, (Tank("t1", "hydrazine", load, residual),),
                 (Engine("e", isp, 100.0, {"t1": 1.0}, cant_deg=cant),))


def test_rocket_equation_against_curtis_example_6_1():
    # Curtis, Orbital Mechanics for Engineering Students, Example 6.1 (from memory; reproduced by
    # computation): a 2000 kg spacecraft, Isp 300 s, total delta-v 3.0522 km/s needs 1291.3 kg of propellant
    # (the book uses g0 = 9.807 m/s^2; with the standard 9.80665 the answer moves by 0.03 kg).
    craft = single_tank(2000.0 - 1900.0, 1900.0, 300.0)
    rep = replay(craft, [ev(1, "burn", engine="e", dv=3052.2)])
    assert rep.propellant[0] == pytest.approx(1291.3, abs=0.05)


def test_published_propellant_ledger_apollo_lm_rcs():
    # Apollo 11 Flight Plan (NASA MSC 1969), Table 5-6, LM RCS (read; docs/sources.md §3):
    # loaded 633.0 lb; trapped 40.6, gauging and loading 39.5, mixture-ratio uncertainty 17.0 -> usable 535.9;
    # nominal use 252.7 -> remaining usable 283.2 lb. All unusable allowances go into the residual.
    lb = 0.45359237  # international avoirdupois pound, exact (1959 agreement)
    residual = (40.6 + 39.5 + 17.0) * lb
    craft = single_tank(1000.0, 633.0 * lb, 290.0, residual=residual)
    state0 = cap.State(craft.initial_mass_kg, craft.loads())
    assert cap.usable(craft, state0)[0] / lb == pytest.approx(535.9, abs=0.05)
    rep = replay(craft, [ev(1, "use", engine="e", propellant=252.7 * lb)])
    state = cap.State(rep.mass_kg, rep.remaining_kg)
    assert cap.usable(craft, state)[0] / lb == pytest.approx(283.2, abs=0.05)


@pytest.mark.parametrize("cant, factor", [(5.0, 0.99619), (10.0, 0.98481), (20.0, 0.93969)])
def test_cosine_loss_on_effective_exhaust_velocity(cant, factor):
    # Common practice: canted thrusters deliver F cos(theta) along the burn at unchanged mass flow, so the
    # effective Isp is Isp cos(theta) (cos 5, 10, 20 deg computed by hand; docs/sources.md §2).
    e = Engine("e", 300.0, 10.0, {"t": 1.0}, cant_deg=cant)
    assert e.ve / (300.0 * G0) == pytest.approx(factor, abs=5e-6)
    assert e.mass_flow == pytest.approx(10.0 / (300.0 * G0))  # the cant does not change the flow


def test_burn_by_duration_matches_the_finite_burn_time():
    # Computed by hand (docs/sources.md §2): F = 400 N, Isp = 318 s, m0 = 3000 kg, dv = 100 m/s takes
    # t_b = m0 c (1 - exp(-dv/c)) / F = 738.10 s at constant thrust (not the impulsive 750 s).
    craft = Craft("t", 1000.0, (Tank("t1", "MMH", 2000.0),), (Engine("e", 318.0, 400.0, {"t1": 1.0}),))
    rep = replay(craft, [ev(1, "burn", engine="e", duration=738.10)])
    assert rep.dv[0] == pytest.approx(100.0, abs=0.01)


def test_mixture_ratio_split_and_limiting_propellant():
    # Computed by hand, common practice (docs/sources.md §3): 100 kg at MR 1.65 splits 62.264 ox / 37.736 fuel;
    # 60 kg ox + 40 kg fuel at 1.65 is oxidiser-limited: 96.364 kg burnable, 3.636 kg fuel stranded.
    craft = Craft("t", 500.0, (Tank("ox", "MON-3", 60.0), Tank("fuel", "MMH", 40.0)),
                  (Engine("e", 310.0, 400.0, {"ox": 1.65, "fuel": 1.0}),))
    rep = replay(craft, [ev(1, "use", engine="e", propellant=100.0)])
    assert rep.drawn[0] == pytest.approx([62.264, 37.736], abs=5e-4)
    state = cap.State(craft.initial_mass_kg, craft.loads())
    dv, limiting = cap.dv_available(craft, state, 0)
    assert limiting == "ox"
    burnable = craft.initial_mass_kg * (1 - math.exp(-dv / craft.engines[0].ve))
    assert burnable == pytest.approx(96.364, abs=5e-4)
    assert 40.0 - burnable / 2.65 == pytest.approx(3.636, abs=5e-4)


def test_yearly_propellant_for_a_routine_budget():
    # Computed by hand (docs/sources.md §2): 2000 kg at Isp 290 s spending 50 m/s per year uses 34.86 kg/yr.
    craft = single_tank(1500.0, 500.0, 290.0)
    rep = replay(craft, [ev(1, "burn", engine="e", dv=50.0)])
    assert rep.propellant[0] == pytest.approx(34.86, abs=0.005)
    assert np.isclose(rep.mass_kg, 2000.0 - rep.propellant[0])
