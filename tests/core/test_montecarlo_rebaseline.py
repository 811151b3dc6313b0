"""Monte Carlo across re-baselines: against the nominal replay, the per-entry loop and closed forms.

At a re-baseline of tank t every sample's tank t becomes an independent draw N(adopted, sigma) and the
sample's mass changes by that draw less what the tank held just before (the nominal replay's rule with
the adopted value drawn). Craft and ledgers are invented test data. g0 = 9.80665 m/s^2 exactly (3rd
CGPM, 1901); the rocket equation m_after = m_before exp(-dv / (Isp g0)) (Tsiolkovsky; Sutton & Biblarz,
Rocket Propulsion Elements, ch. 4).
"""
from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from ledger.core import montecarlo as mc
from ledger.core import sampled
from ledger.core.craft import G0
from ledger.core.entries import REBASELINE, resolve
from ledger.core.montecarlo_loop import simulate_loop
from ledger.core.replay import replay, replay_loop
from ledger.core.segments import parts, segments
from tests.core.test_montecarlo import biprop, ev, mixed_history, mono, no_sigma
from tests.core.test_replay_rebaseline import CRAFT as HAND_CRAFT
from tests.core.test_replay_rebaseline import history as hand_history


def with_rebaselines(craft, events, where, sigma=None, offset=None):
    """``events`` with a re-baseline inserted before each index in ``where``, cycling through the tanks of
    ``sigma`` (tank id -> kg): the tank takes its nominal bookkeeping there plus ``offset`` (kg)."""
    sigma = sigma or {"ox": 0.3, "gn2": 0.05}
    offset = offset or {"ox": -0.5, "gn2": 0.02}
    names = list(sigma)
    out = list(events)
    for k, i in enumerate(sorted(where, reverse=True)):
        tank = names[k % len(names)]
        before = replay(craft, out[:i]).remaining_kg[craft.tank_index(tank)]
        out.insert(i, ev(10_001 + k, REBASELINE, tank=tank, remaining_kg=float(before + offset[tank]),
                         sigma_kg=sigma[tank], gauge=0))
    return out


def test_rebaselines_cut_the_ledger_into_runs():
    craft = biprop()
    events = with_rebaselines(craft, mixed_history(np.random.default_rng(1), 40), where=[0, 10, 10, 40])
    cut = parts(craft, events)
    assert len(cut.rebases) == 4 and len(cut.runs) == 5
    assert len(cut.runs[0]) == 0 and len(cut.runs[2]) == 0 and len(cut.runs[4]) == 0  # first, back to back, last
    plain = [e for e in events if e.kind != REBASELINE]
    assert len(cut) == sum(len(r) for r in cut.runs) + 4 and len(cut) >= len(segments(craft, plain))
    with pytest.raises(ValueError, match="parts"):
        segments(craft, events)


def test_hand_worked_history_without_uncertainty():
    # The history of tests/core/test_replay_rebaseline.py, worked by hand there: final mass 150 kg, tanks
    # a 30 kg and b 26 kg. With every sigma 0 (re-baselines' too) every sample is that replay.
    craft = no_sigma(HAND_CRAFT)
    events = [e._replace(data={**e.data, "sigma": 0.0} if e.kind != REBASELINE else {**e.data, "sigma_kg": 0.0})
              for e in resolve(hand_history()).events]
    s = mc.simulate(craft, events, samples=7, chunk=3)
    assert s.mass_kg == pytest.approx(np.full(7, 150.0), abs=1e-9)
    assert s.remaining_kg == pytest.approx(np.tile([30.0, 26.0], (7, 1)), abs=1e-9)
    loop = simulate_loop(craft, events, samples=3)
    assert loop.mass_kg == pytest.approx(np.full(3, 150.0), abs=1e-9)
    assert loop.remaining_kg == pytest.approx(np.tile([30.0, 26.0], (3, 1)), abs=1e-9)


