"""Monte Carlo over the whole ledger: how sure are the remaining propellant and the delta-v figures.

Each sample draws the craft's uncertain figures (dry mass, loads, Isp and thrust per engine: Gaussian,
one sigma from the craft file or ``core.sigmas``) and every entry's amount (Gaussian with the entry's
sigma), then replays the ledger. Engine errors are systematic (shared by every burn of a sample); entry
errors are independent. A duration's sigma becomes kilograms at the engine's nominal mass flow (it
stands for the flow's firing-to-firing repeatability); the sample's own flow scales the duration.

The ledger is compressed first (``core.segments``), then samples run in chunks, each a (samples x
segments) prefix scan sized to stay in the processor's cache, so memory stays bounded whatever the
sample count. Normal draws are the largest cost (about 60 % of a run), so there is one per scaling
segment and none per additive segment: given the scaling, the mass and each engine's burns are affine in
the additive segments' errors, whose few per-sample totals are drawn directly (``_one_engine`` when one
engine flies the delta-v burns, ``_engines`` when several do); exact in distribution, not approximations.
The scan with one draw per additive segment (``_additive``) is kept for mass ratios beyond float range.

Re-baselines cut the ledger into runs (``segments.parts``): each sample's mass and tanks are carried from
one run to the next, and at a re-baseline the tank takes a fresh draw around the adopted value, the mass
the difference. A ledger without re-baselines is one run.
``montecarlo_loop.simulate_loop`` is the plain per-sample, per-entry reference.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from .craft import G0, Craft
from .entries import Entry
from .replay import scan_log
from .segments import Parts, Plan, Rebase, Segments, parts, prepare
from .sigmas import craft_sigmas

DEFAULT_SEED = 24301
DEFAULT_SAMPLES = 10_000
DEFAULT_CHUNK = 1000
CELLS_PER_CHUNK = 1 << 18
"""Upper bound on samples x segments per chunk: 2 MB per float64 array, so a chunk's arrays stay in the
processor's cache (measured 2-3x faster than 1000 x 4000 chunks on the project machine)."""
Progress = Callable[[int, int], None]


@dataclass(frozen=True)
class Samples:
    """The final state of every sample, and the engine performance it was drawn with."""

    mass_kg: np.ndarray       # (S,)
    remaining_kg: np.ndarray  # (S, tanks)
    ve: np.ndarray            # (S, engines) effective exhaust velocity along the burn, m/s
    seed: int
    segments: int
    frac: np.ndarray | None = None  # (S, engines, tanks) feed shares at each sample's drawn mixture ratio

    def __len__(self) -> int:
        return len(self.mass_kg)


def _globals(craft: Craft, rng: np.random.Generator, n: int) -> tuple[np.ndarray, ...]:
    """Dry mass, loads, Isp and thrust per sample (Gaussian; clipped at 0, Isp and thrust kept positive)."""
    sig = craft_sigmas(craft)
    n_t, n_e = len(craft.tanks), len(craft.engines)
    z = rng.standard_normal((n, 1 + n_t + 2 * n_e))
    dry = np.maximum(0.0, craft.dry_mass_kg + sig.dry_mass_kg * z[:, 0])
    loads = np.maximum(0.0, craft.loads() + sig.load_kg * z[:, 1:1 + n_t])
    nominal_isp = np.array([e.isp_s for e in craft.engines])
    nominal_thrust = np.array([e.thrust_n for e in craft.engines])
    isp = np.maximum(1e-9 * nominal_isp, nominal_isp + sig.isp_s * z[:, 1 + n_t:1 + n_t + n_e])
    thrust = np.maximum(1e-9 * nominal_thrust, nominal_thrust + sig.thrust_n * z[:, 1 + n_t + n_e:])
    return dry, loads, isp, thrust


def _additive(p: Plan, flow: np.ndarray, rng: np.random.Generator):
    """Mass change of every additive segment (n, Ka) and propellant drawn per engine (n, engines)."""
    n = flow.shape[0]
    drawn = p.drawn_const + flow * p.seconds
    if p.b_sd.any():
        b = rng.standard_normal((n, p.b_sd.size))
        drawn -= b @ p.split
        drawn += rng.standard_normal(flow.shape) @ p.resid.T
        b *= p.b_sd
        b += p.b_const
    else:
        b = np.broadcast_to(p.b_const, (n, p.b_const.size)).copy()
    for e, seconds in p.durations:
        b -= np.multiply.outer(flow[:, e], seconds)
    return b, drawn


