"""Monte Carlo for craft with performance tables: each sample's draws move its own later feed pressures.

Why: in a blowdown system a sample that drew more early on has a lower feed pressure later, so its later
firings by duration draw less (and its burns by delta-v fly at a lower Isp). Flying every sample on one
constant-performance equivalent history leaves that feedback out.

Method (first-order propagation around the nominal integrated replay, ``blowdown.replay_blowdown``).
The state is s = (mass, remaining per tank). Entry k maps the sample's deviation from the nominal path
linearly: δs_{k+1} = A_k δs_k + c_k·(engine factors - 1) + d_k z_k, where

- a draw x_k (engine e, feed shares f_e, v_e = (1, f_e)) moves the state by -v_e δx_k and
  δx_k = j_k·δs_k + a_k (φ_e - 1) + b_k (ψ_e - 1) + n_k z_k, with φ the sample's mass-flow factor
  (thrust/Isp over nominal), ψ its Isp factor and z_k the entry's standard normal error;
- j_k = d(draw_k)/d(state before k) is the pressure sensitivity, found by central differences of the
  same Runge-Kutta integration the nominal replay uses (``timed_draw``, ``dv_draw``) on the nominal path;
- a firing by duration scales with time, x(φ, t) = x(1, φ t), so a_k = t·flow(p_end) and n_k = flow(p_end)·σ_t;
  a burn by delta-v scales with dv/ψ, so b_k = -dv·dx/d(dv) and n_k = dx/d(dv)·σ_dv, dx/d(dv) = (m-x)/ve(p_end);
- constant-performance engines, propellant masses, mass changes and re-baselines give their exact
  linear maps (a re-baseline sets the tank to N(adopted, sigma), the mass the difference).

The recurrence is solved once, backwards, on the nominal path: W_k = A_{N-1}···A_{k+1} (products of
(1 + tanks)-square matrices). The final deviation of a sample is then W_0 δs_0 + C (factors - 1) +
sum_k W_k d_k z_k: linear in the sample's draws. The entries' errors enter only through that sum, a
Gaussian whose covariance sum_k (W_k d_k)(W_k d_k)^T is drawn directly with one fixed square root
(exact in distribution for the linearised model; nothing per entry and per sample). The cost is one
pass over the entries plus O(samples): 20k entries x 10,000 samples in well under a second.

Error bound: the deviations are first order (engine factors of a few per cent, load errors of tens of
grams); the neglected terms are second order in them. Measured against the exact per-sample replay
(``exact_sample``: ``replay_blowdown`` on the perturbed craft and history): within 3 % of a sample's own
deviation in ``tests/core/test_mcblowdown.py``; on the lunar orbiter at most 26 g per tank over 100 samples
whose deviations reach 1.6 kg (docs/uncertainty.md).

Capability per sample (``effective_ve``): each sample's dv available integrates ve(p(m)) over its own
remaining propellant (``dv_over_draw`` with samples as rows, times its Isp factor); the sample's exhaust
velocity in ``Samples.ve`` is that integral over ln(m/(m - draw)), so dv available per sample is the
integral exactly, and dv free, the reserves and the checks fly at the velocity averaged over the
sample's own remaining propellant. For reserves flown by the same engine that is exact too (delta-v adds
along one draw, the reserves flying last); reserves of another engine on the same tanks are flown at that
engine's average.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from . import blowdown as bd
from .craft import Craft
from .entries import BURN, MASS, REBASELINE, Entry
from .montecarlo import DEFAULT_SEED, Progress, Samples, _globals, generator, mixture_draws
from .replay import Replay
from .sigmas import entry_sigma

FD_KG = 1e-3
"""Central-difference step for the pressure sensitivities (kg): the draw is smooth in the state, and the
Runge-Kutta step counts are held fixed across the difference so it stays smooth (truncation ~1e-9 rel.)."""
FD_COARSEN = 8
"""The differences integrate with an eighth of the replay's Runge-Kutta steps (a sixth of the cost on the
lunar orbiter): the discretisation error is nearly the same on both sides of a difference and cancels.
Measured there against the replay's own step counts: final-state responses within 0.02 kg per unit
engine factor (1 g at a 5 % factor error), against the linearisation's own 26 g (docs/uncertainty.md)."""
CHUNK = 2000
"""Samples per dv_over_draw call (each holds samples x 48 quadrature nodes x tanks floats)."""
PANELS = 16
"""Gauss-Legendre panels for each sample's dv available, a quarter of the nominal figure's 64. Measured
against 512 panels on the test craft of tests/core/test_mcblowdown.py: 7e-6 relative early in life,
where the draw crosses the table's points (kinks of the linear interpolation), 1e-15 late in life."""


