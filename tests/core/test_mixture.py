"""Mixture ratio as flown: the stranded propellant by hand, and the Monte Carlo's drawn ratios against scipy.

Craft and ledgers here are invented test data. Split of a bipropellant draw at mixture ratio r (oxidiser
over fuel by mass): ox share r/(1+r), fuel share 1/(1+r) (Sutton & Biblarz, Rocket Propulsion Elements,
9th ed., ch. 2, from memory; docs/sources.md §3).
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy import optimize, stats

from ledger.core import montecarlo as mc
from ledger.core import sampled
from ledger.core.craft import Craft, Engine, Tank
from ledger.core.entries import Entry
from ledger.core.mixture import flown_fractions, pairs, stranded
from ledger.core.montecarlo_loop import simulate_loop

T0 = 1_767_225_600.0


def ev(seq, kind, **data):
    return Entry(seq, kind, T0 + 60.0 * seq, T0 + 60.0 * seq, "test", "", data)


def pair_craft(ox: float, fuel: float, ratio: float, sigma: float | None = None, residual=(0.0, 0.0)) -> Craft:
    """Two tanks, one engine; every other sigma 0 so only the mixture ratio is uncertain."""
    return Craft("pair", 500.0, (Tank("ox", "MON-3", ox, residual[0], load_sigma_kg=0.0),
                                 Tank("fuel", "MMH", fuel, residual[1], load_sigma_kg=0.0)),
                 (Engine("lae", 320.0, 440.0, {"ox": ratio, "fuel": 1.0}, isp_sigma_s=0.0, thrust_sigma_n=0.0,
                         mixture_ratio_sigma=sigma),),
                 dry_mass_sigma_kg=0.0)


def test_outage_worked_by_hand_docs_example():
    # docs/sources.md §3 (computed there by hand): 60 kg ox + 40 kg fuel at 1.65 is oxidiser-limited.
    # Burnable = 60 / (1.65/2.65) = 96.364 kg; fuel used = 60/1.65 = 36.364 kg; fuel stranded = 40 - 36.364 = 3.636.
    craft = pair_craft(60.0, 40.0, 1.65)
    (p,) = pairs(craft)
    kg, tank = stranded(craft, craft.loads(), p)
    assert kg == pytest.approx(40.0 - 60.0 / 1.65, abs=1e-9)
    assert kg == pytest.approx(3.636, abs=5e-4)
    assert craft.tank_ids[int(tank)] == "fuel"


@pytest.mark.parametrize("flown, tank, expected", [
    # Hand computation: loaded for r = 1.65 exactly (100 kg usable: ox 100*1.65/2.65 = 62.2642, fuel 100/2.65 =
    # 37.7358, no outage at 1.65). Flown at 1.70, ox runs out first: fuel used 62.2642/1.70 = 36.6260, so
    # 37.7358 - 36.6260 = 1.1098 kg of fuel is stranded. Flown at 1.60, fuel runs out first: ox used
    # 37.7358*1.60 = 60.3774, so 62.2642 - 60.3774 = 1.8868 kg of ox is stranded.
    (1.70, "fuel", 1.1098),
    (1.60, "ox", 1.8868),
])
def test_outage_for_a_known_mixture_ratio_error_by_hand(flown, tank, expected):
    ox, fuel = 100.0 * 1.65 / 2.65, 100.0 / 2.65
    craft = pair_craft(ox, fuel, flown)
    (p,) = pairs(craft)
    kg, which = stranded(craft, craft.loads(), p)
    assert kg == pytest.approx(expected, abs=2e-4)
    assert craft.tank_ids[int(which)] == tank
    nominal = pair_craft(ox, fuel, 1.65)
    assert stranded(nominal, nominal.loads(), pairs(nominal)[0])[0] < 1e-9  # loaded at the flown ratio: none


def test_residuals_are_not_stranded_twice():
    # Hand computation: residuals 2 kg each; usable ox 58, fuel 38; ox-limited at 1.65: fuel used 58/1.65 =
    # 35.1515, stranded 38 - 35.1515 = 2.8485 kg (above its own residual).
    craft = pair_craft(60.0, 40.0, 1.65, residual=(2.0, 2.0))
    kg, _ = stranded(craft, craft.loads(), pairs(craft)[0])
    assert kg == pytest.approx(38.0 - 58.0 / 1.65, abs=1e-9)


def test_two_tanks_of_one_propellant_are_no_pair():
    craft = Craft("mono2", 300.0, (Tank("a", "hydrazine", 50.0), Tank("b", "hydrazine", 50.0)),
                  (Engine("e", 220.0, 1.0, {"a": 1.0, "b": 1.0}),))
    assert pairs(craft) == []


def test_drawn_ratio_share_against_the_normal_distribution():
    # Loaded at ox/fuel = 1.68, flown at 1.65 +- 0.02 (one sigma), nothing drawn yet. Fuel is left over when the
    # drawn ratio exceeds 1.68: P = 1 - Phi((1.68 - 1.65)/0.02) = norm.sf(1.5) = 0.0668 (scipy.stats.norm).
    craft = pair_craft(168.0, 100.0, 1.65, sigma=0.02)
    s = mc.simulate(craft, [ev(1, "mass", delta=-1.0, sigma=0.0)], samples=20_000, seed=7)
    ((p, kg, tank),) = sampled.outage_samples(craft, s)
    share_fuel = float(np.mean((tank == p.second) & (kg > 0)))
    expected = float(stats.norm.sf(1.5))
    assert share_fuel == pytest.approx(expected, abs=4 * np.sqrt(expected * (1 - expected) / 20_000))


def test_stranded_quantile_against_scipy_root_finding():
    # Tanks fixed (usable ox Uo = 168, fuel Uf = 100), ratio r ~ N(1.65, 0.02). The stranding is
    # Uf - Uo/r for r > Uo/Uf and Uo - Uf*r below, so P(stranded <= s) = Phi((Uo/(Uf - s) - r0)/sigma)
    # - Phi(((Uo - s)/Uf - r0)/sigma); its 99 % point is found with scipy.optimize.brentq and scipy.stats.norm.
    uo, uf, r0, sig = 168.0, 100.0, 1.65, 0.02
    craft = pair_craft(uo, uf, r0, sigma=sig)
    s = mc.simulate(craft, [ev(1, "mass", delta=-1.0, sigma=0.0)], samples=40_000, seed=11)
    ((_, kg, _),) = sampled.outage_samples(craft, s)

    def cdf(x):
        return stats.norm.cdf((uo / (uf - x) - r0) / sig) - stats.norm.cdf(((uo - x) / uf - r0) / sig)

    q99 = optimize.brentq(lambda x: cdf(x) - 0.99, 1e-6, 50.0)
    assert np.quantile(kg, 0.99) == pytest.approx(q99, rel=0.03)
    assert np.quantile(kg, 0.5) == pytest.approx(optimize.brentq(lambda x: cdf(x) - 0.5, 1e-6, 50.0), rel=0.03)


def test_flown_ratio_moves_the_past_draws_as_the_loop_does():
    # Only the ratio is uncertain (entries given sigma 0): the fast sampler and the plain per-entry loop draw
    # the same ratios (same child stream), so every sample's tanks agree to rounding. Reference: the loop.
    craft = pair_craft(300.0, 190.0, 1.65, sigma=0.03)
    events = [ev(1, "burn", engine="lae", dv=80.0, sigma=0.0), ev(2, "use", engine="lae", duration=120.0, sigma=0.0),
              ev(3, "use", engine="lae", propellant=2.5, sigma=0.0), ev(4, "burn", engine="lae", dv=15.0, sigma=0.0)]
    fast = mc.simulate(craft, events, samples=300, seed=5)
    slow = simulate_loop(craft, events, samples=300, seed=5)
    np.testing.assert_allclose(fast.remaining_kg, slow.remaining_kg, rtol=1e-9, atol=1e-9)
    drawn = craft.loads() - fast.remaining_kg
    ratio = drawn[:, 0] / drawn[:, 1]
    np.testing.assert_allclose(ratio, fast.frac[:, 0, 0] / fast.frac[:, 0, 1], rtol=1e-9)
    assert ratio.std() == pytest.approx(0.03, rel=0.25)  # the drawn ratios' spread is the sigma given


def test_drift_lowers_the_low_bound_of_dv_available():
    craft = pair_craft(300.0 * 1.65 / 2.65 * 1.6, 300.0 / 2.65 * 1.6, 1.65)  # loaded at the nominal ratio
    events = [ev(1, "burn", engine="lae", dv=50.0, sigma=0.0)]
    without = sampled.capability_samples(craft, mc.simulate(craft, events, samples=4000, seed=3))[1][:, 0]
    drift = replace(craft, engines=(replace(craft.engines[0], mixture_ratio_sigma=0.03),))
    s = mc.simulate(drift, events, samples=4000, seed=3)
    with_drift = sampled.capability_samples(drift, s)[1][:, 0]
    assert without.std() < 1e-6  # nothing else uncertain
    assert sampled.low_bound(with_drift, 0.99) < sampled.low_bound(without, 0.99) - 1.0
    assert with_drift.max() <= without.max() + 1e-6  # at the loaded ratio nothing is stranded: the best case


def test_no_sigma_draws_nothing():
    craft = pair_craft(100.0, 60.0, 1.65)
    assert flown_fractions(craft, np.random.default_rng(0), 10) is None
    assert mc.simulate(craft, [], samples=10).frac is None