def _one_engine(p: Plan, m0: np.ndarray, flow: np.ndarray, inv: np.ndarray, last: np.ndarray, lead: int,
                rng: np.random.Generator):
    """Final mass and propellant per engine when one engine (or none) flies every delta-v burn.

    The final mass is kept_N·(m0 + sum_k b_k/A_k) and b is affine in the flows and the segments' errors
    eta_k = sd_k z_k, so the sum is one matrix product of 1/A (``inv``, from ``_inverse_kept``; ``last`` is
    kept_N; the first ``lead`` additive segments have 1/A = 1) with constant columns: no scan. Whatever mass went that the additive segments do not account
    for went through the one engine. Given the scaling, the errors enter linearly: the final mass gets
    kept_N·X (X = sum eta_k/A_k), the additive segments' total Y = sum eta_k, the draws G = -sum split_k z_k;
    (X, Y, G) is Gaussian with a covariance known per sample, drawn directly (exact: conditioning on
    everything else), not one random number per segment: (Y, G) from its constant covariance, then X given them.
    """
    n, m, nd = len(m0), p.split.shape[1], p.dur_engines.size
    drawn = p.drawn_const + flow * p.seconds
    total = p.b_const.sum() - flow @ p.seconds
    acc = m0
    if p.b_const.size:
        cols = inv @ p.weights[lead:]
        if lead:
            cols += p.weights[:lead].sum(axis=0)
        acc = m0 + cols[:, 0] - np.einsum("ij,ij->i", flow[:, p.dur_engines], cols[:, 1:1 + nd])
    final = last * acc
    if p.b_sd.any():
        # (Y, G) has the constant covariance total_cov: drawn with its fixed root. X given (Y, G) is
        # Gaussian with mean c·S⁺·(Y, G) and variance var(X) - c·S⁺·c (conditioning a joint Gaussian;
        # c = cov(X, (Y, G)) per sample), so no per-sample decomposition is needed.
        z = rng.standard_normal((n, m + 2))
        yg = z[:, 1:] @ p.total_root.T
        c = np.empty((n, m + 1))
        c[:, 0] = cols[:, 1 + nd]
        c[:, 1:] = -cols[:, 2 + nd:]
        k = c @ p.total_pinv
        np.square(inv, out=inv)  # inv is not needed after this: var(X) = sum_k var_b_k / A_k^2
        var_x = inv @ p.weights[lead:, 1 + nd] + p.weights[:lead, 1 + nd].sum() - np.einsum("ij,ij->i", k, c)
        x = np.einsum("ij,ij->i", k, yg) + np.sqrt(np.maximum(var_x, 0.0)) * z[:, 0]
        final = final + last * x
        total = total + yg[:, 0]
        drawn = drawn + yg[:, 1:] + rng.standard_normal((n, m)) @ p.resid.T
    if p.single is not None:
        drawn[:, p.single] += m0 + total - final
    return final, drawn


def _inverse_kept(p: Plan, ve: np.ndarray, rng: np.random.Generator, n: int):
    """1/A before the additive segments (n, Ka - lead), the fraction kept at the end (n,) and ``lead``,
    the leading additive segments left out of the first (they come before any burn: their 1/A is 1).

    The same draws as ``_scaling`` (one normal per scaling segment, in the same order), summed in delta-v
    space: with one exhaust velocity per sample, ln A_i = -(delta-v of the scaling segments before i)/ve,
    so 1/A is exp(+cum/ve), taken over the columns the additive segments use and in place in the array
    the draws came in (no reciprocal, no second (n, Ks) array: a chunk's working set is one array).
    """
    ks = p.sc.size
    if not ks:
        return np.ones((n, p.b_const.size)), np.ones(n), 0
    rate = 1.0 / ve[:, p.single:p.single + 1]  # (n, 1)
    if p.dv_sd.any():
        cum = rng.standard_normal((n, ks))
        cum *= p.dv_sd
        cum += p.dv
    else:
        cum = np.broadcast_to(p.dv, (n, ks)).copy()
    np.cumsum(cum, axis=1, out=cum)  # cum[:, i]: delta-v of the scaling segments up to and with i
    last = np.exp(-cum[:, -1] * rate[:, 0])
    np.multiply(cum, rate, out=cum)  # the whole array: contiguous passes are cheaper than a view's
    np.exp(cum, out=cum)
    cols = p.ns_before  # per additive segment, the scaling segments before it: cum's column one to the left
    if isinstance(cols, slice):
        lead = 1 if cols.start == 0 else 0
        return cum[:, cols.start + lead - 1:cols.stop - 1], last, lead
    return np.concatenate([np.ones((n, 1)), cum], axis=1)[:, cols], last, 0