@dataclass(frozen=True)
class Linear:
    """The ledger's final state and its first-order response to every sample's draws."""

    nominal: np.ndarray     # (1 + T,) final (mass, remaining per tank) of the nominal integrated replay
    start: np.ndarray       # (1 + T, 1 + T) final deviation per unit deviation of the start state
    flow: np.ndarray        # (E, 1 + T) final deviation per unit (φ_e - 1)
    isp: np.ndarray         # (E, 1 + T) final deviation per unit (ψ_e - 1)
    noise: np.ndarray       # (N, 1 + T) final deviation per unit z_k of each entry (W_k d_k)
    split: np.ndarray       # (E, 1 + T, T) final deviation per unit change of engine e's feed shares
    drawn: np.ndarray       # (N,) nominal draw of each entry (kg)

    @property
    def root(self) -> np.ndarray:
        """A square root L (L L^T = covariance) of the entries' summed errors, from the eigen-decomposition
        (the covariance is only semi-definite when a tank's errors are wiped by a re-baseline)."""
        cov = self.noise.T @ self.noise
        w, v = np.linalg.eigh(cov)
        return v * np.sqrt(np.maximum(w, 0.0))

    def final(self, ds0: np.ndarray, phi: np.ndarray, psi: np.ndarray, z: np.ndarray | None = None,
              frac_dev: np.ndarray | None = None) -> np.ndarray:
        """Final state (S, 1 + T) of samples with start deviation ds0 (S, 1 + T), factors (S, E) and, if
        given, explicit per-entry errors z (S, N) (the sampler draws their sum instead)."""
        out = self.nominal + ds0 @ self.start.T + (phi - 1.0) @ self.flow + (psi - 1.0) @ self.isp
        if z is not None:
            out = out + z @ self.noise
        if frac_dev is not None:
            out = out + np.einsum("set,eut->su", frac_dev, self.split)
        return out


def _sensitivity(model: bd.Model, e: int, r0, m0, temps, amount, drawn, by_dv: bool) -> tuple[np.ndarray, np.ndarray]:
    """(d draw/d remaining (K, T), d draw/d mass (K,)) by central differences on the nominal path."""
    k, n_t = r0.shape
    steps_estimate = np.maximum(drawn, 0.0) / FD_COARSEN

    def draw(r, m):
        if by_dv:
            return bd.dv_draw(model, e, m, r, temps, amount, steps_estimate)
        return bd.timed_draw(model, e, r, temps, amount, steps_estimate)

    jr = np.zeros((k, n_t))
    for t in model.fed(e):
        if t not in model.tanks:
            continue
        up, down = r0.copy(), r0.copy()
        up[:, t] += FD_KG
        down[:, t] -= FD_KG
        jr[:, t] = (draw(up, m0) - draw(down, m0)) / (2.0 * FD_KG)
    jm = (draw(r0, m0 + FD_KG) - draw(r0, m0 - FD_KG)) / (2.0 * FD_KG) if by_dv else np.zeros(k)
    return jr, jm


