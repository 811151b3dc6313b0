"""The ledger compressed for sampling, without changing the distribution of anything sampled.

Amounts that subtract from the mass (draws by duration or propellant, mass changes) commute, so a run of
them is one additive segment; a run of delta-v burns on one engine is one scaling segment, since
exp(-dv1/ve)·exp(-dv2/ve) = exp(-(dv1+dv2)/ve). Independent Gaussian errors of a run add up to one
Gaussian with the variances added. A ledger of thousands of short firings between burns becomes a few
segments per burn, and the Monte Carlo's cost follows the segments, not the entries.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .craft import Craft
from .entries import BURN, MASS, Entry
from .sigmas import entry_sigma


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
    """Compress resolved events (replay order) into segments; sigmas default through ``core.sigmas``."""
    n, n_eng = len(events), len(craft.engines)
    index = {e.id: i for i, e in enumerate(craft.engines)}
    code = np.empty(n, dtype=np.int8)  # 0 scale, 1 duration, 2 propellant, 3 mass change
    engine = np.full(n, -1, dtype=np.int64)
    amount = np.empty(n)
    var = np.empty(n)
    for i, ev in enumerate(events):
        d = ev.data
        if ev.kind == MASS:
            field = "delta"
            code[i] = 3
        else:
            engine[i] = index[d["engine"]]
            field = ("dv" if ev.kind == BURN and d.get("dv") is not None else
                     "duration" if d.get("duration") is not None else "propellant")
            code[i] = {"dv": 0, "duration": 1, "propellant": 2}[field]
        amount[i] = d[field]
        var[i] = entry_sigma(d, field) ** 2
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