def _engines(p: Plan, m0: np.ndarray, ve: np.ndarray, flow: np.ndarray, rng: np.random.Generator):
    """Final mass and propellant per engine when several engines fly the delta-v burns.

    As in ``_one_engine`` the final mass is kept_N·(m0 + sum_k b_k/A_k). Scaling segment i of engine e
    burns step_i·acc_i (step_i = kept_i - kept_i+1, acc_i = m0 + sum over additive k before i of b_k/A_k),
    so engine e burns B_e = m0·Q_e0 + sum_k b_k·Q_ek/A_k, Q_ek the steps of e's segments after k: again
    affine in the additive errors eta_k, with coefficients known per sample once the scaling is drawn.
    So (X, H) = (sum eta_k/A_k, sum eta_k Q_ek/A_k for every delta-v engine but the one of most segments)
    given (Y, G) (``_one_engine``) is Gaussian with a per-sample mean and a small per-sample covariance,
    drawn directly with its own root (exact: conditioning a joint Gaussian), and the engine left out takes
    what the mass balance leaves. One normal per scaling segment and a few per sample, none per additive
    segment; an engine's terms stop at its last segment (Q_ek = 0 after it), so an apogee engine that
    flew a few early burns costs next to nothing.
    """
    n, ks, ka, m, nd = len(m0), p.sc.size, p.b_const.size, p.split.shape[1], p.dur_engines.size
    cum = rng.standard_normal((n, ks)) if p.dv_sd.any() else np.zeros((n, ks))
    cum *= p.dv_sd
    cum += p.dv
    cum *= (1.0 / ve)[:, p.eng]  # each segment over its own engine's exhaust velocity
    np.cumsum(cum, axis=1, out=cum)
    np.exp(cum, out=cum)  # cum[:, i] = 1/kept after scaling segment i
    last = 1.0 / cum[:, -1]
    ns = p.ns_before
    if isinstance(ns, slice):
        lead = 1 if ns.start == 0 else 0
        inv = cum[:, ns.start + lead - 1:ns.stop - 1]
        ns = np.arange(ns.start, ns.stop)
    else:
        lead, inv = 0, np.concatenate([np.ones((n, 1)), cum], axis=1)[:, ns]
    engines, counts = np.unique(p.eng, return_counts=True)
    balance = int(engines[np.argmax(counts)])
    drawn = p.drawn_const + flow * p.seconds
    total = p.b_const.sum() - flow @ p.seconds
    burnt, coef = [], []  # per explicit engine: m0·Q_e0, and Q_ek/A_k over the additive segments before its last
    for e in (int(e) for e in engines if e != balance):
        idx = np.flatnonzero(p.eng == e)
        before = np.ones((n, idx.size))  # kept before each of e's segments
        before[:, idx > 0] = 1.0 / cum[:, idx[idx > 0] - 1]
        step = before - 1.0 / cum[:, idx]
        q = np.zeros((n, idx.size + 1))
        np.cumsum(step[:, ::-1], axis=1, out=q[:, -2::-1])  # q[:, t]: e's steps from its t-th segment on
        burnt.append(m0 * q[:, 0])
        upto = int(np.searchsorted(ns, idx[-1], side="right"))  # additive segments with an e-segment after
        g = q[:, np.searchsorted(idx, ns[:upto])]
        g[:, lead:] *= inv[:, :upto - lead]
        coef.append((e, upto, g))
    explicit = [e for e, _, _ in coef]
    if ka:
        cols = inv @ p.weights[lead:]
        if lead:
            cols += p.weights[:lead].sum(axis=0)
        c_e = [g @ p.weights[:upto] for _, upto, g in coef]
        final = last * (m0 + cols[:, 0] - np.einsum("ij,ij->i", flow[:, p.dur_engines], cols[:, 1:1 + nd]))
        burnt = [b + c[:, 0] - np.einsum("ij,ij->i", flow[:, p.dur_engines], c[:, 1:1 + nd]) for b, c in zip(burnt, c_e)]
        if p.b_sd.any():
            r = 1 + len(coef)
            z = rng.standard_normal((n, r + m + 1))
            yg = z[:, r:] @ p.total_root.T
            c = np.empty((n, r, m + 1))  # cov((X, H), (Y, G)) per sample
            for a, col in enumerate([cols] + c_e):
                c[:, a, 0] = col[:, 1 + nd]
                c[:, a, 1:] = -col[:, 2 + nd:]
            k = c @ p.total_pinv
            var_b = p.weights[:, 1 + nd]
            cov = np.empty((n, r, r))  # cov((X, H)) per sample: sums of var_b_k times the coefficients
            for a, (_, upto, g) in enumerate(coef, start=1):
                h = g * var_b[:upto]
                cov[:, 0, a] = cov[:, a, 0] = h[:, :lead].sum(axis=1) + np.einsum("ij,ij->i", h[:, lead:], inv[:, :upto - lead])
                for b_, (_, upto2, g2) in enumerate(coef[a - 1:], start=a):
                    w = min(upto, upto2)
                    cov[:, a, b_] = cov[:, b_, a] = np.einsum("ij,ij->i", h[:, :w], g2[:, :w])
            np.square(inv, out=inv)
            cov[:, 0, 0] = inv @ var_b[lead:] + var_b[:lead].sum()
            cov -= k @ c.transpose(0, 2, 1)
            root = _psd_root(cov)
            u = np.einsum("nab,nb->na", k, yg) + np.einsum("nab,nb->na", root, z[:, :r])
            final = final + last * u[:, 0]
            burnt = [b + u[:, 1 + j] for j, b in enumerate(burnt)]
            total = total + yg[:, 0]
            drawn = drawn + yg[:, 1:] + rng.standard_normal((n, m)) @ p.resid.T
    else:
        final = last * m0
    drawn[:, balance] += m0 + total - final - sum(burnt, np.zeros(n))
    for e, b in zip(explicit, burnt):
        drawn[:, e] += b
    return final, drawn


