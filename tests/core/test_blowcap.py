"""dv free, reserves and the check with performance tables (core.blowcap) against outside references.

Sources named beside each check: scipy.integrate.quad and scipy.optimize.brentq (scipy version in the
assertion message) for the integral of ve(p(x))/(m - x) dx, the reserve mass written out in each test;
the rocket equation dv = c·ln(m0/m1) (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2-4,
docs/sources.md §2, from memory: equation number not checked) for a flat table; additivity of delta-v
along one draw (∫_a^b + ∫_b^c = ∫_a^c, common practice).
"""
from dataclasses import replace

import numpy as np
import pytest
import scipy
from scipy.integrate import quad
from scipy.optimize import brentq

from ledger.core import blowcap as bc
from ledger.core import blowdown as bd
from ledger.core import capability as cap
from ledger.core.craft import G0, Craft, Engine, Performance, Pressurant, Reserve, Tank

pytest.importorskip("CoolProp")
from ledger import realgas  # noqa: E402

TABLE = Performance((5.5e5, 10e5, 15e5, 22e5), (0.26, 0.48, 0.71, 1.02), (204.5, 218.3, 226.4, 231.5))
"""The issue's example table (invented but plausible values)."""
FLAT = Performance((5.5e5, 22e5), (0.26, 1.02), (220.0, 220.0))
T = np.array([293.15])
QUAD = f"scipy {scipy.__version__} integrate.quad + optimize.brentq"


def make_craft(perf=TABLE, reserves=(), residual=1.0):
    t = Tank("hyd", "hydrazine", 57.0, residual, 0.079, Pressurant("helium", 22e5, 293.15))
    t = replace(t, gas_table=realgas.gas_table(t))
    mono = Engine("mono", 231.5, 1.02, {"hyd": 1.0}, performance=perf)
    big = Engine("big", 220.0, 20.0, {"hyd": 1.0})
    return Craft("t", 200.0, (t,), (mono, big), reserves=tuple(reserves))


def ve_of(model, r0):
    """ve(x) of the table engine after drawing x kg from r0 kg, straight from the tank model and table."""
    rr, tt = np.array([[r0]]), T[None, :]
    rho_l, pv = model.liquid(tt)
    return lambda x: float(model.ve(0, model.feed_pressure(0, rr, np.array([x]), tt, rho_l, pv))[0])


def state(r0):
    return cap.State(200.0 + r0, np.array([r0]))


@pytest.mark.parametrize("r0", [57.0, 30.0, 12.0])
def test_table_engine_with_its_own_reserve_matches_quad(r0):
    reserve = 25.0
    c = make_craft(reserves=[Reserve("disposal", "mono", reserve)])
    m = bd.Model(c)
    ve, mass, usable = ve_of(m, r0), 200.0 + r0, r0 - 1.0
    dv_between = lambda a, b: quad(lambda x: ve(x) / (mass - x), a, b, epsabs=0, epsrel=1e-11, limit=200)[0]  # noqa: E731
    # the reserve mass: the reserve is the last propellant, flown from x* down to the residual
    x_star = brentq(lambda x: dv_between(x, usable) - reserve, 0.0, usable, xtol=1e-13)
    want = dv_between(0.0, x_star)
    got, limiting, met = bc.dv_free(m, state(r0), T, 0)
    assert met and limiting == "hyd"
    assert got == pytest.approx(want, rel=1e-6), QUAD


@pytest.mark.parametrize("r0", [57.0, 20.0])
def test_table_engine_held_back_by_a_constant_engines_reserve_matches_quad(r0):
    reserve = 40.0
    c = make_craft(reserves=[Reserve("disposal", "big", reserve)])
    m = bd.Model(c)
    ve, mass, usable = ve_of(m, r0), 200.0 + r0, r0 - 1.0
    # reserve mass written out: after x*, the reserve at ve_big from mass m - x* draws the rest exactly:
    # (m - x*)·(1 - E) = usable - x*, E = exp(-reserve/ve_big)
    e = np.exp(-reserve / c.engines[1].ve)
    x_star = (usable - mass * (1.0 - e)) / e
    want = quad(lambda x: ve(x) / (mass - x), 0.0, x_star, epsabs=0, epsrel=1e-12, limit=200)[0]
    got, _, met = bc.dv_free(m, state(r0), T, 0)
    assert met and got == pytest.approx(want, rel=1e-6), QUAD


