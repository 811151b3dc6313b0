"""The sample-vectorised capability maths against the one-state figures and against flying the burn.

Invented crafts and states (hypothesis); the checks are physical: the largest burn that keeps the
reserves flyable leaves the limiting tank exactly at its residual after the reserves.
"""
from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from ledger.core import capability as cap
from ledger.core.craft import Craft, Engine, Reserve, Tank


def craft_with(isp_main: float, isp_thr: float, reserve_dv: float) -> Craft:
    return Craft("c", 800.0, (Tank("ox", "MON-3", 300.0, 4.0), Tank("fuel", "MMH", 190.0, 3.0)),
                 (Engine("main", isp_main, 440.0, {"ox": 1.65, "fuel": 1.0}),
                  Engine("thr", isp_thr, 20.0, {"ox": 1.65, "fuel": 1.0}, cant_deg=10.0),
                  Engine("ox-only", 250.0, 5.0, {"ox": 1.0})),
                 (Reserve("eol", "thr", reserve_dv), Reserve("deorbit", "ox-only", reserve_dv / 3)))


state_st = st.tuples(st.floats(0.0, 1.05), st.floats(0.0, 1.05), st.floats(0.0, 400.0))


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(250.0, 340.0), st.floats(250.0, 300.0), state_st), min_size=1, max_size=8),
       st.floats(0.0, 300.0))
def test_rows_with_their_own_exhaust_velocity_equal_the_one_state_figures(rows, reserve_dv):
    # Each row carries its own Isp; the scalar functions on a craft with that Isp must agree.
    base = craft_with(320.0, 290.0, reserve_dv)
    ve = np.array([craft_with(a, b, reserve_dv).ve() for a, b, _ in rows])
    rem = np.array([[fo * 300.0, ff * 190.0] for _, _, (fo, ff, _) in rows])
    mass = base.dry_mass_kg + rem.sum(axis=1) - np.array([d for _, _, (_, _, d) in rows])
    for e in range(3):
        free, lim, met = cap.dv_free_many(base, mass, rem, e, ve=ve)
        avail, _ = cap.dv_available_many(base, mass, rem, e, ve=ve)
        for i, (a, b, _) in enumerate(rows):
            one = craft_with(a, b, reserve_dv)
            s = cap.State(float(mass[i]), rem[i])
            f1, l1, m1 = cap.dv_free(one, s, e)
            assert np.isclose(free[i], f1, rtol=1e-12, atol=1e-9) and bool(met[i]) == m1
            assert (one.tank_ids[lim[i]] if lim[i] >= 0 else None) == l1
            assert np.isclose(avail[i], cap.dv_available(one, s, e)[0], rtol=1e-12, atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.3, 1.0), st.floats(0.3, 1.0), st.floats(1.0, 200.0), st.sampled_from([0, 1, 2]))
def test_dv_free_is_the_edge_of_the_reserves(fo, ff, reserve_dv, engine):
    # Fly dv_free, then the reserves: every tank ends at or above its residual, and the limiting one at it.
    craft = craft_with(320.0, 290.0, reserve_dv)
    rem = np.array([fo * 300.0, ff * 190.0])
    state = cap.State(craft.dry_mass_kg + rem.sum(), rem)
    free, limiting, met = cap.dv_free(craft, state, engine)
    if not met or free == 0.0:
        return
    eid = craft.engine_ids[engine]
    after, _ = cap.fly(craft, state, [(eid, free)] + [(r.engine, r.dv_m_s) for r in craft.reserves])
    margin = after.remaining_kg - craft.residuals()
    assert margin.min() > -1e-6
    assert abs(margin[craft.tank_index(limiting)]) < 1e-6
    assert not cap.check(craft, state, eid, free * 1.001 + 1e-3).feasible


def test_fly_many_rows_match_single_flights():
    craft = craft_with(320.0, 290.0, 20.0)
    mass = np.array([1200.0, 1000.0])
    rem = np.array([[280.0, 170.0], [150.0, 95.0]])
    m, r, draws = cap.fly_many(craft, mass, rem, [("main", 50.0), ("thr", 5.0)])
    for i in range(2):
        s, d = cap.fly(craft, cap.State(float(mass[i]), rem[i]), [("main", 50.0), ("thr", 5.0)])
        assert np.isclose(m[i], s.mass_kg) and np.allclose(r[i], s.remaining_kg)
        # Rocket equation: the mass after is m0 exp(-(50/ve_main + 5/ve_thr)).
        ve = craft.ve()
        assert np.isclose(s.mass_kg, mass[i] * np.exp(-50.0 / ve[0] - 5.0 / ve[1]), rtol=1e-12)


