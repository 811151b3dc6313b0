"""What the craft can still do: delta-v available and free per engine, and the check of a proposed burn.

The reserves are flown after a candidate burn in their listed order, each at the mass then on board.
For a burn of factor E = exp(-dv/ve) every tank's margin after the reserves is linear in E
(margin = alpha + beta*E), so the largest burn that keeps all margins non-negative has a closed form:
no iteration, exact, and it vectorises over Monte Carlo samples unchanged.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .craft import Craft

EPS_KG = 1e-9


@dataclass(frozen=True)
class State:
    """Mass on board and propellant remaining per tank (kg), in the craft's tank order."""

    mass_kg: float
    remaining_kg: np.ndarray


@dataclass(frozen=True)
class EngineCapability:
    engine: str
    dv_available_m_s: float
    dv_free_m_s: float
    limiting_tank: str | None
    reserves_met: bool


def usable(craft: Craft, state: State) -> np.ndarray:
    """Usable propellant per tank: remaining less residual, floored at zero."""
    return np.maximum(0.0, state.remaining_kg - craft.residuals())


def dv_available(craft: Craft, state: State, engine: int) -> tuple[float, str | None]:
    """Delta-v from all the propellant the engine can draw before one of its feeds runs dry."""
    frac = craft.feed_fractions()[engine]
    fed = frac > 0
    use = usable(craft, state)
    per_feed = use[fed] / frac[fed]
    k = int(np.argmin(per_feed))
    x = float(per_feed[k])
    m = state.mass_kg
    limiting = [t.id for t, f in zip(craft.tanks, fed) if f][k]
    if m <= 0 or m - x <= 0:
        return 0.0, limiting
    return float(craft.ve()[engine] * np.log(m / (m - x))), limiting


def reserve_draw_per_kg(craft: Craft, reserves=None) -> np.ndarray:
    """Propellant the reserves draw from each tank per kg of craft mass when they start (c_t).

    Reserve k at mass M uses M·(1-E_k)·prod_{j<k} E_j, drawn from its engine's tanks by the feed fractions.
    """
    reserves = craft.reserves if reserves is None else reserves
    frac = craft.feed_fractions()
    ve = craft.ve()
    c = np.zeros(len(craft.tanks))
    carried = 1.0
    for r in reserves:
        e = craft.engine_index(r.engine)
        step = np.exp(-r.dv_m_s / ve[e])
        c += frac[e] * carried * (1.0 - step)
        carried *= step
    return c


def dv_free(craft: Craft, state: State, engine: int) -> tuple[float, str | None, bool]:
    """Largest delta-v for ``engine`` now that still leaves every reserve flyable.

    Returns (dv, limiting tank, reserves met). When no burn of this engine leaves the reserves flyable
    the answer is 0 with reserves_met False.
    """
    m = state.mass_kg
    if m <= 0:
        return 0.0, None, False
    frac = craft.feed_fractions()[engine]
    spare = state.remaining_kg - craft.residuals()  # may be negative: already short
    c = reserve_draw_per_kg(craft)
    alpha = spare - m * frac
    beta = m * (frac - c)
    ids = craft.tank_ids
    with np.errstate(divide="ignore", invalid="ignore"):
        bound = -alpha / beta
    lower = beta > 0      # margin falls as the burn grows: an upper limit on dv (lower limit on E)
    upper = beta < 0      # margin rises as mass drops: a lower limit on dv
    flat = ~(lower | upper) & ((frac > 0) | (c > 0))  # tanks neither this engine nor a reserve uses don't matter
    if np.any(flat & (alpha < -EPS_KG)):
        return 0.0, ids[int(np.argmax(flat & (alpha < -EPS_KG)))], False
    e_min = float(np.max(bound[lower])) if lower.any() else 0.0
    e_max = float(np.min(bound[upper])) if upper.any() else 1.0
    e_max = min(e_max, 1.0)
    limiting = ids[int(np.flatnonzero(lower)[np.argmax(bound[lower])])] if lower.any() else None
    if e_min > e_max + 1e-12 or e_min > 1.0 + 1e-12:
        tank = limiting if e_min > 1.0 else ids[int(np.flatnonzero(upper)[np.argmin(bound[upper])])]
        return 0.0, tank, False
    e_min = max(e_min, 1e-300)
    ve = craft.ve()[engine]
    return float(max(0.0, -ve * np.log(min(e_min, 1.0)))), limiting, True


