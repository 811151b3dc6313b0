"""Blowdown tanks and performance tables against outside references.

Sources named beside each check: scipy.integrate.solve_ivp (scipy version printed in the assertion
message), Boyle's law (isothermal ideal gas, p·V constant: any physics textbook, e.g. Halliday, Resnick &
Walker, Fundamentals of Physics, ch. 19), helium compressibility from CoolProp PropsSI directly
(CoolProp version in the message; docs/sources.md §6: Z 1.0107 at 2.2 MPa/20 degC, 1.146 at 31 MPa).
"""
from dataclasses import replace

import numpy as np
import pytest
import scipy
from scipy.integrate import solve_ivp

from ledger.core import blowdown as bd
from ledger.core.craft import G0, Craft, Engine, Performance, Pressurant, Tank
from ledger.core.entries import Entry
from ledger.core.replay import replay

CoolProp = pytest.importorskip("CoolProp")
from CoolProp.CoolProp import PropsSI  # noqa: E402

from ledger import realgas  # noqa: E402

TABLE = Performance((5.5e5, 10e5, 15e5, 22e5), (0.26, 0.48, 0.71, 1.02), (204.5, 218.3, 226.4, 231.5))
"""The issue's example table (invented but plausible values)."""


def tank(pressure_pa=22e5, load=57.0, volume=0.079, expansion=1.0, gas="helium", tid="hyd"):
    t = Tank(tid, "hydrazine", load, 1.0, volume, Pressurant(gas, pressure_pa, 293.15), expansion=expansion)
    return replace(t, gas_table=realgas.gas_table(t))


def craft(*tanks, perf=TABLE, feeds=None):
    tanks = tanks or (tank(),)
    feeds = feeds or {t.id: 1.0 for t in tanks}
    mono = Engine("mono", 231.5, 1.02, feeds, performance=perf)
    const = Engine("big", 220.0, 20.0, feeds)
    return Craft("t", 200.0, tuple(tanks), (mono, const))


def reference_draw(model, e, r0, temps, seconds=None, dv=None, m0=None):
    """The same curve integrated by scipy's solve_ivp (RK45/DOP853, tight tolerances)."""
    r0 = np.asarray(r0, float)[None, :]
    temps = np.asarray(temps, float)[None, :]
    rho_l, p_vap = model.liquid(temps)

    def p_of(x):
        return model.feed_pressure(e, r0, np.array([x]), temps, rho_l, p_vap)

    if seconds is not None:
        f = lambda t, y: [float(model.flow(e, p_of(y[0]))[0])]  # noqa: E731
        span = seconds
    else:
        f = lambda v, y: [(m0 - y[0]) / float(model.ve(e, p_of(y[0]))[0])]  # noqa: E731
        span = dv
    sol = solve_ivp(f, (0.0, span), [0.0], method="DOP853", rtol=1e-12, atol=1e-14)
    return float(sol.y[0, -1])


@pytest.mark.parametrize("seconds,expansion", [(60.0, 1.0), (3000.0, 1.0), (40000.0, 1.0), (3000.0, 1.667)])
def test_duration_firing_matches_solve_ivp(seconds, expansion):
    c = craft(tank(expansion=expansion))
    m = bd.Model(c)
    for r in (57.0, 30.0):  # full (22 bar) and part-drawn
        got = float(bd.timed_draw(m, 0, [r], [293.15], seconds)[0])
        want = reference_draw(m, 0, [r], [293.15], seconds=seconds)
        assert got == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} solve_ivp DOP853"


def test_long_firing_crosses_table_points_and_matches_solve_ivp():
    c = craft()
    m = bd.Model(c)
    x = float(bd.timed_draw(m, 0, [57.0], [293.15], 60000.0)[0])
    rho_l, pv = m.liquid(np.array([[293.15]]))
    p_end = float(m.feed_pressure(0, np.array([[57.0]]), np.array([x]), np.array([[293.15]]), rho_l, pv)[0])
    assert p_end < 15e5  # crossed at least the 15 bar point of the table
    assert x == pytest.approx(reference_draw(m, 0, [57.0], [293.15], seconds=60000.0), rel=1e-6), \
        f"scipy {scipy.__version__} solve_ivp"