def linearise(craft: Craft, model: bd.Model, events: Sequence[Entry], rep: Replay, flown: bd.Flown) -> Linear:
    """The linear response of the final state to every sample's draws, on the nominal integrated path."""
    n, n_t, n_e = len(events), len(craft.tanks), len(craft.engines)
    d1 = 1 + n_t
    frac = model.frac
    v = np.hstack([np.ones((n_e, 1)), frac])                  # (E, 1 + T) state change per kg drawn
    r_before = np.vstack([craft.loads()[None, :], rep.remaining[:-1]]) if n else np.empty((0, n_t))
    m_before = rep.mass_before
    x = rep.propellant
    temps = flown.temperatures
    eng = flown.engine
    ve0, flow0 = craft.ve(), craft.mass_flows()
    tanks = {t.id: i for i, t in enumerate(craft.tanks)}
    # per entry: j (sensitivity of the draw to the state before), a, b (factor responses), sd (noise)
    j = np.zeros((n, d1))
    a = np.zeros(n)
    b = np.zeros(n)
    nz = np.zeros(n)
    kind = np.zeros(n, dtype=np.int8)   # 0 draw, 1 mass change, 2 re-baseline
    rebase_tank = np.full(n, -1)
    amount = np.zeros(n)
    is_dv = np.zeros(n, dtype=bool)
    for k, ev in enumerate(events):
        d = ev.data
        if ev.kind == MASS:
            kind[k], nz[k] = 1, entry_sigma(d, "delta")
            continue
        if ev.kind == REBASELINE:
            kind[k], rebase_tank[k], nz[k] = 2, tanks[d["tank"]], float(d.get("sigma_kg") or 0.0)
            continue
        e = int(eng[k])
        if ev.kind == BURN and d.get("dv") is not None:
            is_dv[k], amount[k], nz[k] = True, float(d["dv"]), entry_sigma(d, "dv")
        elif d.get("duration") is not None:
            amount[k], nz[k] = float(d["duration"]), entry_sigma(d, "duration")
            if not flown.dependent[k]:
                a[k], nz[k] = x[k], flow0[e] * nz[k]
        else:
            nz[k] = entry_sigma(d, "propellant")
        if is_dv[k] and not flown.dependent[k]:  # rocket equation at constant ve
            rest = m_before[k] - x[k]
            j[k, 0] = x[k] / m_before[k] if m_before[k] else 0.0
            b[k] = -rest * amount[k] / ve0[e]
            nz[k] = rest / ve0[e] * nz[k]
    dep = flown.dependent
    for e in model.perf:
        for by_dv in (False, True):
            sel = np.flatnonzero(dep & (eng == e) & (is_dv == by_dv))
            if not sel.size:
                continue
            jr, jm = _sensitivity(model, e, r_before[sel], m_before[sel], temps[sel], amount[sel], x[sel], by_dv)
            j[sel, 0], j[sel, 1:] = jm, jr
            p_end = flown.pressure_end[sel]
            if model.pressurised(e) and np.any(~np.isfinite(p_end)):
                r0, tt, rho_l, p_vap = bd._state(model, r_before[sel], temps[sel])
                p_end = np.where(np.isfinite(p_end), p_end, model.feed_pressure(e, r0, x[sel], tt, rho_l, p_vap))
            known = np.isfinite(p_end)
            with np.errstate(divide="ignore", invalid="ignore"):
                if by_dv:  # dx/d(dv) at the end of the burn (else at the burn's own mean ve)
                    ve_end = np.where(known, model.ve(e, np.nan_to_num(p_end)), flown.ve_event[sel])
                    rate = (m_before[sel] - x[sel]) / ve_end
                    b[sel] = -amount[sel] * rate
                else:      # dx/dt at the end of the firing (else its mean flow)
                    mean = np.where(amount[sel] > 0, x[sel] / amount[sel], flow0[e])
                    rate = np.where(known, model.flow(e, np.nan_to_num(p_end)), mean)
                    a[sel] = amount[sel] * rate
                nz[sel] = rate * nz[sel]
    # local maps: δs' = A δs + c_phi (φ-1) + c_psi (ψ-1) + dvec z
    e_ok = np.maximum(eng, 0)
    draw_rows = kind == 0
    vk = np.where(draw_rows[:, None], v[e_ok], 0.0)              # (N, 1 + T)
    A = np.broadcast_to(np.eye(d1), (n, d1, d1)).copy()
    A -= vk[:, :, None] * j[:, None, :]
    dvec = -vk * nz[:, None]
    dvec[kind == 1, 0] = nz[kind == 1]
    for k in np.flatnonzero(kind == 2).tolist():
        t = 1 + int(rebase_tank[k])
        A[k, t, :] = 0.0
        A[k, 0, t] -= 1.0
        dvec[k, 0], dvec[k, t] = nz[k], nz[k]
    identity = ~np.any(np.abs(A - np.eye(d1)) > 0.0, axis=(1, 2))
    W = np.empty((n, d1, d1))
    acc = np.eye(d1)
    for k in range(n - 1, -1, -1):   # W_k = A_{N-1}···A_{k+1}: the one sequential step, on small matrices
        W[k] = acc
        if not identity[k]:
            acc = acc @ A[k]
    start = acc
    resp = np.einsum("kij,kj->ki", W, vk)                        # final response per kg more drawn at k
    flow_r = np.zeros((n_e, d1))
    isp_r = np.zeros((n_e, d1))
    split = np.zeros((n_e, d1, n_t))
    np.add.at(flow_r, e_ok[draw_rows], -resp[draw_rows] * a[draw_rows, None])
    np.add.at(isp_r, e_ok[draw_rows], -resp[draw_rows] * b[draw_rows, None])
    # a feed-share change moves only where a kilogram comes from: -x_k W_k[:, tanks] per unit share
    np.add.at(split, e_ok[draw_rows], -W[draw_rows][:, :, 1:] * x[draw_rows, None, None])
    noise = np.einsum("kij,kj->ki", W, dvec)
    nominal = np.concatenate([[rep.mass_kg], rep.remaining_kg])
    return Linear(nominal, start, flow_r, isp_r, noise, split, np.asarray(x, dtype=float))