def capability(craft: Craft, state: State) -> list[EngineCapability]:
    out = []
    for i, eng in enumerate(craft.engines):
        avail, _ = dv_available(craft, state, i)
        free, limiting, met = dv_free(craft, state, i)
        out.append(EngineCapability(eng.id, avail, min(free, avail), limiting, met))
    return out


def fly(craft: Craft, state: State, burns: Sequence[tuple[str, float]]) -> tuple[State, list[np.ndarray]]:
    """Fly impulsive burns (engine id, dv) in order; returns the state after and each burn's draw per tank."""
    frac = craft.feed_fractions()
    ve = craft.ve()
    m = state.mass_kg
    remaining = state.remaining_kg.astype(float).copy()
    draws = []
    for engine_id, dv in burns:
        e = craft.engine_index(engine_id)
        p = m * (1.0 - np.exp(-dv / ve[e]))
        draw = p * frac[e]
        remaining -= draw
        m -= p
        draws.append(draw)
    return State(m, remaining), draws


@dataclass(frozen=True)
class CheckResult:
    engine: str
    dv_m_s: float
    feasible: bool
    propellant_kg: float
    propellant_by_tank: dict[str, float]
    dv_free_after_m_s: float
    limiting_tank: str | None
    margin_by_tank: dict[str, float]
    """Usable propellant left in each tank after commitments, the burn and every reserve (kg)."""
    commitments: tuple[tuple[str, float], ...]
    reason: str


def check(craft: Craft, state: State, engine_id: str, dv: float,
          commitments: Sequence[tuple[str, float]] = ()) -> CheckResult:
    """Fly the commitments, then the proposed burn, then the reserves; feasible if no tank goes short."""
    after_plans, _ = fly(craft, state, commitments)
    after_burn, draws = fly(craft, after_plans, [(engine_id, dv)])
    after_all, _ = fly(craft, after_burn, [(r.engine, r.dv_m_s) for r in craft.reserves])
    ids = craft.tank_ids
    margin = after_all.remaining_kg - craft.residuals()
    short_plans = after_plans.remaining_kg - craft.residuals() < -EPS_KG
    short_burn = after_burn.remaining_kg - craft.residuals() < -EPS_KG
    short_all = margin < -EPS_KG
    feasible = not short_all.any()
    worst = int(np.argmin(margin))
    if short_plans.any():
        reason = f"pending plans alone overdraw tank {ids[int(np.argmax(short_plans))]}"
    elif short_burn.any():
        reason = f"the burn overdraws tank {ids[int(np.argmax(short_burn))]}"
    elif short_all.any():
        reason = f"reserves no longer met: tank {ids[worst]} short by {-margin[worst]:.3f} kg"
    else:
        reason = f"reserves intact; tightest tank {ids[worst]} keeps {margin[worst]:.3f} kg"
    e = craft.engine_index(engine_id)
    free_after, limiting, _ = dv_free(craft, after_burn, e) if not short_burn.any() else (0.0, None, False)
    draw = draws[0]
    return CheckResult(
        engine=engine_id, dv_m_s=dv, feasible=feasible, propellant_kg=float(draw.sum()),
        propellant_by_tank={t: float(x) for t, x in zip(ids, draw) if x > 0},
        dv_free_after_m_s=float(free_after) if feasible else 0.0,
        limiting_tank=ids[worst], margin_by_tank={t: float(x) for t, x in zip(ids, margin)},
        commitments=tuple(commitments), reason=reason,
    )