@pytest.mark.parametrize("dv", [1.0, 60.0, 200.0])
def test_delta_v_burn_matches_solve_ivp(dv):
    c = craft()
    m = bd.Model(c)
    got = float(bd.dv_draw(m, 0, 257.0, [57.0], [293.15], dv)[0])
    want = reference_draw(m, 0, [57.0], [293.15], dv=dv, m0=257.0)
    assert got == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} solve_ivp"


def test_dv_over_draw_matches_scipy_quad():
    from scipy.integrate import quad
    c = craft()
    m = bd.Model(c)
    r0, temps = np.array([[40.0]]), np.array([[293.15]])
    rho_l, pv = m.liquid(temps)
    ve = lambda x: float(m.ve(0, m.feed_pressure(0, r0, np.array([x]), temps, rho_l, pv))[0])  # noqa: E731
    want = quad(lambda x: ve(x) / (240.0 - x), 0.0, 39.0, epsabs=0, epsrel=1e-12, limit=200)[0]
    got = float(bd.dv_over_draw(m, 0, 240.0, r0, temps, 39.0)[0])
    assert got == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} integrate.quad"


def test_isothermal_low_pressure_follows_boyles_law():
    # Helium at 1.5 bar: Z - 1 is about 1e-4 (CoolProp), so the real-gas model must follow p·V = const
    # (Boyle's law) to well within 1e-3 as the ullage grows from 22.5 L to 79 L.
    t = tank(pressure_pa=1.5e5)
    mt = bd.TankModel(t)
    rho_l, pv = mt.liquid(293.15)
    v0 = mt.ullage(57.0, rho_l)
    p0 = float(mt.pressure(57.0, 293.15)) - pv
    for r in (50.0, 30.0, 5.0, 0.0):
        v = mt.ullage(r, rho_l)
        p = float(mt.pressure(r, 293.15)) - pv
        assert p == pytest.approx(p0 * v0 / v, rel=1e-3), "Boyle's law p·V = p0·V0"


@pytest.mark.parametrize("pressure_pa,z_expected", [(22e5, 1.01), (300e5, 1.15)])
def test_tank_model_uses_real_gas_helium(pressure_pa, z_expected):
    # The model's pressure at CoolProp's density for (p, 20 degC) gives p back, and Z is CoolProp's,
    # about 1.01 at 22 bar and 1.15 at 300 bar (an ideal gas would be 1 % and 15 % off).
    t = tank(pressure_pa=pressure_pa)
    mt = bd.TankModel(t)
    rho = PropsSI("D", "P", pressure_pa, "T", 293.15, "Helium")
    z_coolprop = pressure_pa * PropsSI("M", "Helium") / (rho * bd.R_GAS * 293.15)
    z_model = float(mt.compressibility(np.array(rho), np.array(293.15)))
    assert z_model == pytest.approx(z_coolprop, rel=2e-5), f"CoolProp {CoolProp.__version__} PropsSI"
    assert z_model == pytest.approx(z_expected, abs=0.01), f"CoolProp {CoolProp.__version__}: Z of helium"


def test_pressure_at_loading_is_the_loading_pressure():
    # The pressurant mass comes from CoolProp's density at loading: the model returns the loading pressure.
    t = tank()
    assert float(bd.TankModel(t).pressure(57.0, 293.15)) == pytest.approx(22e5, rel=1e-6)


def history(n):
    ev = []
    for i in range(n):
        ev.append(Entry(3 * i + 1, "use", 3.0 * i, 0.0, "x", "", {"engine": "mono", "duration": 900.0}))
        ev.append(Entry(3 * i + 2, "burn", 3.0 * i + 1, 0.0, "x", "", {"engine": "mono", "dv": 0.15}))
        ev.append(Entry(3 * i + 3, "use", 3.0 * i + 2, 0.0, "x", "", {"engine": "big", "propellant": 0.01}))
    return ev


def test_fixed_point_replay_equals_the_entry_by_entry_loop():
    c = craft()
    m = bd.Model(c)
    ev = history(40)
    temps = bd.event_temperatures(c, [e.at for e in ev], [])
    rep, flown = bd.replay_blowdown(c, m, ev, temps)
    mass, rem = c.initial_mass_kg, c.loads()
    for e in ev:
        if e.get("engine") == "big":
            x = e.get("propellant")
        elif e.get("duration") is not None:
            x = float(bd.timed_draw(m, 0, rem[None, :], temps[:1], e.get("duration"))[0])
        else:
            x = float(bd.dv_draw(m, 0, mass, rem[None, :], temps[:1], e.get("dv"))[0])
        mass, rem = mass - x, rem - x
    assert rep.mass_kg == pytest.approx(mass, rel=1e-12)
    assert rep.remaining_kg[0] == pytest.approx(rem[0], rel=1e-10)
    burns = [k for k, e in enumerate(ev) if e.kind == "burn"]
    assert np.allclose(rep.dv[burns], 0.15, rtol=1e-9)  # each burn's delta-v as recorded


