"""dv free, the reserves and the check's after-figures with performance tables: the falling Isp integrated.

Why: the reserves are flown last, from the lowest feed pressure (and Isp) the tanks reach, so holding them
back at one average exhaust velocity under-counts their propellant. Here dv free of an engine is

    dv free = ∫_0^x* ve(p(x)) / (m - x) dx

with x* the largest draw of that engine after which the reserves, each flown in the craft's order by
``blowdown.dv_draw`` from the state then, still leave every tank at or above its residual. The integral is
``blowdown.dv_over_draw`` (composite Gauss-Legendre), the same one dv available uses.

Finding x*: each tank's margin after the reserves is a smooth function of the draw, so the margins are
evaluated on a grid of draws (vectorised over states and grid points together), the bracket where the
least margin crosses zero is refined on a second grid, and two secant steps on that margin finish it.
The search runs only for an engine with a table or with a reserve flown by one; everything else keeps the
closed form of ``core.capability`` (constant-performance craft give exactly the figures they always had).
A feasible set narrower than one grid cell (1/32 of the usable draw) is not resolved: that needs reserves
of several engines drawing on one tank in opposite senses and is reported as reserves not met.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np

from . import blowdown as bd
from . import capability as cap

GRID = 33
"""Draws per state in each of the two grid passes (the bracket after them is 1/1024 of the usable draw)."""
SECANT_STEPS = 2


def integrated(model: bd.Model, e: int) -> bool:
    """The engine's exhaust velocity follows the feed pressure (a table over modelled blowdown tanks)."""
    return e in model.perf and model.pressurised(e)


def needs_integral(model: bd.Model, e: int) -> bool:
    """dv free of engine ``e`` depends on a falling Isp: its own, or that of an engine flying a reserve."""
    craft = model.craft
    return integrated(model, e) or any(integrated(model, craft.engine_index(r.engine)) for r in craft.reserves)


def fly_rows(model: bd.Model, mass, remaining, temps, burns: Sequence[tuple[str, float]]):
    """Fly burns (engine id, dv) in order from each row's state: (mass, remaining, draws per burn).

    A table engine's draw is ``blowdown.dv_draw`` (the falling Isp over the draw), a constant engine's the
    rocket equation. Rows are independent states (samples, grid points): shapes (K,), (K, tanks), (K, tanks)."""
    craft = model.craft
    m = np.array(mass, dtype=float, copy=True)
    r = np.array(remaining, dtype=float, copy=True)
    temps = np.broadcast_to(np.asarray(temps, dtype=float), r.shape)
    draws = []
    for engine_id, dv in burns:
        e = craft.engine_index(engine_id)
        dv = float(dv)
        if integrated(model, e):
            ve0 = bd_ve_now(model, e, r, temps)
            estimate = -m * np.expm1(-dv / ve0)
            x = bd.dv_draw(model, e, m, r, temps, dv, estimate)
        else:
            x = -m * np.expm1(-dv / craft.engines[e].ve)
        draw = x[:, None] * model.frac[e][None, :]
        r = r - draw
        m = m - x
        draws.append(draw)
    return m, r, draws


def bd_ve_now(model: bd.Model, e: int, remaining: np.ndarray, temps: np.ndarray) -> np.ndarray:
    """Exhaust velocity of engine ``e`` at each row's feed pressure (what a burn from there starts at)."""
    r0, tt, rho_l, p_vap = bd._state(model, remaining, temps)
    return model.ve(e, model.feed_pressure(e, r0, np.zeros(len(r0)), tt, rho_l, p_vap))


def _relevant(model: bd.Model, e: int) -> np.ndarray:
    """Tanks whose margin bounds dv free: fed by the engine or drawn by a reserve (others don't matter)."""
    craft = model.craft
    used = model.frac[e] > 0
    for r in craft.reserves:
        used = used | (model.frac[craft.engine_index(r.engine)] > 0)
    return used


def _least_margin(model: bd.Model, e: int, mass, remaining, temps, x) -> tuple[np.ndarray, np.ndarray]:
    """For states (S,) and draws x (S, K): each tank's margin after engine ``e`` draws x and the reserves
    are flown (S, K, tanks; +inf for tanks that don't matter), and the least of them (S, K)."""
    craft = model.craft
    s, k = x.shape
    m = (mass[:, None] - x).ravel()
    r = (remaining[:, None, :] - x[..., None] * model.frac[e]).reshape(s * k, -1)
    tt = np.repeat(temps, k, axis=0)
    _, r_after, _ = fly_rows(model, m, r, tt, [(res.engine, res.dv_m_s) for res in craft.reserves])
    margin = (r_after - craft.residuals()).reshape(s, k, -1)
    margin = np.where(_relevant(model, e), margin, np.inf)
    return margin, margin.min(axis=-1)