def _bits(a: np.ndarray, b: np.ndarray) -> bool:
    """The same numbers to the bit (signed zeros, NaN where NaN), in the same layout."""
    return (a.shape == b.shape and a.flags["C_CONTIGUOUS"] and b.flags["C_CONTIGUOUS"]
            and np.array_equal(a, b, equal_nan=True) and np.array_equal(np.signbit(a), np.signbit(b)))


@settings(max_examples=80, deadline=None)
@given(st.lists(st.tuples(st.floats(200.0, 340.0), st.floats(200.0, 300.0), st.floats(-0.1, 1.1),
                          st.floats(-0.1, 1.1), st.floats(-50.0, 400.0), st.floats(-0.2, 0.2)),
                min_size=1, max_size=12),
       st.floats(0.0, 300.0), st.booleans(), st.booleans())
def test_tank_major_capability_is_bit_for_bit_the_per_engine_maths(rows, reserve_dv, drawn_shares, no_reserves):
    # sampled.capability_samples works tank-major for speed; it must give exactly the figures of
    # capability.dv_available_many / dv_free_many (checked against single states and flown burns above),
    # for states short of propellant, of zero or negative mass, with per-sample feed shares and without reserves.
    from dataclasses import replace

    from ledger.core import sampled
    from ledger.core.montecarlo import Samples

    craft = craft_with(320.0, 290.0, reserve_dv)
    if no_reserves:
        craft = replace(craft, reserves=())
    ve = np.array([craft_with(a, b, reserve_dv).ve() for a, b, *_ in rows])
    rem = np.array([[fo * 300.0, ff * 190.0] for _, _, fo, ff, _, _ in rows])
    mass = craft.dry_mass_kg + rem.sum(axis=1) - np.array([d for *_, d, _ in rows])
    mass[::5] = np.where(np.arange(len(mass))[::5] % 2, 0.0, -1.0)  # some empty or impossible craft
    frac = None
    if drawn_shares:  # each sample's own mixture ratio on the two bipropellant engines (core.mixture)
        frac = np.broadcast_to(craft.feed_fractions(), (len(rows), 3, 2)).copy()
        r = 1.65 * (1.0 + np.array([x for *_, x in rows]))
        frac[:, :2, 0] = (r / (1.0 + r))[:, None]
        frac[:, :2, 1] = (1.0 / (1.0 + r))[:, None]
    s = Samples(mass, rem, ve, seed=1, segments=1, frac=frac)
    usable, avail, free = sampled.capability_samples(craft, s)
    assert _bits(usable, np.maximum(0.0, rem - craft.residuals()))
    for e in range(3):
        a, _ = cap.dv_available_many(craft, mass, rem, e, ve=ve, frac=frac)
        f, _, _ = cap.dv_free_many(craft, mass, rem, e, ve=ve, frac=frac)
        assert _bits(avail[:, e].copy(), a) and _bits(free[:, e].copy(), np.minimum(f, a))
    # and the check of a burn after commitments (sampled.check_samples), against the same per-engine maths
    from ledger.core.lastaxis import all_last

    burns = [("thr", 3.0), ("main", 40.0)]
    m1, r1, _ = cap.fly_many(craft, mass, rem, burns, ve=ve, frac=frac)
    _, r2, _ = cap.fly_many(craft, m1, r1, [(r.engine, r.dv_m_s) for r in craft.reserves], ve=ve, frac=frac)
    intact = all_last(r2 - craft.residuals() >= -cap.EPS_KG)
    f, _, _ = cap.dv_free_many(craft, m1, r1, 0, ve=ve, frac=frac)
    a, _ = cap.dv_available_many(craft, m1, r1, 0, ve=ve, frac=frac)
    ok = intact & all_last(r1 - craft.residuals() >= -cap.EPS_KG)
    sc = sampled.check_samples(craft, s, "main", 40.0, [("thr", 3.0)])
    assert np.array_equal(sc.intact, intact) and _bits(sc.dv_free_after, np.where(ok, np.minimum(f, a), 0.0))
