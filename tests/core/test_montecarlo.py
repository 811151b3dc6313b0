"""Monte Carlo over the ledger against first-order error propagation, closed forms and the plain loop.

Craft and ledgers here are invented test data. g0 = 9.80665 m/s^2 exactly (3rd CGPM, 1901).
"""
from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from ledger.core import montecarlo as mc
from ledger.core import sampled
from ledger.core.craft import G0, Craft, Engine, Reserve, Tank
from ledger.core.entries import Entry
from ledger.core.montecarlo_loop import simulate_loop
from ledger.core.replay import replay, replay_loop
from ledger.core.segments import segments

T0 = 1_767_225_600.0


def ev(seq, kind, **data):
    return Entry(seq, kind, T0 + 60.0 * seq, T0 + 60.0 * seq, "test", "", data)


def mono(dry=1000.0, load=400.0, isp=300.0, thrust=20.0, *, dry_sigma=0.0, load_sigma=0.0, isp_sigma=0.0,
         thrust_sigma=0.0, residual=0.0, reserves=()) -> Craft:
    """One tank, one engine; every sigma explicit (0 switches a term off instead of taking the default)."""
    return Craft("mono", dry, (Tank("t", "N2H4", load, residual, load_sigma_kg=load_sigma),),
                 (Engine("e", isp, thrust, {"t": 1.0}, isp_sigma_s=isp_sigma, thrust_sigma_n=thrust_sigma),),
                 reserves=reserves, dry_mass_sigma_kg=dry_sigma)


def no_sigma(craft: Craft) -> Craft:
    return replace(craft, dry_mass_sigma_kg=0.0, tanks=tuple(replace(t, load_sigma_kg=0.0) for t in craft.tanks),
                   engines=tuple(replace(e, isp_sigma_s=0.0, thrust_sigma_n=0.0) for e in craft.engines))


def biprop() -> Craft:
    return Craft("bi", 800.0, (Tank("ox", "MON-3", 300.0, 4.0), Tank("fuel", "MMH", 190.0, 3.0),
                               Tank("gn2", "N2", 12.0, 0.5)),
                 (Engine("main", 320.0, 440.0, {"ox": 1.65, "fuel": 1.0}),
                  Engine("thr", 290.0, 20.0, {"ox": 1.65, "fuel": 1.0}, cant_deg=10.0),
                  Engine("cg", 68.0, 0.5, {"gn2": 1.0})),
                 (Reserve("eol", "thr", 15.0),))


def mixed_history(rng, n, sigma=None, dv_engines=("main", "thr")):
    """Random kinds and engines, so segments of every shape occur (adjacent burns on different engines too).
    With one engine for delta-v burns the sampler takes its no-random-number path for additive segments;
    with none there are no scaling segments at all."""
    out = []
    for i in range(1, n + 1):
        r = rng.random()
        extra = {} if sigma is None else {"sigma": sigma}
        if r < 0.35:
            if not dv_engines:
                continue
            out.append(ev(i, "burn", engine=str(rng.choice(list(dv_engines))), dv=float(rng.uniform(0, 3)), **extra))
        elif r < 0.55:
            out.append(ev(i, "burn", engine="thr", duration=float(rng.uniform(1, 30)), **extra))
        elif r < 0.75:
            out.append(ev(i, "use", engine=str(rng.choice(["thr", "cg"])), propellant=float(rng.uniform(0, .05)),
                          **extra))
        elif r < 0.9:
            out.append(ev(i, "use", engine="thr", duration=float(rng.uniform(0, 5)), **extra))
        else:
            out.append(ev(i, "mass", delta=float(rng.uniform(-1, 0.2)), **extra))
    return out


@pytest.mark.parametrize("n", [0, 1, 7, 300])
def test_without_uncertainty_every_sample_is_the_nominal_replay(n):
    # With every sigma 0 the compressed sampler must give the replay's answer exactly (reference: replay
    # and its plain per-entry loop, core.replay).
    craft = no_sigma(biprop())
    events = mixed_history(np.random.default_rng(n), n, sigma=0.0)
    s = mc.simulate(craft, events, samples=5, chunk=2)
    rep = replay(craft, events)
    m_loop, r_loop = replay_loop(craft, events)
    assert np.allclose(s.mass_kg, rep.mass_kg, rtol=1e-12, atol=1e-9)
    assert np.allclose(s.remaining_kg, rep.remaining_kg, rtol=1e-12, atol=1e-9)
    assert np.allclose(s.mass_kg, m_loop, rtol=1e-12, atol=1e-9) and np.allclose(s.remaining_kg, r_loop, atol=1e-9)
    assert s.segments <= max(n, 0)


