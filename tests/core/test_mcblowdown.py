"""The Monte Carlo with blowdown feedback per sample (core/mcblowdown.py) against outside references.

Sources named beside each check: scipy.integrate.solve_ivp and scipy.integrate.quad (scipy version in the
assertion messages); the law of large numbers with the central limit theorem's standard error of a mean,
sd/sqrt(n) (any statistics textbook, e.g. Montgomery & Runger, Applied Statistics and Probability for
Engineers, ch. 7); Boyle's law for the isothermal pressurant (p·V constant, Halliday, Resnick & Walker,
Fundamentals of Physics, ch. 19). The exact per-sample replay (``replay_blowdown`` on a perturbed craft and
history, itself checked against solve_ivp in tests/core/test_blowdown.py) measures the linearisation error.
"""
from dataclasses import replace

import numpy as np
import pytest
import scipy
from scipy.integrate import quad, solve_ivp

from ledger.core import blowdown as bd
from ledger.core import mcblowdown as mb
from ledger.core import montecarlo as mc
from ledger.core.craft import Craft, Engine, Performance, Pressurant, Reserve, Tank
from ledger.core.entries import Entry
from ledger.core.montecarlo import _globals, generator

OCM = Performance((5.5e5, 10e5, 15e5, 22e5), (22.4, 41.4, 61.3, 88.0), (204.5, 218.3, 226.4, 231.5))
"""Invented but plausible blowdown table (the benchmark's orbit-control engine)."""


def craft(tables=True, tanks=1):
    # Ideal-gas pressurant (no stored real-gas table): Z = 1, so the isothermal gas follows Boyle's law.
    ts = tuple(Tank(f"hz-{i + 1}", "hydrazine", 57.0, 1.9, 0.079, Pressurant("helium", 22e5 - 2e4 * i, 293.15),
                    load_sigma_kg=0.06) for i in range(tanks))
    feeds = {t.id: 1.0 for t in ts}
    ocm = Engine("ocm", 231.5, 88.0, feeds, isp_sigma_s=3.0, performance=OCM if tables else None)
    rcs = Engine("rcs", 210.0, 2.0, feeds, isp_sigma_s=10.0)
    return Craft("t", 226.4, ts, (ocm, rcs), (Reserve("disposal", "ocm", 28.0),))


def ev(seq, kind, **data):
    return Entry(seq, kind, 600.0 * seq, 600.0 * seq, "x", "", data)


def history():
    """Duration firings and delta-v burns of the table engine mixed with every other kind of entry."""
    out = []
    for i in range(12):
        out.append(ev(len(out) + 1, "burn", engine="ocm", duration=40.0 + 5 * i))
        out.append(ev(len(out) + 1, "burn", engine="ocm", dv=4.0 + 0.5 * i))
        out.append(ev(len(out) + 1, "use", engine="rcs", duration=20.0))
        out.append(ev(len(out) + 1, "use", engine="rcs", propellant=0.05))
        out.append(ev(len(out) + 1, "burn", engine="rcs", dv=0.3))
        out.append(ev(len(out) + 1, "mass", delta=-0.01))
    return out


def setup(c, events):
    model = bd.Model(c)
    temps = bd.event_temperatures(c, [e.at for e in events], [])
    rep, flown = bd.replay_blowdown(c, model, events, temps)
    return model, temps, rep, flown, mb.linearise(c, model, events, rep, flown)


def draws(c, n, seed=7):
    dry, loads, isp, thrust = _globals(c, np.random.default_rng(seed), n)
    phi, psi = mb.factors(c, isp, thrust)
    ds0 = np.hstack([(dry - c.dry_mass_kg + (loads - c.loads()).sum(axis=1))[:, None], loads - c.loads()])
    return ds0, isp, thrust, phi, psi


def test_linearised_samples_match_the_exact_replay_of_each_perturbed_history():
    # The chosen method's error bound, measured: final state of 6 samples (craft draws from the sampler's
    # own distribution, every entry's error drawn) against replay_blowdown on each perturbed craft/history.
    c = craft(tanks=2)
    events = history()
    model, temps, rep, flown, lin = setup(c, events)
    ds0, isp, thrust, phi, psi = draws(c, 6)
    z = np.random.default_rng(3).standard_normal((6, len(events)))
    got = lin.final(ds0, phi, psi, z)
    worst = 0.0
    for s in range(6):
        r = mb.exact_sample(c, events, temps, ds0[s], thrust[s] / [e.thrust_n for e in c.engines],
                            isp[s] / [e.isp_s for e in c.engines], z[s])
        exact = np.concatenate([[r.mass_kg], r.remaining_kg])
        dev = np.abs(exact - lin.nominal).max()
        assert dev > 0.05  # the samples do move (kg)
        worst = max(worst, np.abs(got[s] - exact).max() / dev)
    # second order in deviations of a few per cent: measured 0.1-1.8 % of the deviation (<= 8 g); bound 3 %
    assert worst < 0.03, f"linearisation error {worst:.2%} of the sample's deviation"


