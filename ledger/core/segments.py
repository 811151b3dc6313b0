"""The ledger compressed for sampling, without changing the distribution of anything sampled.

Amounts that subtract from the mass (draws by duration or propellant, mass changes) commute, so a run of
them is one additive segment; a run of delta-v burns on one engine is one scaling segment, since
exp(-dv1/ve)·exp(-dv2/ve) = exp(-(dv1+dv2)/ve). Independent Gaussian errors of a run add up to one
Gaussian with the variances added. A ledger of thousands of short firings between burns becomes a few
segments per burn, and the Monte Carlo's cost follows the segments, not the entries. ``prepare`` turns
the segments into the index arrays and constants every chunk of samples shares.

A re-baseline is not an affine step (it sets a tank to a drawn value whatever the sample held), so
``parts`` first cuts the ledger at re-baselines; each run between them is compressed on its own and the
sampler carries every sample's mass and tanks from one run to the next.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .craft import Craft
from .entries import BURN, MASS, REBASELINE, Entry
from .sigmas import entry_sigma, entry_sigmas

_CODE = {"dv": 0, "duration": 1, "propellant": 2, "delta": 3}


@dataclass(frozen=True)
class Segments:
    """The ledger compressed for sampling: K segments in replay order, each scaling or additive."""

    scale: np.ndarray           # (K,) bool: a run of delta-v burns on one engine
    engine: np.ndarray          # (K,) engine of a scaling segment, -1 for additive ones
    dv: np.ndarray              # (K,) m/s, summed over the run
    dv_var: np.ndarray          # (K,) (m/s)^2
    duration: np.ndarray        # (K, engines) s of firing, drawn at the sample's mass flow
    duration_var: np.ndarray    # (K, engines)
    propellant: np.ndarray      # (K, engines) kg drawn directly
    propellant_var: np.ndarray  # (K, engines)
    delta: np.ndarray           # (K,) kg of mass changes
    delta_var: np.ndarray       # (K,)
    entries: int

    def __len__(self) -> int:
        return len(self.scale)


def segments(craft: Craft, events: Sequence[Entry]) -> Segments:
    """Compress resolved events (replay order) into segments; sigmas default through ``core.sigmas``.

    Re-baselines are not compressible: cut the ledger with ``parts`` first."""
    n, n_eng = len(events), len(craft.engines)
    index = {e.id: i for i, e in enumerate(craft.engines)}
    rows = []  # tuples first, whole arrays after: element-wise writes into arrays cost several times more
    for ev in events:
        kind, d = ev.kind, ev.data
        if kind == REBASELINE:
            raise ValueError("segments: re-baselines cut the ledger into parts (segments.parts)")
        if kind == MASS:
            field, e = "delta", -1
        else:
            e = index[d["engine"]]
            field = ("dv" if kind == BURN and d.get("dv") is not None else
                     "duration" if d.get("duration") is not None else "propellant")
        given = d.get("sigma")
        if given is None and d.get("pulses") is not None and field == "duration":
            given = entry_sigma(d, field)  # a pulse train's own default (core.sigmas)
        amount = d[field]
        if field == "duration" and d.get("pulses") is not None and craft.engines[e].impulse_bit is not None:
            k = float(craft.engines[e].pulse_on_time_scale(d["on_time"]))  # steady-state equivalent on-time
            amount, given = amount * k, given * k
        rows.append((field, e, amount, np.nan if given is None else given))
    fields_, engine_, amount_, given_ = zip(*rows) if rows else ((), (), (), ())
    code = np.array([_CODE[f] for f in fields_], dtype=np.int8)  # 0 scale, 1 duration, 2 propellant, 3 mass
    engine = np.array(engine_, dtype=np.int64)
    amount = np.array(amount_, dtype=float)
    var = entry_sigmas(fields_, amount, np.array(given_, dtype=float)) ** 2
    is_scale = code == 0
    start = np.ones(n, dtype=bool)
    start[1:] = (is_scale[1:] != is_scale[:-1]) | (is_scale[1:] & (engine[1:] != engine[:-1]))
    seg = np.cumsum(start) - 1
    k = int(seg[-1]) + 1 if n else 0

    def total(mask: np.ndarray, values: np.ndarray) -> np.ndarray:
        return np.bincount(seg[mask], values[mask], minlength=k)

    def per_engine(c: int, values: np.ndarray) -> np.ndarray:
        out = np.zeros(k * n_eng)
        m = code == c
        np.add.at(out, seg[m] * n_eng + engine[m], values[m])
        return out.reshape(k, n_eng)

    return Segments(
        scale=is_scale[start], engine=np.where(is_scale[start], engine[start], -1),
        dv=total(is_scale, amount), dv_var=total(is_scale, var),
        duration=per_engine(1, amount), duration_var=per_engine(1, var),
        propellant=per_engine(2, amount), propellant_var=per_engine(2, var),
        delta=total(code == 3, amount), delta_var=total(code == 3, var), entries=n,
    )


@dataclass(frozen=True)
class Rebase:
    """A re-baseline: in every sample the tank takes an independent draw N(remaining_kg, sigma_kg)."""

    tank: int
    remaining_kg: float
    sigma_kg: float


@dataclass(frozen=True)
class Parts:
    """The ledger cut at re-baselines: ``runs[i]`` are the segments before ``rebases[i]``, the last run
    follows the last re-baseline (so there is one run more than re-baselines; a run may be empty)."""

    runs: tuple[Segments, ...]
    rebases: tuple[Rebase, ...] = ()

    def __len__(self) -> int:
        """Segments sampled in all: the runs' segments and one per re-baseline."""
        return sum(len(r) for r in self.runs) + len(self.rebases)

    @property
    def widest(self) -> int:
        """Segments of the longest run: what one chunk's arrays hold at a time."""
        return max(len(r) for r in self.runs)