def free_draw(model: bd.Model, mass, remaining, temps, e: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Largest draw x* of engine ``e`` (kg, per state) that leaves every reserve flyable after it.

    Returns (x*, limiting tank index or -1, reserves met); x* is 0 where they are not met."""
    craft = model.craft
    mass = np.atleast_1d(np.asarray(mass, dtype=float))
    remaining = np.atleast_2d(np.asarray(remaining, dtype=float))
    temps = np.broadcast_to(np.asarray(temps, dtype=float), remaining.shape)
    n = len(mass)
    fed = model.frac[e] > 0
    spare = remaining - craft.residuals()
    avail = np.maximum(0.0, np.min(spare[:, fed] / model.frac[e][fed], axis=1))
    eps = cap.EPS_KG
    u = np.linspace(0.0, 1.0, GRID)
    rows = np.arange(n)

    x = avail[:, None] * u[None, :]
    margin, least = _least_margin(model, e, mass, remaining, temps, x)
    ok = least >= -eps
    met = ok.any(axis=1) & (mass > 0)
    j = GRID - 1 - np.argmax(ok[:, ::-1], axis=1)          # last feasible grid point
    done = j == GRID - 1                                  # the whole usable draw is free (no reserve binds)
    nxt = np.minimum(j + 1, GRID - 1)
    lo, hi = x[rows, j], x[rows, nxt]
    g_lo, g_hi = least[rows, j], least[rows, nxt]
    open_ = met & ~done
    if open_.any():  # refine the bracket on a second grid
        sel = np.flatnonzero(open_)
        xs = lo[sel, None] + (hi[sel] - lo[sel])[:, None] * u[None, :]
        _, least2 = _least_margin(model, e, mass[sel], remaining[sel], temps[sel], xs)
        ok2 = least2 >= -eps
        ok2[:, 0] = True  # the bracket's lower end was feasible
        j2 = np.minimum(GRID - 2, GRID - 1 - np.argmax(ok2[:, ::-1], axis=1))
        r2 = np.arange(len(sel))
        lo[sel], hi[sel] = xs[r2, j2], xs[r2, j2 + 1]
        g_lo[sel], g_hi[sel] = np.maximum(least2[r2, j2], 0.0), least2[r2, j2 + 1]
        for _ in range(SECANT_STEPS):  # regula falsi on the least margin, kept inside the bracket
            with np.errstate(divide="ignore", invalid="ignore"):
                t = np.clip(g_lo[sel] / (g_lo[sel] - g_hi[sel]), 0.0, 1.0)
            t = np.where(np.isfinite(t), t, 0.0)
            xm = lo[sel] + t * (hi[sel] - lo[sel])
            _, gm = _least_margin(model, e, mass[sel], remaining[sel], temps[sel], xm[:, None])
            gm = gm[:, 0]
            up = gm >= -eps
            lo[sel] = np.where(up, xm, lo[sel])
            g_lo[sel] = np.where(up, np.maximum(gm, 0.0), g_lo[sel])
            hi[sel] = np.where(up, hi[sel], xm)
            g_hi[sel] = np.where(up, g_hi[sel], gm)
    x_star = np.where(done, avail, lo)
    x_star = np.where(met, x_star, 0.0)
    final, _ = _least_margin(model, e, mass, remaining, temps, x_star[:, None])
    limiting = np.where(mass > 0, np.argmin(final[:, 0, :], axis=-1), -1)
    return x_star, limiting, met


def dv_of_draw(model: bd.Model, mass, remaining, temps, e: int, x) -> np.ndarray:
    """Delta-v of engine ``e`` drawing x kg from each state: the falling Isp integrated, or the rocket
    equation for a constant engine."""
    mass = np.atleast_1d(np.asarray(mass, dtype=float))
    x = np.broadcast_to(np.asarray(x, dtype=float), mass.shape)
    if integrated(model, e):
        return bd.dv_over_draw(model, e, mass, remaining, temps, x)
    with np.errstate(divide="ignore", invalid="ignore"):
        dv = model.craft.engines[e].ve * np.log(mass / (mass - x))
    return np.where((x > 0) & (mass - x > 0), dv, 0.0)


def dv_free_many(model: bd.Model, mass, remaining, temps, e: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """dv free of engine ``e`` per state (S,): (dv, limiting tank or -1, reserves met), as
    ``capability.dv_free_many`` but with the falling Isp integrated (module docstring)."""
    mass = np.atleast_1d(np.asarray(mass, dtype=float))
    remaining = np.atleast_2d(np.asarray(remaining, dtype=float))
    temps = np.broadcast_to(np.asarray(temps, dtype=float), remaining.shape)
    if not needs_integral(model, e):
        return cap.dv_free_many(model.craft, mass, remaining, e)
    x, limiting, met = free_draw(model, mass, remaining, temps, e)
    dv = dv_of_draw(model, mass, remaining, temps, e, x)
    return np.where(met, dv, 0.0), limiting, met


def dv_free(model: bd.Model, state: cap.State, temps, e: int) -> tuple[float, str | None, bool]:
    """Nominal dv free of engine ``e`` (as ``capability.dv_free``)."""
    dv, k, met = dv_free_many(model, np.array([state.mass_kg]), state.remaining_kg[None, :],
                              np.asarray(temps, dtype=float)[None, :], e)
    return float(dv[0]), cap._tank(model.craft, k[0]), bool(met[0])


def capability(model: bd.Model, craft_eq, state: cap.State, temps) -> list[cap.EngineCapability]:
    """``capability.capability`` for a craft with tables: dv available from ``craft_eq`` (its table engines at
    the exhaust velocity that reproduces the integral over the remaining propellant), dv free integrated."""
    out = []
    for i, eng in enumerate(model.craft.engines):
        avail, limiting = cap.dv_available(craft_eq, state, i)
        free, _, met = dv_free(model, state, temps, i)
        out.append(cap.EngineCapability(eng.id, avail, min(free, avail), limiting, met))
    return out


def dv_free_states(model: bd.Model, mass, remaining, temps, e: int) -> np.ndarray:
    """dv free capped by dv available, per state (the forecast's history after past events)."""
    mass = np.atleast_1d(np.asarray(mass, dtype=float))
    remaining = np.atleast_2d(np.asarray(remaining, dtype=float))
    temps = np.broadcast_to(np.asarray(temps, dtype=float), remaining.shape)
    free, _, _ = dv_free_many(model, mass, remaining, temps, e)
    fed = model.frac[e] > 0
    spare = remaining - model.craft.residuals()
    avail_x = np.maximum(0.0, np.min(spare[:, fed] / model.frac[e][fed], axis=1))
    return np.minimum(free, dv_of_draw(model, mass, remaining, temps, e, avail_x))


def reserve_held(model: bd.Model, state: cap.State, temps) -> np.ndarray:
    """Propellant (kg per tank) the reserves hold back: their draws flown last, from the state where the
    first reserve's engine has spent its dv free (at the lowest pressures the tanks reach); flown from now
    when the reserves can no longer be met."""
    craft = model.craft
    if not craft.reserves:
        return np.zeros(len(craft.tanks))
    temps = np.asarray(temps, dtype=float)[None, :]
    e = craft.engine_index(craft.reserves[0].engine)
    mass, rem = np.array([state.mass_kg]), state.remaining_kg[None, :]
    x, _, met = free_draw(model, mass, rem, temps, e)
    x = np.where(met, x, 0.0)
    _, _, draws = fly_rows(model, mass - x, rem - x[:, None] * model.frac[e], temps,
                           [(r.engine, r.dv_m_s) for r in craft.reserves])
    return np.sum(draws, axis=0)[0]


def flyer(model: bd.Model, temps):
    """``blowdown.flyer`` carrying the matching ``dv_free(state, engine)`` for ``capability.check``."""
    fly = bd.flyer(model, temps)
    temps = np.asarray(temps, dtype=float)

    def free(state: cap.State, e: int):
        return dv_free(model, state, temps, e)

    fly.dv_free = free
    return fly


def event_performance(model: bd.Model, flown: bd.Flown, is_burn: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per event, the Isp (s) and thrust (N) a table engine's draw was flown at, NaN for other events: the
    table at the mean of the firing's start and end feed pressures, and for a burn whose delta-v was
    integrated its effective Isp (the delta-v over ln(m0/m1), ``Flown.ve_event``). For the bookkeeping
    sigma (``core.booksigma``): an engine's Isp sigma is a larger share of a draw at low pressure."""
    n = len(flown.engine)
    isp, thrust = np.full(n, np.nan), np.full(n, np.nan)
    is_burn = np.asarray(is_burn, dtype=bool)
    for e in model.perf:
        sel = (flown.engine == e) & np.isfinite(flown.pressure_start) & np.isfinite(flown.pressure_end)
        if not sel.any():
            continue
        th, ip = model.performance(e, 0.5 * (flown.pressure_start[sel] + flown.pressure_end[sel]))
        isp[sel], thrust[sel] = ip, th
        whole = sel & flown.dependent & is_burn
        isp[whole] = flown.ve_event[whole] / (bd.G0 * model.cos[e])
    return isp, thrust
