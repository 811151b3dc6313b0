"""The bundled lunar orbiter (invented data): dv free, the check and the forecast with the falling Isp.

Checks: additivity of delta-v along one draw (∫_a^b + ∫_b^c = ∫_a^c, common practice): the orbit-control
engine's dv free is its dv available less its own 28 m/s disposal reserve, and a checked burn leaves dv free
less the pending plans and the burn; the reserve's propellant against scipy.integrate.quad of
ve(p(x))/(m - x) over the last part of the tanks (scipy version in the message).
"""
import numpy as np
import pytest
import scipy
from scipy.integrate import quad

from ledger.core import blowcap as bc
from ledger.services import browse, forecast, scenario, views


@pytest.fixture(scope="module")
def snap(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lunar")
    return scenario.build(scenario.bundled()["lunar-orbiter"], str(folder / "l.json")).snapshot()


def test_dv_free_is_dv_available_less_the_reserve_on_the_same_engine(snap):
    ocm = {e.engine: e for e in snap.engines}["ocm"]
    reserve = sum(r.dv_m_s for r in snap.craft.reserves if r.engine == "ocm")
    assert reserve == pytest.approx(28.0)
    assert ocm.reserves_met and ocm.dv_free_m_s == pytest.approx(ocm.dv_available_m_s - reserve, rel=1e-7)


def test_reserve_propellant_is_the_last_part_of_the_tanks(snap):
    view = snap.blowdown
    e = snap.craft.engine_index("ocm")
    held = np.array([t["reserve_kg"] for t in browse.tanks(snap)])
    usable = snap.usable_kg
    x0 = float(np.sum(usable - held))  # drawn before the reserve starts (both tanks, equal shares)
    rr, tt = snap.state.remaining_kg[None, :], view.temperature_k[None, :]
    rho_l, pv = view.model.liquid(tt)
    ve = lambda x: float(view.model.ve(e, view.model.feed_pressure(e, rr, np.array([x]), tt, rho_l, pv))[0])  # noqa: E731
    m = snap.state.mass_kg
    dv = quad(lambda x: ve(x) / (m - x), x0, float(usable.sum()), epsabs=0, epsrel=1e-11)[0]
    assert dv == pytest.approx(28.0, rel=1e-6), f"scipy {scipy.__version__} integrate.quad"


def test_check_after_figure_is_dv_free_less_plans_and_burn(snap):
    out = views.check(snap, "ocm", 10.0)
    plans = sum(c["dv_m_s"] for c in out["commitments"] if c["engine"] == "ocm")
    free = {e.engine: e for e in snap.engines}["ocm"].dv_free_m_s
    assert out["verdict"] == "feasible"
    assert out["dv_free_after_m_s"] == pytest.approx(free - plans - 10.0, rel=1e-6)


def test_forecast_history_ends_at_status_dv_free(snap):
    f = forecast.forecast(snap, series=True)
    hist = f["series"]["ocm"]["history_dv"]
    free = {e.engine: e for e in snap.engines}["ocm"].dv_free_m_s
    assert hist[-1] == pytest.approx(free, rel=1e-9)
    # dv free falls as propellant is spent; it rises only where mass leaves the craft (the lens cover)
    from ledger.core import forecast as fc
    events = snap.resolved.events
    idx = fc.sample_indices(len(events), forecast.HISTORY_POINTS)
    rises = [events[int(idx[k])].kind for k, (a, b) in enumerate(zip(hist, hist[1:])) if b > a + 1e-6]
    assert rises == ["mass"]
    life = f["engines"][0]
    assert life["years_left"] == pytest.approx(free / 70.0, rel=1e-9)


def test_rcs_dv_free_holds_back_the_ocm_reserve_flown_last(snap):
    view = snap.blowdown
    e = snap.craft.engine_index("rcs")
    x, _, met = bc.free_draw(view.model, np.array([snap.state.mass_kg]), snap.state.remaining_kg[None, :],
                             view.temperature_k[None, :], e)
    held = np.array([t["reserve_kg"] for t in browse.tanks(snap)])
    assert met[0] and float(x[0]) == pytest.approx(float(np.sum(snap.usable_kg - held)), rel=1e-7)