def parts(craft: Craft, events: Sequence[Entry]) -> Parts:
    """Cut resolved events at re-baselines and compress each run; without re-baselines, one run."""
    tanks = {t.id: i for i, t in enumerate(craft.tanks)}
    runs, rebases, start = [], [], 0
    for i, ev in enumerate(events):
        if ev.kind == REBASELINE:
            runs.append(segments(craft, events[start:i]))
            d = ev.data
            rebases.append(Rebase(tanks[d["tank"]], float(d["remaining_kg"]), float(d.get("sigma_kg") or 0.0)))
            start = i + 1
    runs.append(segments(craft, events[start:]))
    return Parts(tuple(runs), tuple(rebases))


@dataclass(frozen=True)
class Plan:
    """Index arrays and constants of one simulation, prepared once and shared by every chunk."""

    sc: np.ndarray            # positions of scaling segments
    eng: np.ndarray           # their engines
    dv: np.ndarray
    dv_sd: np.ndarray
    ns_before: object         # per additive segment: scaling segments before it (see _columns)
    na_before: object         # per scaling segment: additive segments before it
    b_const: np.ndarray       # per additive segment: delta - propellant drawn directly
    durations: tuple          # (engine, seconds per additive segment) for engines fired by duration
    drawn_const: np.ndarray   # (engines,) kg drawn directly over the whole ledger
    seconds: np.ndarray       # (engines,) s fired over the whole ledger
    b_sd: np.ndarray          # per additive segment: sigma of its mass change
    split: np.ndarray         # (additive segments, engines): how a unit error of b splits between engines
    resid: np.ndarray         # (engines, engines): square root of what the split leaves over
    onehot: np.ndarray        # (scaling segments, engines)
    single: int | None        # the engine of every scaling segment, when there is only one
    total_cov: np.ndarray     # covariance of (total mass error of all additive segments, their split)
    total_root: np.ndarray    # R with R R' = total_cov (symmetric square root; total_cov may be singular)
    total_pinv: np.ndarray    # pseudo-inverse of total_cov, for the final mass's error given the totals
    weights: np.ndarray       # (Ka, columns) summed against 1/A (montecarlo._one_engine): b_const, durations, errors
    dur_engines: np.ndarray   # engines fired by duration (the columns after b_const in weights)