@pytest.mark.parametrize("dv_engines", [("main", "thr"), ("thr",), ()])
def test_without_uncertainty_every_sample_is_the_nominal_replay(dv_engines):
    # Reference: the prefix-scan replay and its plain per-entry loop (core.replay), which both set the tank
    # to the adopted value and change the mass by the difference. All three sampler paths are covered.
    craft = no_sigma(biprop())
    events = mixed_history(np.random.default_rng(5), 120, sigma=0.0, dv_engines=dv_engines)
    events = with_rebaselines(craft, events, where=[0, 30, 30, 77, 120], sigma={"ox": 0.0, "fuel": 0.0, "gn2": 0.0},
                              offset={"ox": -1.5, "fuel": 0.7, "gn2": 0.1})
    s = mc.simulate(craft, events, samples=5, chunk=2)
    rep = replay(craft, events)
    m_loop, r_loop = replay_loop(craft, events)
    assert np.allclose(s.mass_kg, rep.mass_kg, rtol=1e-12, atol=1e-9)
    assert np.allclose(s.remaining_kg, rep.remaining_kg, rtol=1e-12, atol=1e-9)
    assert np.allclose(s.mass_kg, m_loop, rtol=1e-12, atol=1e-9) and np.allclose(s.remaining_kg, r_loop, atol=1e-9)


@pytest.mark.parametrize("dv_engines", [("main", "thr"), ("thr",), ()])
def test_sampler_with_rebaselines_has_the_distribution_of_the_per_entry_loop(dv_engines):
    # Same model, two implementations (as in test_montecarlo.py): means, standard deviations and
    # correlations agree within 4 standard errors. The re-baselines' sigmas are of the size of the
    # bookkeeping's own spread, so both matter in the final figures.
    craft = biprop()
    events = mixed_history(np.random.default_rng(11), 60, dv_engines=dv_engines)
    events = with_rebaselines(craft, events, where=[15, 31, 46])
    n = 6000
    fast = mc.simulate(craft, events, samples=n, seed=1)
    slow = simulate_loop(craft, events, samples=n, seed=2)
    for a, b in [(fast.mass_kg, slow.mass_kg)] + [(fast.remaining_kg[:, t], slow.remaining_kg[:, t]) for t in range(3)]:
        se_mean = math.sqrt(a.var() / n + b.var() / n)
        assert abs(a.mean() - b.mean()) < 4 * se_mean
        assert abs(a.std() / b.std() - 1.0) < 4 * math.sqrt(1.0 / n)
    both = [np.column_stack([s.remaining_kg, s.mass_kg]) for s in (fast, slow)]
    for i, j in [(0, 1), (0, 2), (0, 3), (2, 3)]:
        r_fast, r_slow = (np.corrcoef(x[:, i], x[:, j])[0, 1] for x in both)
        assert abs(r_fast - r_slow) < 4 * math.sqrt(2.0 / n)


def test_mean_is_the_nominal_replay_for_small_sigmas():
    # Errors 1e-4 of their values: the samples' mean differs from the nominal replay only by second-order
    # terms, ~(1e-4)^2 relative, far below the 4-standard-error band of the mean.
    base = biprop()
    craft = replace(base, dry_mass_sigma_kg=1e-4 * base.dry_mass_kg,
                    tanks=tuple(replace(t, load_sigma_kg=1e-4 * t.load_kg) for t in base.tanks),
                    engines=tuple(replace(e, isp_sigma_s=1e-4 * e.isp_s, thrust_sigma_n=1e-4 * e.thrust_n)
                                  for e in base.engines))
    events = [e._replace(data={**e.data, "sigma": 1e-4 * abs(next(v for k, v in e.data.items()
                                                                    if k in ("dv", "duration", "propellant", "delta")))})
              for e in mixed_history(np.random.default_rng(3), 200)]
    events = with_rebaselines(craft, events, where=[50, 120, 170], sigma={"ox": 0.01, "gn2": 0.002})
    n = 4000
    s = mc.simulate(craft, events, samples=n, seed=4)
    rep = replay(craft, events)
    for x, nominal in [(s.mass_kg, rep.mass_kg)] + [(s.remaining_kg[:, t], rep.remaining_kg[t]) for t in range(3)]:
        assert abs(x.mean() - nominal) < 4 * x.std(ddof=1) / math.sqrt(n) + 1e-9 * abs(nominal)