def test_constant_engines_replay_as_before():
    c = craft(perf=None)
    c = replace(c, engines=(replace(c.engines[0], performance=None),) + c.engines[1:])
    ev = history(20)
    temps = bd.event_temperatures(c, [e.at for e in ev], [])
    rep, flown = bd.replay_blowdown(c, bd.Model(c), ev, temps)
    plain = replay(c, ev)
    assert flown.passes == 0
    assert np.array_equal(rep.remaining, plain.remaining)


def test_temperature_from_latest_reading_else_loading():
    c = craft()
    temps = bd.event_temperatures(c, [0.0, 10.0, 20.0], [(0, 5.0, 300.0), (0, 15.0, 305.0)])
    assert temps[:, 0].tolist() == [293.15, 300.0, 305.0]


def test_a_burn_by_duration_delivers_the_integrated_ve():
    # dv = ∫ ve(p(x))/(m0 - x) dx over the draw, the integral taken by scipy's quad on the same curve.
    from scipy.integrate import quad
    c = craft()
    m = bd.Model(c)
    ev = [Entry(1, "burn", 0.0, 0.0, "x", "", {"engine": "mono", "duration": 30000.0})]
    temps = bd.event_temperatures(c, [0.0], [])
    rep, flown = bd.replay_blowdown(c, m, ev, temps)
    r0, rho_l, pv = np.array([[57.0]]), *m.liquid(temps)
    ve = lambda x: float(m.ve(0, m.feed_pressure(0, r0, np.array([x]), temps, rho_l, pv))[0])  # noqa: E731
    x = float(rep.propellant[0])
    want = quad(lambda y: ve(y) / (c.initial_mass_kg - y), 0.0, x, epsabs=0, epsrel=1e-12)[0]
    assert rep.dv[0] == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} integrate.quad"


def test_codec_keeps_tables_and_an_old_stored_craft_falls_back_to_the_ideal_gas():
    from ledger.core.codec import craft_from_dict, craft_to_dict
    c = craft(tank(expansion=1.2))
    back = craft_from_dict(craft_to_dict(c))
    assert back == c  # performance, qualified range, expansion and the Z table survive the store's form
    d = craft_to_dict(c)
    del d["tanks"][0]["gas_table"]  # as a ledger created before blowdown modelling stores it
    old = bd.Model(craft_from_dict(d))
    assert old.ideal == ["hyd"]
    # Boyle's law at loading: the ideal fallback gives the loading pressure back, and differs from the real
    # gas by helium's Z - 1 (about 1 % at 22 bar, CoolProp)
    p_ideal = float(old.tanks[0].pressure(40.0, 293.15))
    p_real = float(bd.Model(c).tanks[0].pressure(40.0, 293.15))
    assert float(old.tanks[0].pressure(57.0, 293.15)) == pytest.approx(22e5, rel=1e-9)
    assert 0.001 < abs(p_real - p_ideal) / p_real < 0.02


def test_check_flies_a_table_engines_burn_against_the_falling_pressure():
    # The check's propellant for a burn equals the delta-v ODE's draw (itself checked against solve_ivp).
    from ledger.core import capability as cap
    c = craft()
    m = bd.Model(c)
    state = cap.State(c.initial_mass_kg - 30.0, c.loads() - 30.0)
    res = cap.check(c, state, "mono", 50.0, fly_fn=bd.flyer(m, np.array([293.15])))
    want = reference_draw(m, 0, [27.0], [293.15], dv=50.0, m0=state.mass_kg)
    assert res.propellant_kg == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} solve_ivp"