def _psd_root(cov: np.ndarray) -> np.ndarray:
    """Lower-triangular R with R R' = cov for a stack (n, r, r) of covariances, r the few delta-v engines.

    Cholesky by columns over the whole stack (a batched eigendecomposition cost more than the rest of a
    chunk); a pivot that rounding left at or below zero (a singular covariance: an error fully explained
    by the totals drawn before) counts as 0 and its column as 0, which is that covariance's own root."""
    n, r, _ = cov.shape
    root = np.zeros_like(cov)
    for j in range(r):
        pivot = np.sqrt(np.maximum(cov[:, j, j] - np.einsum("nk,nk->n", root[:, j, :j], root[:, j, :j]), 0.0))
        root[:, j, j] = pivot
        keep = pivot > 1e-9 * np.sqrt(np.abs(cov[:, j, j]))
        for i in range(j + 1, r):
            s = cov[:, i, j] - np.einsum("nk,nk->n", root[:, i, :j], root[:, j, :j])
            root[:, i, j] = np.divide(s, pivot, out=np.zeros(n), where=keep)
    return root


def _scaling(p: Plan, ve: np.ndarray, rng: np.random.Generator, n: int):
    """log of each scaling segment's factor (n, Ks) and kept = exp(cumulative sum), (n, Ks + 1)."""
    ks = p.sc.size
    kept = np.zeros((n, ks + 1))
    log_a = None
    if ks:
        log_a = rng.standard_normal((n, ks)) if p.dv_sd.any() else np.zeros((n, ks))
        log_a *= p.dv_sd
        log_a += p.dv
        one = p.single
        log_a *= (-1.0 / ve[:, one:one + 1]) if one is not None else (-1.0 / ve)[:, p.eng]
        np.cumsum(log_a, axis=1, out=kept[:, 1:])
    np.exp(kept, out=kept)
    return log_a, kept