def test_a_sample_with_higher_mass_flow_matches_solve_ivp_on_its_own_falling_pressure():
    # One sample with thrust +4 % (mass-flow factor 1.04), only duration firings of the table engine at
    # one temperature: the history is one ODE dx/dt = 1.04·F(p)/(Isp(p)·g0) over the summed firing time,
    # with p from Boyle's law for the ideal-gas pressurant (p_gas·V_ullage constant) plus vapour pressure.
    c = craft()
    events = [ev(i + 1, "burn", engine="ocm", duration=60.0 + 10 * i) for i in range(10)]
    model, temps, rep, flown, lin = setup(c, events)
    factor = 1.04
    tm = model.tanks[0]
    rho_l, p_vap = (float(v) for v in tm.liquid(293.15))
    vu0 = tm.volume - 57.0 / rho_l
    pg0 = tm.gas_kg / vu0 * tm.rm * 293.15

    def rate(t, y):
        p = pg0 * vu0 / (tm.volume - (57.0 - y[0]) / rho_l) + p_vap
        return [factor * np.interp(p, OCM.pressure_pa, OCM.thrust_n) / (np.interp(p, OCM.pressure_pa, OCM.isp_s) * 9.80665)]

    total = sum(e.data["duration"] for e in events)
    want = 57.0 - solve_ivp(rate, (0.0, total), [0.0], method="DOP853", rtol=1e-12, atol=1e-12).y[0, -1]
    exact = mb.exact_sample(c, events, temps, np.zeros(2), np.array([factor, 1.0]), np.ones(2), np.zeros(len(events)))
    assert exact.remaining_kg[0] == pytest.approx(want, rel=1e-6), f"scipy {scipy.__version__} solve_ivp DOP853"
    got = lin.final(np.zeros((1, 2)), np.array([[factor, 1.0]]), np.ones((1, 2)))[0, 1]
    nominal = rep.remaining_kg[0]
    # linearised: within 2 % of the sample's own deviation from nominal (second order in 4 %)
    assert abs(got - want) < 0.02 * abs(want - nominal), f"scipy {scipy.__version__} solve_ivp DOP853"


def test_higher_mass_flow_ends_at_a_lower_feed_pressure_and_draws_less_than_in_proportion():
    # Physical property: drawing more empties the tank further, the ullage grows, and the pressurant's
    # pressure falls (Boyle's law, isothermal: p·V constant); the lower pressure then lowers the later
    # mass flow, so the extra draw is less than the factor times the nominal draw (the feedback the
    # constant-performance stand-in left out).
    c = craft()
    events = [ev(i + 1, "burn", engine="ocm", duration=200.0) for i in range(8)]
    model, temps, rep, flown, lin = setup(c, events)
    hi = lin.final(np.zeros((1, 2)), np.array([[1.05, 1.0]]), np.ones((1, 2)))[0]
    p = model.tank_pressures(np.array([hi[1:], rep.remaining_kg]), temps[-1:].repeat(2, axis=0))[:, 0]
    assert p[0] < p[1]
    extra = rep.remaining_kg[0] - hi[1]
    assert 0 < extra < 0.05 * rep.propellant.sum()


def test_mean_draw_of_a_duration_firing_is_the_nominal_integrated_draw():
    # Law of large numbers: the mean of 10,000 sampled draws is within 4 standard errors (sd/sqrt(n)) of
    # the nominal integrated draw, plus the bias of the sampled mass-flow factor thrust/Isp (E[1/Isp]
    # exceeds 1/E[Isp] by the relative Isp variance, (3/231.5)^2 = 1.7e-4 of the draw).
    c = craft()
    events = [ev(1, "burn", engine="ocm", duration=120.0)]
    model, temps, rep, flown, lin = setup(c, events)
    s = mb.simulate(c, model, events, rep, flown, temps[-1], samples=10_000, seed=11, linear=lin)
    _, loads, _, _ = _globals(c, generator(np.random.SeedSequence(11).spawn(2)[0]), 10_000)
    drawn = loads[:, 0] - s.remaining_kg[:, 0]
    nominal = float(bd.timed_draw(model, 0, c.loads()[None, :], temps[:1], 120.0)[0])
    se = drawn.std(ddof=1) / np.sqrt(len(drawn))
    assert abs(drawn.mean() - nominal) < 4 * se + 1.7e-4 * nominal