def effective_ve(model: bd.Model, mass: np.ndarray, remaining: np.ndarray, temps: np.ndarray,
                 isp_factor: np.ndarray) -> np.ndarray:
    """(S, E) each sample's exhaust velocity averaged over its own remaining propellant (module docstring);
    constant engines: their sampled ve is returned by the caller, here only table engines are filled."""
    s = len(mass)
    craft = model.craft
    out = np.tile(craft.ve(), (s, 1)) * isp_factor
    residuals = craft.residuals()
    for e in model.perf:
        if not model.pressurised(e):
            continue
        f = model.frac[e]
        fed = f > 0
        draw = np.maximum(0.0, np.min((remaining - residuals)[:, fed] / f[fed], axis=1))
        ok = (draw > 0) & (mass - draw > 0)
        r0, tt, rho_l, p_vap = bd._state(model, remaining, np.broadcast_to(temps, remaining.shape))
        p_now = model.feed_pressure(e, r0, np.zeros(s), tt, rho_l, p_vap)
        ve = model.ve(e, p_now)
        idx = np.flatnonzero(ok)
        for lo in range(0, idx.size, CHUNK):
            part = idx[lo:lo + CHUNK]
            dv = bd.dv_over_draw(model, e, mass[part], remaining[part], tt[part], draw[part], panels=PANELS)
            ve[part] = dv / np.log(mass[part] / (mass[part] - draw[part]))
        out[:, e] = ve * isp_factor[:, e]
    return out