def _chunk(craft: Craft, plans: Sequence[Plan | None], rebases: Sequence[Rebase], dry, loads, isp, thrust,
           rng: np.random.Generator, frac: np.ndarray | None = None):
    """Final mass, remaining per tank and exhaust velocities for one chunk of n samples.

    Each run between re-baselines starts from the mass and tanks the previous one left, per sample. At a
    re-baseline the tank takes an independent draw N(adopted, sigma) and the mass changes by that draw
    less what the sample's tank held (as ``replay.replay`` does with the nominal figures). No floor: the
    adopted figure is bookkeeping, like the rest of the ledger.
    """
    ve = isp * G0 * np.cos(np.radians([e.cant_deg for e in craft.engines]))
    flow = thrust / (isp * G0)
    mass, remaining = dry + loads.sum(axis=1), loads.copy()
    for i, p in enumerate(plans):
        if p is not None:
            mass, used = _run(p, mass, ve, flow, rng)
            remaining -= split_draws(craft, used, frac)
        if i < len(rebases):
            r = rebases[i]
            adopted = r.remaining_kg + r.sigma_kg * rng.standard_normal(len(mass))
            mass = mass + (adopted - remaining[:, r.tank])
            remaining[:, r.tank] = adopted
    return mass, remaining, ve


def _run(p: Plan, m0: np.ndarray, ve: np.ndarray, flow: np.ndarray, rng: np.random.Generator,
         dense: bool = False):
    """Final mass and propellant per engine over one run of segments, from each sample's mass m0.

    kept[:, i] is the fraction of mass the scaling segments before i leave (A in replay.mass_scan) and
    acc[:, j] is m0 + sum of b/A over the first j additive segments, so the mass before a segment is
    kept·acc and a scaling segment burns (kept_i - kept_i+1)·acc. ``_one_engine`` (one engine on the
    delta-v burns) and ``_engines`` (several) need neither acc nor a random number per additive segment;
    this scan (``dense``) is what they fall back on when a mass ratio leaves float range.
    """
    n, ks, ka = len(m0), p.sc.size, p.b_const.size
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        if not dense:
            if ks == 0 or p.single is not None:
                final, used = _one_engine(p, m0, flow, *_inverse_kept(p, ve, rng, n), rng)
            else:
                final, used = _engines(p, m0, ve, flow, rng)
            if np.all(np.isfinite(final)) and np.all(np.isfinite(used)):
                return final, used
            return _run(p, m0, ve, flow, rng, dense=True)
        log_a, kept = _scaling(p, ve, rng, n)
        acc = np.empty((n, ka + 1))
        acc[:, 0] = m0
        b, drawn = None, np.zeros(flow.shape)
        if ka:
            b, drawn = _additive(p, flow, rng)
            np.divide(b, kept[:, p.ns_before], out=acc[:, 1:])
            np.cumsum(acc, axis=1, out=acc)
        final = kept[:, -1] * acc[:, -1]
        burnt = _burned(p, kept, acc) if ks else np.zeros(flow.shape)
    if not (np.all(np.isfinite(final)) and np.all(np.isfinite(burnt))):
        final, burned = _sequential(p, m0, log_a, b)
        burnt = burned @ p.onehot
    return final, drawn + burnt


def _burned(p: Plan, kept: np.ndarray, acc: np.ndarray) -> np.ndarray:
    """Propellant per engine burnt by the scaling segments: sum over i of (kept_i - kept_i+1)·acc_i."""
    step = kept[:, :-1] - kept[:, 1:]
    if p.single is not None:  # one engine: a row-wise dot product instead of a product array and a matmul
        out = np.zeros((len(acc), p.onehot.shape[1]))
        out[:, p.single] = np.einsum("ij,ij->i", step, acc[:, p.na_before])
        return out
    step *= acc[:, p.na_before]
    return step @ p.onehot


def _sequential(p: Plan, m0, log_a, b):
    """Fallback for mass ratios beyond float range: the dense scan, which then steps one by one."""
    ks, ka = p.sc.size, p.b_const.size
    add = np.setdiff1d(np.arange(ks + ka), p.sc)
    dense_a, dense_b = np.zeros((len(m0), ks + ka)), np.zeros((len(m0), ks + ka))
    if ks:
        dense_a[:, p.sc] = log_a
    if ka:
        dense_b[:, add] = b
    m = scan_log(m0, dense_a, dense_b)
    before = np.concatenate([m0[:, None], m[:, :-1]], axis=1)[:, p.sc]
    return m[:, -1], -before * np.expm1(dense_a[:, p.sc])


