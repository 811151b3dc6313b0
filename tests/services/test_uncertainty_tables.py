"""The lunar orbiter's Monte Carlo (invented data: blowdown tanks, engines with performance tables) with
each sample's feedback through its own feed pressure (core/mcblowdown.py, through uncertainty.run).

Sources: the law of large numbers with the standard error of a mean, sd/sqrt(n) (Montgomery & Runger,
Applied Statistics and Probability for Engineers, ch. 7); the exact per-sample replay (replay_blowdown,
itself checked against scipy's solve_ivp in tests/core/test_blowdown.py) for the linearisation error.
"""
import numpy as np
import pytest

from ledger.core import mcblowdown as mb
from ledger.core.montecarlo import _globals
from ledger.services import scenario, uncertainty


@pytest.fixture(scope="module")
def snap(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lunar-mc")
    return scenario.build(scenario.bundled()["lunar-orbiter"], str(folder / "l.json")).snapshot()


def test_lunar_samples_follow_the_exact_replay_of_their_perturbed_histories(snap):
    # Gauge temperatures, insertion burns by delta-v, firings by duration, mass changes: 3 samples.
    v, c = snap.blowdown, snap.craft
    lin = mb.linearise(c, v.model, v.events, snap.replay, v.flown)
    rng = np.random.default_rng(2)
    dry, loads, isp, thrust = _globals(c, rng, 3)
    phi, psi = mb.factors(c, isp, thrust)
    ds0 = np.hstack([(dry - c.dry_mass_kg + (loads - c.loads()).sum(axis=1))[:, None], loads - c.loads()])
    z = rng.standard_normal((3, len(v.events)))
    got = lin.final(ds0, phi, psi, z)
    for k in range(3):
        r = mb.exact_sample(c, v.events, v.flown.temperatures, ds0[k], thrust[k] / [e.thrust_n for e in c.engines],
                            isp[k] / [e.isp_s for e in c.engines], z[k])
        exact = np.concatenate([[r.mass_kg], r.remaining_kg])
        dev = np.abs(exact - lin.nominal).max()
        assert np.abs(got[k] - exact).max() < max(0.03 * dev, 0.005), (k, got[k] - exact, dev)


def test_mean_remaining_is_the_nominal_within_its_standard_error(snap):
    s = uncertainty.run(snap, samples=4000, seed=77)
    for i in range(len(snap.craft.tanks)):
        x = s.remaining_kg[:, i]
        se = x.std(ddof=1) / np.sqrt(len(x))
        # 4 standard errors, plus the second-order bias of the sampled mass-flow factor thrust/Isp
        # (relative Isp variance, (3/231)^2 ~ 2e-4 of the propellant drawn, 105 kg here)
        assert abs(x.mean() - snap.state.remaining_kg[i]) < 4 * se + 2e-4 * 105.0
    assert uncertainty.run(snap, samples=4000, seed=77).remaining_kg.tolist() == s.remaining_kg.tolist()


def test_status_low_bounds_sit_below_the_nominal_figures(snap):
    u = uncertainty.confidence_status(snap, 0.99, 2000, 5)
    for eid, e in u["engines"].items():
        assert e["dv_free_low_m_s"] < e["dv_free_m_s"] and e["dv_available_low_m_s"] < e["dv_available_m_s"]