def factors(craft: Craft, isp: np.ndarray, thrust: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(φ mass-flow factor, ψ Isp factor) per sample and engine, against the craft's nominal values."""
    isp0 = np.array([e.isp_s for e in craft.engines])
    thrust0 = np.array([e.thrust_n for e in craft.engines])
    psi = isp / isp0
    return (thrust / thrust0) / psi, psi


def simulate(craft: Craft, model: bd.Model, events: Sequence[Entry], rep: Replay, flown: bd.Flown,
             temps_now: np.ndarray, samples: int, seed: int = DEFAULT_SEED, progress: Progress | None = None,
             linear: Linear | None = None) -> Samples:
    """Samples of the final state with each sample's own blowdown feedback (module docstring).

    The craft figures come from the same stream as ``montecarlo.simulate`` (same seed, same draws of dry
    mass, loads, Isp and thrust); the entries' summed errors from the second child stream."""
    if samples < 1:
        raise ValueError("samples must be at least 1")
    lin = linear if linear is not None else linearise(craft, model, events, rep, flown)
    craft_seq, entry_seq = np.random.SeedSequence(seed).spawn(2)
    dry, loads, isp, thrust = _globals(craft, generator(craft_seq), samples)
    frac = mixture_draws(craft, seed, samples)
    phi, psi = factors(craft, isp, thrust)
    ds0 = np.hstack([(dry - craft.dry_mass_kg + (loads - craft.loads()).sum(axis=1))[:, None],
                     loads - craft.loads()])
    z = generator(entry_seq).standard_normal((samples, lin.nominal.size))
    frac_dev = None if frac is None else frac - model.frac[None, :, :]
    state = lin.final(ds0, phi, psi, frac_dev=frac_dev) + z @ lin.root.T
    mass, remaining = state[:, 0], state[:, 1:]
    ve = effective_ve(model, mass, remaining, np.asarray(temps_now, dtype=float)[None, :], psi)
    if progress is not None:
        progress(samples, samples)
    return Samples(mass, remaining, ve, seed, len(events), frac)


def exact_sample(craft: Craft, events: Sequence[Entry], temps: np.ndarray, ds0: np.ndarray, thrust_f: np.ndarray,
                 isp_f: np.ndarray, z: np.ndarray) -> Replay:
    """One sample replayed exactly (``replay_blowdown`` on the perturbed craft and history): the reference
    the linearised sampler is measured against. Loads and dry mass moved by ds0 (1 + T,: mass first, the
    dry mass taking what the loads do not explain), every engine's thrust and Isp (tables included) scaled,
    each entry's amount moved by z_k of its sigma (a duration in seconds, a delta-v in m/s)."""
    from dataclasses import replace  # noqa: PLC0415

    model0 = bd.Model(craft)
    tanks = []
    for i, t in enumerate(craft.tanks):
        tm = model0.tanks.get(i)
        tanks.append(replace(t, load_kg=t.load_kg + float(ds0[1 + i]),
                             gas_table=tm.table if tm is not None else t.gas_table))
    engines = []
    for e, eng in enumerate(craft.engines):
        pf = eng.performance
        if pf is not None:
            pf = replace(pf, thrust_n=tuple(np.asarray(pf.thrust_n) * thrust_f[e]),
                         isp_s=tuple(np.asarray(pf.isp_s) * isp_f[e]))
        engines.append(replace(eng, thrust_n=eng.thrust_n * thrust_f[e], isp_s=eng.isp_s * isp_f[e], performance=pf))
    dry = craft.dry_mass_kg + float(ds0[0] - ds0[1:].sum())
    c2 = replace(craft, tanks=tuple(tanks), engines=tuple(engines), dry_mass_kg=dry)
    out = []
    for k, ev in enumerate(events):
        d = dict(ev.data)
        if ev.kind == MASS:
            d["delta"] = d["delta"] + entry_sigma(ev.data, "delta") * z[k]
        elif ev.kind == REBASELINE:
            d["remaining_kg"] = d["remaining_kg"] + float(d.get("sigma_kg") or 0.0) * z[k]
        elif ev.kind == BURN and d.get("dv") is not None:
            d["dv"] = d["dv"] + entry_sigma(ev.data, "dv") * z[k]
        elif d.get("duration") is not None:
            d["duration"] = d["duration"] + entry_sigma(ev.data, "duration") * z[k]
        else:
            d["propellant"] = d["propellant"] + entry_sigma(ev.data, "propellant") * z[k]
        out.append(ev._replace(data=d))
    model = bd.Model(c2)
    return bd.replay_blowdown(c2, model, out, temps)[0]


__all__ = ["Linear", "linearise", "simulate", "effective_ve", "factors", "exact_sample"]