def test_a_flat_table_gives_the_rocket_equation():
    reserve = 30.0
    c = make_craft(perf=FLAT, reserves=[Reserve("disposal", "mono", reserve)])
    m = bd.Model(c)
    r0 = 40.0
    mass, usable, ve = 200.0 + r0, r0 - 1.0, 220.0 * G0
    # Sutton & Biblarz ch. 2-4 (from memory): all usable flown, less the reserve: c·ln(m/(m - mu)) - reserve
    want = ve * np.log(mass / (mass - usable)) - reserve
    got, _, met = bc.dv_free(m, state(r0), T, 0)
    assert met and got == pytest.approx(want, rel=1e-9)


def test_reserve_on_the_same_engine_is_additive():
    # common practice: delta-v adds along one draw, so dv free = dv available - reserve, however Isp falls
    c = make_craft(reserves=[Reserve("a", "mono", 10.0), Reserve("b", "mono", 15.0)])
    m = bd.Model(c)
    st = state(33.0)
    avail = float(bd.dv_over_draw(m, 0, st.mass_kg, st.remaining_kg[None, :], T[None, :], 32.0)[0])
    got, _, _ = bc.dv_free(m, st, T, 0)
    assert got == pytest.approx(avail - 25.0, rel=1e-7)


def test_constant_engine_free_is_below_the_average_ve_stand_in():
    # Physical property: the reserve is flown last, at the lowest feed pressure and Isp; the stand-in holds
    # it back at the table engine's average exhaust velocity over the remaining propellant, which is higher,
    # so it books too little reserve propellant and leaves too much free for the constant engine.
    c = make_craft(reserves=[Reserve("disposal", "mono", 40.0)])
    m = bd.Model(c)
    for r0 in (57.0, 25.0):
        st = state(r0)
        eq = bd.equivalent_craft(c, m, bd.effective_ve(m, st.mass_kg, st.remaining_kg, T))
        stand_in, _, _ = cap.dv_free(eq, st, 1)
        got, _, met = bc.dv_free(m, st, T, 1)
        held = bc.reserve_held(m, st, T)[0]
        assert met and got < stand_in - 1e-3
        # the reserve's propellant is what is left once the free draw is spent (the whole tank to its residual)
        x = float(bc.free_draw(m, np.array([st.mass_kg]), st.remaining_kg[None, :], T[None, :], 1)[0][0])
        assert held == pytest.approx(r0 - 1.0 - x, rel=1e-9)
        assert held > cap.reserve_draw_per_kg(eq)[0] * (st.mass_kg - x)  # more than at the average ve


def test_no_reserve_leaves_dv_available_and_an_impossible_reserve_is_not_met():
    c = make_craft()
    m = bd.Model(c)
    st = state(30.0)
    avail = float(bd.dv_over_draw(m, 0, st.mass_kg, st.remaining_kg[None, :], T[None, :], 29.0)[0])
    assert bc.dv_free(m, st, T, 0)[0] == pytest.approx(avail, rel=1e-12)
    c2 = make_craft(reserves=[Reserve("too-big", "mono", 1000.0)])
    got, limiting, met = bc.dv_free(bd.Model(c2), st, T, 0)
    assert (got, limiting, met) == (0.0, "hyd", False)


def test_many_states_at_once_equal_one_at_a_time():
    c = make_craft(reserves=[Reserve("disposal", "mono", 20.0), Reserve("x", "big", 5.0)])
    m = bd.Model(c)
    r = np.array([57.0, 40.0, 21.0, 8.0, 3.0])
    mass = 200.0 + r
    many = bc.dv_free_many(m, mass, r[:, None], np.repeat(T[None, :], len(r), axis=0), 0)[0]
    one = [bc.dv_free(m, state(x), T, 0)[0] for x in r]
    assert many == pytest.approx(one, rel=1e-9, abs=1e-9)


def test_check_after_figure_is_additive_for_one_engine():
    # common practice: flying dv from the state leaves dv free less dv for the same engine
    c = make_craft(reserves=[Reserve("disposal", "mono", 20.0)])
    m = bd.Model(c)
    st = state(45.0)
    free_now, _, _ = bc.dv_free(m, st, T, 0)
    res = cap.check(c, st, "mono", 30.0, commitments=[("mono", 12.0)], fly_fn=bc.flyer(m, T))
    assert res.feasible and res.dv_free_after_m_s == pytest.approx(free_now - 42.0, rel=1e-6)


