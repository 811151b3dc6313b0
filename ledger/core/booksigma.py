"""One-sigma uncertainty of the bookkeeping remaining in each tank: what a gauge reading is compared with.

A simple model, stated so an engineer can check it (a fuller Monte Carlo may replace it):

    sigma_t^2 = sigma_start_t^2 + sum over engines e of (r_e * D_et)^2

- sigma_start_t: the tank's load sigma (craft file ``load_sigma``, else 0.1 % of the load: weighing,
  docs/sources.md §4, from memory), or the sigma adopted at the tank's latest re-baseline, which resets
  the account.
- D_et: propellant engine e drew from tank t since then (replay).
- r_e: the engine's flow-model error as a fraction, its ``isp_sigma / isp`` from the craft file, else
  2 % (Isp and flow-model bias 1-3 %, docs/sources.md §4, from memory).

Why per engine and not per burn: the flow-model error is mostly a bias of the engine's Isp and thrust
curves, shared by all its burns, so it grows with what the engine drew (the "integral of model bias",
docs/sources.md §4). Independent per-burn errors would shrink as 1/sqrt(N) over thousands of pulses and
claim a precision nobody has. Engines are taken as independent of each other and of the load.
Not modelled: dry-mass error in delta-v burns, mixture-ratio drift between tanks, leaks.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from .craft import Craft
from .entries import Entry
from .replay import STEP_REBASE, Replay, Steps

DEFAULT_LOAD_SIGMA_REL = 0.001
"""Loaded mass by weighing, ~0.1 % (docs/sources.md §4) [memory]."""
DEFAULT_FLOW_ERROR_REL = 0.02
"""Isp/thrust flow-model bias 1-3 %, middle taken (docs/sources.md §4) [memory]."""


def load_sigmas(craft: Craft) -> np.ndarray:
    """Per-tank load sigma in kg: the craft file's value, else the default fraction of the load."""
    return np.array([t.load_sigma_kg if t.load_sigma_kg is not None else DEFAULT_LOAD_SIGMA_REL * t.load_kg
                     for t in craft.tanks], dtype=float)


def flow_error_rel(craft: Craft) -> np.ndarray:
    """Per-engine relative flow-model error: isp_sigma/isp where given, else the default."""
    return np.array([e.isp_sigma_s / e.isp_s if e.isp_sigma_s is not None else DEFAULT_FLOW_ERROR_REL
                     for e in craft.engines], dtype=float)


def bookkeeping_sigma(craft: Craft, events: Sequence[Entry], steps: Steps, rep: Replay,
                      upto: int | None = None) -> np.ndarray:
    """Sigma (kg) of each tank's bookkeeping remaining after the first ``upto`` events (default all).

    ``steps`` and ``rep`` are the replay of ``events``; re-baseline entries carry their adopted
    ``sigma_kg``.
    """
    n = len(events) if upto is None else int(upto)
    sig0 = load_sigmas(craft)
    start = np.zeros(len(craft.tanks), dtype=int)
    if steps.tank is not None:
        for i in np.flatnonzero(steps.kind[:n] == STEP_REBASE):
            t = int(steps.tank[i])
            start[t] = i + 1
            sig0[t] = float(events[i].data["sigma_kg"])
    rel = flow_error_rel(craft)
    var = sig0 ** 2
    for t in range(len(craft.tanks)):
        engine = steps.engine[start[t]:n]
        fired = engine >= 0
        per_engine = np.bincount(engine[fired], weights=rep.drawn[start[t]:n, t][fired],
                                 minlength=len(craft.engines))
        var[t] += float(np.sum((rel * per_engine) ** 2))
    return np.sqrt(var)
