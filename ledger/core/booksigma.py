"""One-sigma uncertainty of the bookkeeping remaining in each tank: what a gauge reading is compared with.

A simple model, stated so an engineer can check it (a fuller Monte Carlo may replace it):

    sigma_t^2 = sigma_start_t^2 + sum over engines e of (r_e * D_et)^2

- sigma_start_t: the tank's load sigma (craft file ``load_sigma``, else 0.1 % of the load: weighing,
  docs/sources.md §4, from memory), or the sigma adopted at the tank's latest re-baseline, which resets
  the account.
- D_et: propellant engine e drew from tank t since then (replay).
- r_e: the engine's flow-model error as a fraction, its ``isp_sigma / isp`` from the craft file, else
  the sampler's default (core.sigmas: Isp 1 %).
- plus each burn's own amount sigma (entry --sigma or core.sigmas' default), independent per burn.

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
from .entries import AMOUNT_FIELDS
from .sigmas import CRAFT_DEFAULTS, craft_sigmas, entry_sigma

DEFAULT_LOAD_SIGMA_REL = CRAFT_DEFAULTS["load"].relative
DEFAULT_FLOW_ERROR_REL = CRAFT_DEFAULTS["isp"].relative
"""The Monte Carlo's own defaults (core.sigmas): one bookkeeping sigma for the gauge check and the low
bounds (issue 11, point 14). A separate 2 % rule here once gave a sigma ~1.8x the sampler's."""


def load_sigmas(craft: Craft) -> np.ndarray:
    """Per-tank load sigma in kg: the craft file's value, else the default fraction of the load."""
    return np.array(craft_sigmas(craft).load_kg, dtype=float)


def flow_error_rel(craft: Craft) -> np.ndarray:
    """Per-engine relative flow-model error: isp_sigma/isp where given, else the default."""
    sig = craft_sigmas(craft)
    return np.array([sig.isp_s[i] / e.isp_s for i, e in enumerate(craft.engines)], dtype=float)


def bookkeeping_sigma(craft: Craft, events: Sequence[Entry], steps: Steps, rep: Replay,
                      upto: int | None = None, isp_at: np.ndarray | None = None,
                      thrust_at: np.ndarray | None = None) -> np.ndarray:
    """Sigma (kg) of each tank's bookkeeping remaining after the first ``upto`` events (default all).

    ``steps`` and ``rep`` are the replay of ``events``; re-baseline entries carry their adopted
    ``sigma_kg``. ``isp_at`` / ``thrust_at`` (per event, NaN where the engine's nominal applies) give the
    Isp and thrust a table engine's draw was flown at (``core.blowcap.event_performance``): a sigma the
    craft file gives in seconds or newtons is then a larger share of a low-pressure draw; a default sigma
    stays its relative share.
    """
    n = len(events) if upto is None else int(upto)
    sig0 = load_sigmas(craft)
    start = np.zeros(len(craft.tanks), dtype=int)
    if steps.tank is not None:
        for i in np.flatnonzero(steps.kind[:n] == STEP_REBASE):
            t = int(steps.tank[i])
            start[t] = i + 1
            sig0[t] = float(events[i].data["sigma_kg"])
    sig = craft_sigmas(craft)
    isp_rel = flow_error_rel(craft)
    thrust_rel = np.array([sig.thrust_n[i] / e.thrust_n if e.thrust_n else 0.0
                           for i, e in enumerate(craft.engines)], dtype=float)
    var = sig0 ** 2
    n_e = len(craft.engines)
    # a sigma the craft file gives in seconds or newtons stays absolute at a table's lower values; a default
    # stays the default share of whatever the table gives (0 here: the relative figure above applies)
    at_isp = [e.isp_sigma_s or 0.0 for e in craft.engines]
    at_thrust = [e.thrust_sigma_n or 0.0 for e in craft.engines]
    for t in range(len(craft.tanks)):
        # As the sampler draws it: a burn quoted in delta-v or duration carries its engine's Isp bias (and a
        # duration the thrust bias: flow = F / (Isp g0)); one quoted in propellant carries neither. Shared
        # by all the engine's burns, so it grows with what the engine drew. On top, each burn's own amount
        # error (entry --sigma, else core.sigmas' default share), independent between burns.
        by_isp = np.zeros(n_e)
        by_thrust = np.zeros(n_e)
        kg_isp = np.zeros(n_e)  # kg of bias from draws flown at a table's Isp and thrust (already weighted)
        kg_thrust = np.zeros(n_e)
        own = 0.0
        for i in range(start[t], n):
            e = int(steps.engine[i])
            if e < 0:
                continue
            drawn = float(rep.drawn[i, t])
            data = events[i].data
            field = next((f for f in AMOUNT_FIELDS if data.get(f) is not None), None)
            at_table = isp_at is not None and isp_at[i] == isp_at[i]
            if field in ("dv", "duration"):
                if at_table:
                    kg_isp[e] += at_isp[e] / float(isp_at[i]) * drawn if at_isp[e] else isp_rel[e] * drawn
                else:
                    by_isp[e] += drawn
            if field == "duration":
                if at_table and thrust_at is not None and thrust_at[i] == thrust_at[i] and thrust_at[i] > 0:
                    kg_thrust[e] += (at_thrust[e] / float(thrust_at[i]) if at_thrust[e] else thrust_rel[e]) * drawn
                else:
                    by_thrust[e] += drawn
            if field is not None and float(data[field]):
                own += (entry_sigma(data, field) / abs(float(data[field])) * drawn) ** 2
        var[t] += float(np.sum((isp_rel * by_isp + kg_isp) ** 2) + np.sum((thrust_rel * by_thrust + kg_thrust) ** 2)) + own
    return np.sqrt(var)