def test_zero_amounts_and_an_empty_history_replay_cleanly():
    c = craft()
    m = bd.Model(c)
    ev = [Entry(1, "burn", 0.0, 0.0, "x", "", {"engine": "mono", "dv": 0.0}),
          Entry(2, "use", 1.0, 0.0, "x", "", {"engine": "mono", "duration": 0.0})]
    rep, flown = bd.replay_blowdown(c, m, ev, bd.event_temperatures(c, [0.0, 1.0], []))
    assert rep.mass_kg == c.initial_mass_kg and np.all(np.isfinite(rep.dv)) and np.all(np.isfinite(flown.ve_event))
    rep, _ = bd.replay_blowdown(c, m, [], bd.event_temperatures(c, [], []))
    assert rep.mass_kg == c.initial_mass_kg


def _entry_by_entry(c, m, ev, temps):
    """The plain sequential loop: each firing integrated from the state the previous ones left."""
    mass, rem = c.initial_mass_kg, c.loads()
    frac = c.feed_fractions()
    for k, e in enumerate(ev):
        i = c.engine_index(e.get("engine"))
        if e.get("propellant") is not None:
            x = e.get("propellant")
        elif e.get("duration") is not None:
            x = float(bd.timed_draw(m, i, rem[None, :], temps[k:k + 1], e.get("duration"))[0])
        else:
            x = float(bd.dv_draw(m, i, mass, rem[None, :], temps[k:k + 1], e.get("dv"))[0])
        mass, rem = mass - x, rem - x * frac[i]
    return mass, rem


def test_newton_passes_match_the_loop_in_fewer_passes_than_plain_ones(monkeypatch):
    # Late-life history with strong feedback (long firings, two tanks fed alike, a gauge temperature
    # change): the accelerated fixed point must land on the sequential loop's figures (the stop rule is
    # unchanged: |F(x) - x| <= TOL_REL), in fewer passes than the plain passes need.
    c = craft(tank(tid="a"), tank(pressure_pa=21.5e5, tid="b"))
    m = bd.Model(c)
    ev = []
    for i in range(60):
        ev.append(Entry(2 * i + 1, "use", 2.0 * i, 0.0, "x", "", {"engine": "mono", "duration": 4000.0}))
        ev.append(Entry(2 * i + 2, "burn", 2.0 * i + 1, 0.0, "x", "", {"engine": "mono", "dv": 0.6}))
    temps = bd.event_temperatures(c, [e.at for e in ev], [(0, 50.0, 300.0), (1, 70.0, 296.0)])
    rep, flown = bd.replay_blowdown(c, m, ev, temps)
    mass, rem = _entry_by_entry(c, m, ev, temps)  # its step counts differ a little: 1e-12 relative
    assert rep.mass_kg == pytest.approx(mass, rel=1e-11)
    assert np.allclose(rep.remaining_kg, rem, rtol=1e-10, atol=0)
    monkeypatch.setattr(bd, "_one_direction", lambda *a: None)
    plain, flown_plain = bd.replay_blowdown(c, m, ev, temps)
    assert np.allclose(plain.remaining, rep.remaining, rtol=0, atol=1e-9)
    assert flown.passes < flown_plain.passes


def test_engines_on_different_feed_rows_keep_the_plain_passes():
    # Two table engines on different tanks: no one direction, so the plain passes run (and still match the loop).
    c = craft(tank(tid="a"), tank(tid="b"))
    mono2 = replace(c.engines[0], id="mono2", feeds={"b": 1.0})
    c = replace(c, engines=(replace(c.engines[0], feeds={"a": 1.0}), mono2))
    m = bd.Model(c)
    ev = [Entry(k + 1, "use", float(k), 0.0, "x", "", {"engine": ("mono", "mono2")[k % 2], "duration": 3000.0})
          for k in range(30)]
    temps = bd.event_temperatures(c, [e.at for e in ev], [])
    assert bd._one_direction(m, bd.steps_from_events(c, ev)) is None
    rep, _ = bd.replay_blowdown(c, m, ev, temps)
    mass, rem = _entry_by_entry(c, m, ev, temps)
    assert np.allclose(rep.remaining_kg, rem, rtol=1e-10, atol=0)


@pytest.mark.parametrize("values", [[293.15] * 5, [300.0, 290.0, 300.0, 310.0, 290.0], []])
def test_distinct_equals_numpy_unique(values):
    # Reference: numpy.unique(return_inverse=True) (numpy version in the message).
    a = np.array(values, dtype=float)
    got, inv = bd.distinct(a)
    want, want_inv = np.unique(a, return_inverse=True)
    assert np.array_equal(got, want) and np.array_equal(inv, want_inv.ravel()), f"numpy {np.__version__}"