def split_draws(craft: Craft, used: np.ndarray, frac: np.ndarray | None) -> np.ndarray:
    """Propellant per engine (n, engines) -> per tank (n, tanks), at the nominal feed shares or at each
    sample's own (n, engines, tanks) from ``core.mixture``."""
    if frac is None:
        return used @ craft.feed_fractions()
    return np.einsum("ne,net->nt", used, frac)


def mixture_draws(craft: Craft, seed, samples: int) -> np.ndarray | None:
    """Each sample's feed shares at its drawn mixture ratios (``core.mixture``), from their own child
    stream of ``seed`` (the third: the craft's and the entries' streams are unchanged by it)."""
    from .mixture import drifts, flown_fractions  # noqa: PLC0415

    if not drifts(craft):
        return None
    return flown_fractions(craft, generator(np.random.SeedSequence(seed).spawn(3)[2]), samples)


def generator(seed) -> np.random.Generator:
    """numpy's SFC64 bit generator: its normals came out ~17 % faster than the default PCG64's here, and
    normal draws are the largest single cost of a run."""
    return np.random.Generator(np.random.SFC64(seed))


def chunk_size(n_segments: int, chunk: int = DEFAULT_CHUNK) -> int:
    return max(1, min(chunk, CELLS_PER_CHUNK // max(n_segments, 1)))


def simulate(craft: Craft, events: Sequence[Entry], samples: int = DEFAULT_SAMPLES, seed: int = DEFAULT_SEED,
             chunk: int = DEFAULT_CHUNK, progress: Progress | None = None, seg: Segments | Parts | None = None,
             workers: int = 1) -> Samples:
    """Sample the final state of the ledger ``samples`` times; ``progress(done, total)`` after each chunk.

    The craft figures come from one random stream drawn up front and each chunk's entry errors (and
    re-baseline draws) from its own child stream, so the answer depends on the seed and the chunk size,
    not on ``workers`` (threads sharing the chunks: numpy releases the interpreter lock inside its array
    loops), and a sample keeps its engine and load errors when the ledger grows (checks before and after
    an entry compare like with like). ``seg`` is the ledger already cut and compressed (``parts``).
    """
    if samples < 1:
        raise ValueError("samples must be at least 1")
    cut = parts(craft, events) if seg is None else seg if isinstance(seg, Parts) else Parts((seg,))
    plans = [prepare(craft, run) if len(run) else None for run in cut.runs]
    craft_seq, entry_seq = np.random.SeedSequence(seed).spawn(2)
    dry, loads, isp, thrust = _globals(craft, generator(craft_seq), samples)
    frac = mixture_draws(craft, seed, samples)
    size = chunk_size(cut.widest, chunk)
    bounds = [(lo, min(samples, lo + size)) for lo in range(0, samples, size)]
    streams = entry_seq.spawn(len(bounds))
    mass = np.empty(samples)
    remaining = np.empty((samples, len(craft.tanks)))
    ve = np.empty((samples, len(craft.engines)))

    def one(i: int):
        lo, hi = bounds[i]
        return _chunk(craft, plans, cut.rebases, dry[lo:hi], loads[lo:hi], isp[lo:hi], thrust[lo:hi],
                      generator(streams[i]), None if frac is None else frac[lo:hi])

    if workers > 1 and len(bounds) > 1:
        from concurrent.futures import ThreadPoolExecutor  # noqa: PLC0415

        with ThreadPoolExecutor(max_workers=workers) as pool:
            results = pool.map(one, range(len(bounds)))
            _collect(results, bounds, mass, remaining, ve, samples, progress)
    else:
        _collect(map(one, range(len(bounds))), bounds, mass, remaining, ve, samples, progress)
    return Samples(mass, remaining, ve, seed, len(cut), frac)


def _collect(results, bounds, mass, remaining, ve, samples, progress) -> None:
    for (lo, hi), (m, r, v) in zip(bounds, results):
        mass[lo:hi], remaining[lo:hi], ve[lo:hi] = m, r, v
        if progress is not None:
            progress(hi, samples)