def test_each_samples_dv_available_integrates_its_own_falling_isp():
    # dv available of a sample = its Isp factor x ∫ ve(p(x))/(m - x) dx over its own usable propellant,
    # the integral by scipy's quad on the same curve.
    c = craft()
    events = history()
    model, temps, rep, flown, lin = setup(c, events)
    s = mb.simulate(c, model, events, rep, flown, temps[-1], samples=50, seed=5, linear=lin)
    _, _, isp, _ = _globals(c, generator(np.random.SeedSequence(5).spawn(2)[0]), 50)
    for k in (0, 17, 49):
        m, r = s.mass_kg[k], s.remaining_kg[k]
        draw = r[0] - c.residuals()[0]
        rho_l, pv = model.liquid(temps[-1:])
        ve = lambda y: float(model.ve(0, model.feed_pressure(0, r[None, :], np.array([y]), temps[-1:], rho_l, pv))[0])  # noqa: E731
        want = isp[k, 0] / 231.5 * quad(lambda y: ve(y) / (m - y), 0.0, draw, epsabs=0, epsrel=1e-12, limit=200)[0]
        got = s.ve[k, 0] * np.log(m / (m - draw))
        assert got == pytest.approx(want, rel=1e-8), f"scipy {scipy.__version__} integrate.quad"
    # dv free of the engine that flies the reserve: the reserve flies last, at the lowest pressures, and
    # delta-v adds along one draw (∫ over [0, D] = ∫ over [0, D - x_r] + ∫ over [D - x_r, D]), so per sample
    # dv free = dv available - reserve dv with the falling Isp, whatever the pressure curve.
    from ledger.core import sampled
    _, avail, free = sampled.capability_samples(c, s)
    assert np.allclose(free[:, 0], np.maximum(avail[:, 0] - 28.0, 0.0), rtol=0, atol=1e-9)


def test_constant_performance_craft_keep_todays_sampler():
    # A craft without tables never reaches mcblowdown: the service runs core.montecarlo as before.
    from ledger.services import uncertainty

    class Snap:
        blowdown = None
        flight_craft = craft(tables=False)
        flight_events = tuple(history())

    a = uncertainty.run(Snap(), samples=500, seed=9)
    b = mc.simulate(Snap.flight_craft, Snap.flight_events, samples=500, seed=9, workers=uncertainty.WORKERS)
    assert np.array_equal(a.remaining_kg, b.remaining_kg) and np.array_equal(a.ve, b.ve)


def test_a_rebaseline_wipes_the_tanks_earlier_errors():
    # After a re-baseline of the only tank, its remaining no longer depends on the load error.
    c = craft()
    events = history()[:12] + [ev(13, "rebaseline", tank="hz-1", remaining_kg=40.0, sigma_kg=0.5)]
    _, _, _, _, lin = setup(c, events)
    assert lin.start[1, 1] == 0.0
    assert np.sqrt((lin.noise[:, 1] ** 2).sum()) == pytest.approx(0.5)


def test_a_drawn_feed_share_moves_where_each_kilogram_comes_from():
    # A mixture-ratio draw changes the engine's feed shares; first order against the exact replay of the
    # craft with those shares (the feed pressure's re-weighting between the tanks is second order here).
    c = craft(tanks=2)
    events = history()
    model, temps, rep, flown, lin = setup(c, events)
    share = 0.52
    c2 = replace(c, engines=tuple(replace(e, feeds={"hz-1": share, "hz-2": 1 - share}) for e in c.engines))
    r2, _ = bd.replay_blowdown(c2, bd.Model(c2), events, temps)
    exact = np.concatenate([[r2.mass_kg], r2.remaining_kg])
    dev = np.zeros((1, 2, 2))
    dev[0, :, 0], dev[0, :, 1] = share - 0.5, 0.5 - share
    got = lin.final(np.zeros((1, 3)), np.ones((1, 2)), np.ones((1, 2)), frac_dev=dev)[0]
    moved = np.abs(exact - lin.nominal).max()
    assert moved > 0.5
    assert np.abs(got - exact).max() < 0.01 * moved