def test_mass_ratio_beyond_float_range_falls_back_to_the_sequential_scan():
    # Burns totalling dv/ve > 708 underflow exp(): the prefix scan's 1/A overflows; both replays step instead.
    craft = no_sigma(mono(load=400.0))
    events = [ev(1, "burn", engine="e", dv=2.2e6, sigma=0.0), ev(2, "mass", delta=-1.0, sigma=0.0),
              ev(3, "burn", engine="e", dv=2.2e6, sigma=0.0), ev(4, "mass", delta=-1.0, sigma=0.0)]
    s = mc.simulate(craft, events, samples=3)
    rep = replay(craft, events)
    assert np.all(np.isfinite(s.mass_kg)) and np.allclose(s.mass_kg, rep.mass_kg)
    assert np.allclose(s.remaining_kg, rep.remaining_kg)


@pytest.mark.parametrize("dv_engines", [("main", "thr"), ("thr",), ()])
@pytest.mark.parametrize("entry_errors_only", [False, True])
def test_compressed_sampler_has_the_distribution_of_the_per_entry_loop(entry_errors_only, dv_engines):
    # Same model, two implementations: segments + conditional split (fast) against one random draw per
    # entry per sample (simulate_loop). Means, standard deviations and the ox/gn2 correlation agree within
    # their sampling errors (4 standard errors). With the craft's own sigmas at 0 and large entry sigmas,
    # the entries' errors (and how an additive segment's error splits between engines) dominate.
    craft, sigma = (no_sigma(biprop()), 0.02) if entry_errors_only else (biprop(), None)
    events = mixed_history(np.random.default_rng(7), 60, sigma=sigma, dv_engines=dv_engines)
    n = 6000
    fast = mc.simulate(craft, events, samples=n, seed=1)
    slow = simulate_loop(craft, events, samples=n, seed=2)
    for a, b in [(fast.mass_kg, slow.mass_kg)] + [(fast.remaining_kg[:, t], slow.remaining_kg[:, t]) for t in range(3)]:
        se_mean = math.sqrt(a.var() / n + b.var() / n)
        assert abs(a.mean() - b.mean()) < 4 * se_mean
        assert abs(a.std() / b.std() - 1.0) < 4 * math.sqrt(1.0 / n)  # SE of a sd ratio ~ sqrt(2/(2n))
    both = [np.column_stack([s.remaining_kg, s.mass_kg]) for s in (fast, slow)]
    for i, j in [(0, 2), (0, 3)]:  # ox with gn2, ox with the final mass
        r_fast, r_slow = (np.corrcoef(x[:, i], x[:, j])[0, 1] for x in both)
        assert abs(r_fast - r_slow) < 4 * math.sqrt(2.0 / n)


def own_tanks() -> Craft:
    """Three engines on tanks of their own, so each engine's share of the burns shows in a tank of its own."""
    return Craft("own", 800.0, (Tank("ox", "MON-3", 300.0, 4.0), Tank("fuel", "MMH", 190.0, 3.0),
                                Tank("hyd", "N2H4", 60.0, 1.0), Tank("gn2", "N2", 12.0, 0.5)),
                 (Engine("main", 320.0, 440.0, {"ox": 1.65, "fuel": 1.0}),
                  Engine("thr", 225.0, 20.0, {"hyd": 1.0}, cant_deg=10.0),
                  Engine("cg", 68.0, 0.5, {"gn2": 1.0})))