def test_same_seed_same_answer_with_rebaselines_whatever_the_threads():
    craft = biprop()
    events = with_rebaselines(craft, mixed_history(np.random.default_rng(2), 200), where=[60, 140])
    a = mc.simulate(craft, events, samples=3000, seed=9, chunk=200, workers=1)
    b = mc.simulate(craft, events, samples=3000, seed=9, chunk=200, workers=2)
    assert np.array_equal(a.mass_kg, b.mass_kg) and np.array_equal(a.remaining_kg, b.remaining_kg)
    c = mc.simulate(craft, events, samples=3000, seed=10, chunk=200)
    assert not np.array_equal(a.remaining_kg, c.remaining_kg)


# One tank, only the re-baseline uncertain (the load's 5 kg error is there to be wiped out by it).
D, L, ISP, RESIDUAL = 1000.0, 400.0, 300.0, 3.0
ADOPTED, SIGMA = 340.0, 0.8


def _one_tank(after):
    craft = mono(D, L, ISP, load_sigma=5.0, residual=RESIDUAL)
    events = [ev(1, "use", engine="e", propellant=50.0, sigma=0.0),
              ev(2, REBASELINE, tank="t", remaining_kg=ADOPTED, sigma_kg=SIGMA, gauge=0), after]
    return craft, events


@pytest.mark.parametrize("confidence", [0.99, 0.9])
def test_usable_low_bound_after_a_rebaseline_then_a_draw_closed_form(confidence):
    # After the re-baseline the tank is r ~ N(340, 0.8) whatever the load was; a use of P = 25 kg (exact)
    # leaves r - P, so the usable low bound at confidence c is adopted - drawn - residual + z sigma with
    # z = Phi^-1(1 - c). The empirical quantile's standard error is sqrt(p (1 - p) / n) / phi(z) * sigma.
    craft, events = _one_tank(ev(3, "use", engine="e", propellant=25.0, sigma=0.0))
    n = 20000
    s = mc.simulate(craft, events, samples=n, seed=13)
    usable, _, _ = sampled.capability_samples(craft, s)
    z = stats.norm.ppf(1.0 - confidence)
    expected = ADOPTED - 25.0 - RESIDUAL + z * SIGMA
    se = math.sqrt(confidence * (1 - confidence) / n) / stats.norm.pdf(z) * SIGMA
    assert abs(sampled.low_bound(usable[:, 0], confidence) - expected) < 4 * se
    assert stats.kstest(s.remaining_kg[:, 0], stats.norm(ADOPTED - 25.0, SIGMA).cdf).pvalue > 1e-3
    # The mass changed by the draw less what the sample's tank held: one tank, so mass - tank = dry mass.
    assert np.allclose(s.mass_kg - s.remaining_kg[:, 0], D, atol=1e-9)


def test_burn_after_a_rebaseline_uses_the_rebaselined_mass_closed_form():
    # A delta-v burn v after the re-baseline: the mass before it is D + r (one tank), so the propellant
    # burnt is (D + r)(1 - E), E = exp(-v / (Isp g0)), and the tank keeps R = r E - D (1 - E): Gaussian,
    # mean 340 E - D (1 - E), sd 0.8 E. Ignoring the mass change (keeping the sample's own load) would
    # leave the 5 kg load error in R.
    v = 150.0
    craft, events = _one_tank(ev(3, "burn", engine="e", dv=v, sigma=0.0))
    E = math.exp(-v / (ISP * G0))
    mean, sd = ADOPTED * E - D * (1 - E), SIGMA * E
    n = 20000
    s = mc.simulate(craft, events, samples=n, seed=17)
    assert stats.kstest(s.remaining_kg[:, 0], stats.norm(mean, sd).cdf).pvalue > 1e-3
    usable, _, _ = sampled.capability_samples(craft, s)
    z = stats.norm.ppf(0.01)
    se = math.sqrt(0.01 * 0.99 / n) / stats.norm.pdf(z) * sd
    assert abs(sampled.low_bound(usable[:, 0], 0.99) - (mean - RESIDUAL + z * sd)) < 4 * se
    loop = simulate_loop(craft, events, samples=3000, seed=3)
    assert stats.kstest(loop.remaining_kg[:, 0], stats.norm(mean, sd).cdf).pvalue > 1e-3