def test_bookkeeping_sigma_takes_each_draws_isp_and_thrust():
    # Hand computation of the model stated in core.booksigma, written out: a given Isp sigma of 3 s is
    # 3/Isp of each draw at the Isp it flew at (a burn's effective Isp dv/(g0·ln(m0/m1)); a timed use's table
    # Isp and thrust at its mean feed pressure), summed per engine (a shared bias), plus each entry's own
    # default share (core.sigmas) independently, plus the load sigma (core.sigmas default share of the load).
    from ledger.core.booksigma import bookkeeping_sigma
    from ledger.core.entries import Entry
    from ledger.core.replay import steps_from_events
    from ledger.core.sigmas import CRAFT_DEFAULTS, ENTRY_DEFAULTS

    c = make_craft()
    c = replace(c, engines=(replace(c.engines[0], isp_sigma_s=3.0), c.engines[1]))
    m = bd.Model(c)
    ev = [Entry(1, "burn", 0.0, 0.0, "x", "", {"engine": "mono", "dv": 60.0}),
          Entry(2, "use", 1.0, 0.0, "x", "", {"engine": "mono", "duration": 20000.0}),
          Entry(3, "burn", 2.0, 0.0, "x", "", {"engine": "mono", "dv": 40.0})]
    temps = bd.event_temperatures(c, [e.at for e in ev], [])
    rep, flown = bd.replay_blowdown(c, m, ev, temps)
    steps = steps_from_events(c, ev)
    isp, thrust = bc.event_performance(m, flown, steps.is_burn)
    got = float(bookkeeping_sigma(c, ev, steps, rep, isp_at=isp, thrust_at=thrust)[0])

    d = rep.drawn[:, 0]
    isp_burn = [e.data["dv"] / (G0 * np.log(rep.mass_before[k] / rep.mass_after[k])) for k, e in enumerate(ev)
                if e.kind == "burn"]
    p_mid = 0.5 * (flown.pressure_start[1] + flown.pressure_end[1])
    isp_use = np.interp(p_mid, TABLE.pressure_pa, TABLE.isp_s)
    bias_isp = 3.0 / isp_burn[0] * d[0] + 3.0 / isp_use * d[1] + 3.0 / isp_burn[1] * d[2]
    bias_thrust = CRAFT_DEFAULTS["thrust"].relative * d[1]  # no thrust sigma given: the default share
    own = ((ENTRY_DEFAULTS["dv"].relative * d[0]) ** 2 + (ENTRY_DEFAULTS["duration"].relative * d[1]) ** 2
           + (ENTRY_DEFAULTS["dv"].relative * d[2]) ** 2)
    load = CRAFT_DEFAULTS["load"].relative * 57.0
    want = np.sqrt(load ** 2 + bias_isp ** 2 + bias_thrust ** 2 + own)
    assert isp_burn[1] < isp_burn[0] < 231.5  # the later burn flew at a lower Isp
    assert got == pytest.approx(want, rel=1e-9)


def test_flat_tables_with_reserves_on_two_engines_equal_the_closed_form():
    # Two tanks fed 2:1 by a flat-table engine, a constant engine on one of them, reserves on both: with no
    # Isp change the search must land on the closed form of core.capability (itself checked against a
    # numerical search in tests/core/test_capability_properties.py) and the rocket equation behind it.
    a = Tank("a", "hydrazine", 40.0, 1.0, 0.06, Pressurant("helium", 22e5, 293.15))
    b = Tank("b", "hydrazine", 30.0, 0.5, 0.05, Pressurant("helium", 20e5, 293.15))
    a, b = (replace(t, gas_table=realgas.gas_table(t)) for t in (a, b))
    flat = Engine("mono", 220.0, 1.0, {"a": 2.0, "b": 1.0}, performance=FLAT)
    big = Engine("big", 300.0, 20.0, {"b": 1.0})
    c = Craft("t", 150.0, (a, b), (flat, big), reserves=(Reserve("r1", "mono", 15.0), Reserve("r2", "big", 20.0)))
    m = bd.Model(c)
    temps = np.array([293.15, 293.15])
    for rem in ([40.0, 30.0], [25.0, 9.0], [12.0, 20.0]):
        st = cap.State(150.0 + sum(rem), np.array(rem))
        for e in (0, 1):
            want, lim_want, met_want = cap.dv_free(c, st, e)
            got, lim, met = bc.dv_free(m, st, temps, e)
            assert (met, lim) == (met_want, lim_want)
            assert got == pytest.approx(want, rel=1e-7, abs=1e-7)