def alternating_history(rng, n, sigma, dv_engines):
    """A delta-v burn, then a firing or a mass change, and so on: every scaling segment follows an additive
    one (the sampler's consecutive-column case), the burns' engine taken in turn."""
    out = []
    for i in range(1, n + 1):
        if i % 2:
            out.append(ev(i, "burn", engine=dv_engines[(i // 2) % len(dv_engines)], dv=float(rng.uniform(0, 3)),
                          sigma=sigma))
        else:
            e = str(rng.choice(["main", "thr", "cg"]))
            out.append(ev(i, "use", engine=e, propellant=float(rng.uniform(0, .05)), sigma=sigma) if rng.random() < 0.5
                       else ev(i, "burn", engine="thr", duration=float(rng.uniform(1, 30)), sigma=sigma))
    return out


@pytest.mark.parametrize("history", [mixed_history, alternating_history])
@pytest.mark.parametrize("dv_engines", [("main", "thr", "cg"), ("main", "thr")])
def test_several_delta_v_engines_split_the_burns_as_the_per_entry_loop(dv_engines, history):
    # Several engines on the delta-v burns (montecarlo._engines): every engine's burnt propellant is its own
    # tank's, so a wrong split between engines shows in the tanks. Without uncertainty every sample is the
    # nominal replay; with it, per tank means, standard deviations and correlations agree with the
    # per-entry loop (simulate_loop: the same model, one draw per entry per sample) within 4 standard errors.
    craft = own_tanks()
    quiet = history(np.random.default_rng(5), 120, sigma=0.0, dv_engines=dv_engines)
    s = mc.simulate(no_sigma(craft), quiet, samples=4)
    rep = replay(no_sigma(craft), quiet)
    assert np.allclose(s.mass_kg, rep.mass_kg, rtol=1e-12, atol=1e-9)
    assert np.allclose(s.remaining_kg, rep.remaining_kg, rtol=1e-12, atol=1e-9)
    events = history(np.random.default_rng(6), 80, sigma=0.05, dv_engines=dv_engines)
    n = 6000
    fast = mc.simulate(craft, events, samples=n, seed=3)
    slow = simulate_loop(craft, events, samples=n, seed=4)
    a_all, b_all = (np.column_stack([x.remaining_kg, x.mass_kg]) for x in (fast, slow))
    for a, b in zip(a_all.T, b_all.T):
        assert abs(a.mean() - b.mean()) < 4 * math.sqrt(a.var() / n + b.var() / n)
        assert abs(a.std() / b.std() - 1.0) < 4 * math.sqrt(1.0 / n)
    for i, j in [(0, 2), (2, 3), (0, 4), (2, 4)]:  # ox with hyd, hyd with gn2, ox and hyd with the final mass
        r_fast, r_slow = (np.corrcoef(x[:, i], x[:, j])[0, 1] for x in (a_all, b_all))
        assert abs(r_fast - r_slow) < 4 * math.sqrt(2.0 / n)


def test_first_order_propagation_single_use_then_burn():
    # Ledger: a firing of t seconds (propellant q = F t / (Isp g0)), then a burn of dv v. One tank, no residual.
    #   m0 = D + L, m1 = m0 - q, E = exp(-v / (Isp g0)), m2 = m1 E
    #   remaining R = L - q - m1 (1 - E);  dv available A = Isp g0 ln(m2 / (m2 - R)) = Isp g0 ln(m2 / D)
    # Partial derivatives (rocket equation, Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2-4 form):
    #   dq/dF = t/(Isp g0), dq/dt = F/(Isp g0), dq/dIsp = -q/Isp, dE/dv = -E/(Isp g0), dE/dIsp = E v/(Isp^2 g0)
    #   dR/dL = E, dR/dD = -(1 - E), dR/dx = -E dq/dx (x = F, t, Isp via q), dR/dIsp += m1 dE/dIsp, dR/dv = m1 dE/dv
    #   dm2/dx = (dm0/dx - dq/dx) E + m1 dE/dx;  dA/dx = g0 ln(m2/D) dIsp/dx + Isp g0 (dm2/dx / m2 - dD/dx / D)
    # The duration's sigma counts at the nominal flow (the model's definition). First order:
    # var = sum (dX/dx sigma_x)^2 for independent inputs; second-order terms are ~(sigma/x)^2 smaller.
    D, L, isp, F, t, v = 1000.0, 400.0, 300.0, 20.0, 600.0, 500.0
    sD, sL, sI, sF, st, sv = 2.0, 0.8, 1.5, 0.4, 3.0, 2.0
    craft = mono(D, L, isp, F, dry_sigma=sD, load_sigma=sL, isp_sigma=sI, thrust_sigma=sF)
    events = [ev(1, "use", engine="e", duration=t, sigma=st), ev(2, "burn", engine="e", dv=v, sigma=sv)]
    c = isp * G0
    q = F * t / c
    E = math.exp(-v / c)
    m1 = D + L - q
    m2 = m1 * E
    dq = {"F": t / c, "t": F / c, "I": -q / isp}
    dE = {"v": -E / c, "I": E * v / (isp * c)}
    dR = {"L": E, "D": -(1 - E), "F": -E * dq["F"], "t": -E * dq["t"], "I": -E * dq["I"] + m1 * dE["I"],
          "v": m1 * dE["v"]}
    dm0 = {"L": 1.0, "D": 1.0}
    dm2 = {x: (dm0.get(x, 0.0) - dq.get(x, 0.0)) * E + m1 * dE.get(x, 0.0) for x in "LDFtIv"}
    dA = {x: (G0 * math.log(m2 / D) if x == "I" else 0.0) + c * (dm2[x] / m2 - (1.0 / D if x == "D" else 0.0))
          for x in "LDFtIv"}
    sig = {"D": sD, "L": sL, "I": sI, "F": sF, "t": st, "v": sv}
    sd_R = math.sqrt(sum((dR[x] * sig[x]) ** 2 for x in sig))
    sd_A = math.sqrt(sum((dA[x] * sig[x]) ** 2 for x in sig))
    n = 40000
    s = mc.simulate(craft, events, samples=n, seed=11)
    usable, avail, _ = sampled.capability_samples(craft, s)
    rep = replay(craft, events)
    for x, nominal, sd in [(s.remaining_kg[:, 0], rep.remaining_kg[0], sd_R), (avail[:, 0], c * math.log(m2 / D), sd_A)]:
        assert abs(x.mean() - nominal) < 4 * sd / math.sqrt(n)
        assert abs(x.std(ddof=1) / sd - 1.0) < 4 / math.sqrt(2 * n)


def test_closed_form_gaussian_isp_single_burn():
    # Only the Isp is uncertain, Isp ~ N(300 s, 3 s); one burn of 800 m/s. Remaining propellant
    #   R(Isp) = L - m0 (1 - exp(-v / (Isp g0)))  is increasing in Isp, so its CDF is exact:
    #   P(R <= r) = Phi((Isp(r) - 300) / 3), Isp(r) = -v / (g0 ln((r - L + m0) / m0)).
    D, L, v, isp, s_isp = 900.0, 500.0, 800.0, 300.0, 3.0
    craft = mono(D, L, isp, dry_sigma=0.0, load_sigma=0.0, isp_sigma=s_isp, residual=5.0)
    events = [ev(1, "burn", engine="e", dv=v, sigma=0.0)]
    m0 = D + L

    def isp_of(r):
        return -v / (G0 * np.log((r - L + m0) / m0))

    def cdf(r):
        return stats.norm.cdf((isp_of(r) - isp) / s_isp)

    n = 20000
    s = mc.simulate(craft, events, samples=n, seed=3)
    r = s.remaining_kg[:, 0]
    assert stats.kstest(r, cdf).pvalue > 1e-3
    # The status low bound at 99 %: R at the 1 % Isp quantile, less the residual; compared in probability:
    # the empirical quantile's CDF value is within the binomial error of 0.01.
    low = sampled.low_bound(r - 5.0, 0.99)
    assert abs(cdf(low + 5.0) - 0.01) < 4 * math.sqrt(0.01 * 0.99 / n)


def test_closed_form_gaussian_load_with_burns_by_propellant():
    # Loads N(L, 2 kg), draws given in kilograms with 0.1 kg sigma each: remaining is exactly Gaussian,
    # mean L - sum p, variance 2^2 + 5 * 0.1^2.
    craft = mono(load=400.0, load_sigma=2.0)
    events = [ev(i, "use", engine="e", propellant=10.0 * i, sigma=0.1) for i in range(1, 6)]
    s = mc.simulate(craft, events, samples=20000, seed=5)
    r = s.remaining_kg[:, 0]
    sd = math.sqrt(4.0 + 5 * 0.01)
    assert abs(r.mean() - 250.0) < 4 * sd / math.sqrt(len(r))
    assert stats.kstest(r, stats.norm(250.0, sd).cdf).pvalue > 1e-3


def test_same_seed_same_answer_and_craft_errors_survive_a_new_entry():
    craft = biprop()
    events = mixed_history(np.random.default_rng(2), 200)
    a = mc.simulate(craft, events, samples=3000, seed=9)
    b = mc.simulate(craft, events, samples=3000, seed=9)
    c = mc.simulate(craft, events, samples=3000, seed=10)
    assert np.array_equal(a.mass_kg, b.mass_kg) and np.array_equal(a.remaining_kg, b.remaining_kg)
    assert not np.array_equal(a.mass_kg, c.mass_kg)
    # Chunks run on their own random streams: sharing them between threads changes nothing.
    t = mc.simulate(craft, events, samples=3000, seed=9, chunk=200, workers=2)
    u = mc.simulate(craft, events, samples=3000, seed=9, chunk=200, workers=1)
    assert np.array_equal(t.mass_kg, u.mass_kg) and np.array_equal(t.remaining_kg, u.remaining_kg)
    # One more small firing: the engine and load errors of every sample are drawn from their own stream,
    # so before/after compare like with like (near-perfect correlation of sample by sample).
    d = mc.simulate(craft, events + [ev(201, "use", engine="cg", propellant=0.01)], samples=3000, seed=9)
    assert np.corrcoef(a.remaining_kg[:, 2], d.remaining_kg[:, 2])[0, 1] > 0.99


def test_chunks_bound_memory_and_report_progress():
    craft = biprop()
    events = mixed_history(np.random.default_rng(4), 500)
    seg = segments(craft, events)
    size = mc.chunk_size(len(seg))
    assert size * len(seg) <= mc.CELLS_PER_CHUNK or size == 1
    seen = []
    s = mc.simulate(craft, events, samples=1234, chunk=100, progress=lambda done, total: seen.append((done, total)))
    assert len(s) == 1234 and seen[-1] == (1234, 1234)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen) and len(seen) == math.ceil(1234 / min(100, size))


def test_marginal_case_built_on_purpose():
    # Only the load is uncertain (sigma 1 kg), nothing burnt yet. After a burn X and the reserve (20 m/s) the
    # margin is M = L E - res - D (1 - E), E = exp(-(X + 20)/(Isp g0)): linear in L, so
    # P(intact) = Phi(M_nominal / (E sigma_L)) exactly. X is chosen so that M_nominal = 1.0 E sigma_L.
    D, L, res, isp, sL = 500.0, 100.0, 2.0, 220.0, 1.0
    craft = mono(D, L, isp, residual=res, load_sigma=sL, reserves=(Reserve("eol", "e", 20.0),))
    c = isp * G0
    E = (res + D) / (L + D - 1.0 * sL)
    x = -c * math.log(E) - 20.0
    s = mc.simulate(craft, [], samples=20000, seed=8)
    chk = sampled.check_samples(craft, s, "e", x)
    expected = stats.norm.cdf(1.0)  # 0.8413
    assert abs(chk.probability - expected) < 4 * math.sqrt(expected * (1 - expected) / len(s))
    assert 0.5 < chk.probability < 0.99  # nominal intact, not at 99 %: marginal


def test_entry_sigmas_for_many_entries_are_entry_sigma_for_each():
    # The sampler's vectorised sigma rule must stay the per-entry one (core.sigmas.entry_sigma).
    from ledger.core.sigmas import entry_sigma, entry_sigmas

    data = [({"dv": 2.0}, "dv"), ({"duration": -30.0, "sigma": 0.5}, "duration"), ({"propellant": 0.4}, "propellant"),
            ({"delta": -35.0}, "delta"), ({"dv": 1.0, "sigma": 0.0}, "dv")]
    got = entry_sigmas([f for _, f in data], np.array([d[f] for d, f in data]),
                       np.array([d.get("sigma", np.nan) for d, _ in data]))
    assert got.tolist() == [entry_sigma(d, f) for d, f in data]


def test_root_of_the_per_sample_covariances():
    # montecarlo._psd_root against numpy.linalg.cholesky (numpy 2.4, LAPACK potrf) on full-rank covariances,
    # and R R' = cov on rank-deficient ones (where a Cholesky factorisation does not exist).
    rng = np.random.default_rng(3)
    a = rng.standard_normal((200, 3, 3))
    full = a @ a.transpose(0, 2, 1)
    assert np.allclose(mc._psd_root(full), np.linalg.cholesky(full), rtol=1e-10, atol=1e-12)
    b = rng.standard_normal((200, 3, 2))
    low = b @ b.transpose(0, 2, 1)
    root = mc._psd_root(low)
    assert np.allclose(root @ root.transpose(0, 2, 1), low, atol=1e-9)
    assert np.all(np.isfinite(root)) and np.allclose(np.triu(root, 1), 0.0)