def _columns(index: np.ndarray):
    """Column selector: a slice (a view, no copy) when the columns are consecutive, else the index array."""
    if index.size and index[-1] - index[0] == index.size - 1:
        return slice(int(index[0]), int(index[-1]) + 1)
    return index


def _root_and_pinv(cov: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Square root and pseudo-inverse of a covariance that may be singular (e.g. one engine's draw is the
    whole additive error): eigenvalues below 1e-12 of the largest count as 0."""
    lam, vec = np.linalg.eigh(cov)
    keep = lam > 1e-12 * max(float(lam.max(initial=0.0)), 0.0)
    lam = np.where(keep, lam, 0.0)
    inv = np.divide(1.0, lam, out=np.zeros_like(lam), where=keep)
    return vec * np.sqrt(lam), (vec * inv) @ vec.T


def prepare(craft: Craft, seg: Segments) -> Plan:
    """Precompute the chunk-independent parts.

    In additive segment k the mass changes by b = delta - sum_e d_e. The errors are Gaussian with fixed
    variances (a duration's sigma is turned into kilograms at the engine's nominal mass flow: it stands
    for the firing's flow repeatability; the sample's own flow scales the duration itself). With v_e the
    variance of engine e's draw and V = var(b), the draws given b's error eta = sqrt(V)·z are Gaussian
    with mean -v_e/sqrt(V)·z and covariance diag(v) - v v'/V (conditioning a joint Gaussian); summed over
    the segments that remainder is one small Gaussian per sample. So a segment needs one random number
    and the split of its error between engines stays exact.
    """
    n_eng = len(craft.engines)
    sc, add = np.flatnonzero(seg.scale), np.flatnonzero(~seg.scale)
    dur, prop = seg.duration[add], seg.propellant[add]
    onehot = np.zeros((sc.size, n_eng))
    onehot[np.arange(sc.size), seg.engine[sc]] = 1.0
    v = craft.mass_flows() ** 2 * seg.duration_var[add] + seg.propellant_var[add]   # (Ka, engines)
    var_b = seg.delta_var[add] + v.sum(axis=1)
    b_sd = np.sqrt(var_b)
    split = np.divide(v, b_sd[:, None], out=np.zeros_like(v), where=b_sd[:, None] > 0)
    cov = np.diag(v.sum(axis=0)) - split.T @ split
    lam, vec = np.linalg.eigh(cov)
    resid = vec * np.sqrt(np.maximum(lam, 0.0))
    total_cov = np.block([[np.atleast_2d(var_b.sum()), -(b_sd @ split)[None, :]],
                          [-(b_sd @ split)[:, None], split.T @ split]])
    dur_engines = np.array([e for e in range(n_eng) if (dur[:, e] != 0).any()], dtype=int)
    weights = np.column_stack([seg.delta[add] - prop.sum(axis=1), dur[:, dur_engines], var_b, b_sd[:, None] * split])
    return Plan(sc, seg.engine[sc], seg.dv[sc], np.sqrt(seg.dv_var[sc]), _columns(np.searchsorted(sc, add)),
                 _columns(np.searchsorted(add, sc)), seg.delta[add] - prop.sum(axis=1),
                 tuple((e, dur[:, e]) for e in range(n_eng) if (dur[:, e] != 0).any()),
                 prop.sum(axis=0), dur.sum(axis=0), b_sd, split, resid, onehot,
                 int(seg.engine[sc][0]) if sc.size and (seg.engine[sc] == seg.engine[sc][0]).all() else None,
                 total_cov, *_root_and_pinv(total_cov), weights, dur_engines)
