"""Blowdown tanks and engine performance against feed pressure.

Why: in a blowdown system the feed pressure falls as propellant leaves (the pressurant, its mass fixed at
loading, expands into the ullage) and thrust, mass flow and Isp fall with it; a late-life firing booked at
the loading performance overstates what it drew several times.

Tank (the PVT relations of ``core.gauging`` run forwards): V_u = V - r/rho_l(T); rho_g = m_g/V_u;
p = Z(rho_g, T_g)·rho_g·R·T_g/M + p_vap(T), Z tabulated from a real-gas equation of state by a shell. Between
entries the gas is at the tank temperature (the latest gauge reading of the tank, else the loading
temperature); during one firing it expands polytropically with the tank's ``expansion`` n:
T_g = T·(V_u,start/V_u)^(n-1) (n = 1 isothermal). An engine's feed pressure is the mean of its tanks'
pressures weighted by its feed shares.

A firing by duration solves dx/dt = F(p)/(Isp(p)·g0), a burn by delta-v dx/d(dv) = (m0 - x)/ve(p): the
classic Runge-Kutta scheme over a number of steps that grows with the draw, vectorised over entries. The
draws of the whole history are found together by fixed-point passes: each pass is one prefix-scan replay
(``replay.replay_affine``) whose states feed the next pass's integrations. A draw depends on earlier draws
as a Volterra equation does, so the passes converge like (kS)^n/n!: ten to fifteen passes, and a pass only
re-integrates the entries whose starting state moved.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import cached_property
from typing import Callable, Sequence

import numpy as np

from . import liquids
from .craft import G0, Craft, Engine, GasTable, Tank
from .entries import Entry
from .fluids import canonical_gas, is_gas_name
from .replay import STEP_DRAW, STEP_MASS, STEP_REBASE, STEP_SCALE, Replay, Steps, _affine, replay_affine, steps_from_events
from .replay import pulse_duration_scale

R_GAS = 8.314462618
"""Molar gas constant, J/(mol·K), exact since the 2019 SI redefinition (N_A·k)."""
IDEAL_MOLAR_MASS = {"helium": 4.002602e-3, "nitrogen": 28.0134e-3, "argon": 39.948e-3,
                    "krypton": 83.798e-3, "xenon": 131.293e-3}
"""kg/mol, IUPAC standard atomic weights (from memory); only for the ideal-gas fallback."""
STEP_SHARE = 0.01
"""Largest share of the fed tanks' load drawn in one Runge-Kutta step (1e-6 against solve_ivp, tests)."""
MAX_STEPS = 1024
MAX_PASSES = 80
TOL_REL = 1e-11
"""Fixed-point passes stop when no draw moves by more than this share of the largest (kg/kg)."""


class TankModel:
    """One blowdown tank as arrays: volume, pressurant mass, Z table, liquid correlations."""

    def __init__(self, tank: Tank):
        self.tank = tank
        self.volume = float(tank.volume_m3)
        self.expansion = float(tank.expansion)
        self.t_range = liquids.valid_range_k(tank.fluid)
        g = tank.gas_table if tank.gas_table is not None else ideal_table(tank)
        self.table = g
        self.gas_kg = g.gas_kg
        self.z = np.asarray(g.z, dtype=float)
        self.rm = R_GAS / g.molar_mass_kg_mol

    def liquid(self, temperature_k) -> tuple[np.ndarray, np.ndarray]:
        """Liquid density and vapour pressure at the tank temperature (clipped to the correlation's range)."""
        t = np.clip(np.asarray(temperature_k, dtype=float), *self.t_range)
        return (np.asarray(liquids.liquid_density(self.tank.fluid, t), dtype=float),
                np.asarray(liquids.vapour_pressure(self.tank.fluid, t), dtype=float))

    def compressibility(self, rho: np.ndarray, t_gas: np.ndarray) -> np.ndarray:
        """Z by bilinear interpolation on the uniform grids (clamped at their edges)."""
        g, z = self.table, self.z
        nt, nr = z.shape
        fr = np.clip((rho - g.density0) / g.density_step, 0.0, nr - 1.000001)
        ft = np.clip((t_gas - g.temperature0_k) / g.temperature_step_k, 0.0, nt - 1.000001)
        i, j = fr.astype(np.intp), ft.astype(np.intp)
        wr, wt = fr - i, ft - j
        lo = z[j, i] + wr * (z[j, i + 1] - z[j, i])
        hi = z[j + 1, i] + wr * (z[j + 1, i + 1] - z[j + 1, i])
        return lo + wt * (hi - lo)

    def rows(self, temperature_k) -> tuple[np.ndarray, np.ndarray]:
        """Z against density at fixed temperatures (K,): an isothermal firing's curve, interpolated in
        temperature once so each step only interpolates in density. Returned as (flattened rows of the
        distinct temperatures, each entry's offset into them): a ledger has few distinct temperatures."""
        g, z = self.table, self.z
        uniq, inverse = distinct(np.asarray(temperature_k, dtype=float).ravel())
        ft = np.clip((uniq - g.temperature0_k) / g.temperature_step_k, 0.0, z.shape[0] - 1.000001)
        j = ft.astype(np.intp)
        rows = z[j] + (ft - j)[:, None] * (z[j + 1] - z[j])
        return rows.ravel(), inverse.ravel() * z.shape[1]

    def compressibility_at(self, rho: np.ndarray, rows: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
        g = self.table
        flat, offset = rows
        fr = (rho - g.density0) / g.density_step
        np.clip(fr, 0.0, self.z.shape[1] - 1.000001, out=fr)
        i = fr.astype(np.intp)
        fr -= i
        i += offset
        lo = flat[i]
        return lo + fr * (flat[i + 1] - lo)

    def ullage(self, remaining, rho_l) -> np.ndarray:
        return np.maximum(self.volume - np.asarray(remaining, dtype=float) / rho_l, 1e-9 * self.volume)

    def pressure(self, remaining, temperature_k, rho_l=None, p_vap=None, ullage_start=None) -> np.ndarray:
        """Tank pressure (Pa) with ``remaining`` kg of liquid; polytropic from ``ullage_start`` if given."""
        t = np.asarray(temperature_k, dtype=float)
        if rho_l is None:
            rho_l, p_vap = self.liquid(t)
        vu = self.ullage(remaining, rho_l)
        t_gas = t if ullage_start is None or self.expansion == 1.0 else t * (ullage_start / vu) ** (self.expansion - 1.0)
        rho = self.gas_kg / vu
        return self.compressibility(rho, t_gas) * rho * self.rm * t_gas + p_vap


def distinct(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted distinct values of a 1-D array and each element's index into them (``np.unique`` with
    ``return_inverse``, without the masked-array module numpy 2 imports for it: about 10 ms of a status)."""
    if len(values) == 0 or values[0] == values.min() == values.max():  # one temperature: the common case
        return values[:1].copy(), np.zeros(len(values), dtype=np.intp)
    order = np.argsort(values, kind="stable")
    ranked = values[order]
    first = np.concatenate(([True], ranked[1:] != ranked[:-1]))
    inverse = np.empty(len(values), dtype=np.intp)
    inverse[order] = np.cumsum(first) - 1
    return ranked[first], inverse


def ideal_table(tank: Tank) -> GasTable:
    """Z = 1 with the pressurant mass of an ideal gas: a stored craft from before the real-gas table."""
    pr = tank.pressurant
    m_mol = IDEAL_MOLAR_MASS[canonical_gas(pr.gas)]
    t0 = min(max(pr.temperature_k, liquids.valid_range_k(tank.fluid)[0]), liquids.valid_range_k(tank.fluid)[1])
    vu0 = tank.volume_m3 - tank.load_kg / float(liquids.liquid_density(tank.fluid, t0))
    rho0 = (pr.pressure_pa - float(liquids.vapour_pressure(tank.fluid, t0))) * m_mol / (R_GAS * pr.temperature_k)
    return GasTable(pr.gas, rho0 * vu0, m_mol, 0.0, 1.0, 0.0, 1000.0, ((1.0, 1.0), (1.0, 1.0)), ideal=True)


def grids(tank: Tank, gas_kg: float, n_density: int = 48, temperatures=(40.0, 400.0, 10.0)) -> tuple[np.ndarray, np.ndarray]:
    """The uniform density and temperature grids a shell tabulates Z on for this tank: from the empty
    tank's gas density (less a margin) to 20 % above the loading one; 40-400 K covers adiabatic expansion."""
    vu0 = tank.volume_m3 - tank.load_kg / float(liquids.liquid_density(
        tank.fluid, np.clip(tank.pressurant.temperature_k, *liquids.valid_range_k(tank.fluid))))
    lo, hi = 0.5 * gas_kg / tank.volume_m3, 1.2 * gas_kg / vu0
    t0, t1, dt = temperatures
    return np.linspace(lo, hi, n_density), np.arange(t0, t1 + 0.5 * dt, dt)


def initial_ullage(tank: Tank) -> float:
    t0 = np.clip(tank.pressurant.temperature_k, *liquids.valid_range_k(tank.fluid))
    return tank.volume_m3 - tank.load_kg / float(liquids.liquid_density(tank.fluid, t0))


def modelled(tank: Tank) -> bool:
    """A blowdown tank of a liquid with correlations and a known pressurant: its pressure can be predicted."""
    if not tank.blowdown:
        return False
    try:
        if is_gas_name(tank.fluid):
            return False
        if tank.gas_table is None:
            IDEAL_MOLAR_MASS[canonical_gas(tank.pressurant.gas)]
    except (ValueError, KeyError):
        return False
    return True


class Model:
    """The blowdown maths of one craft: tank models, performance tables, feed shares."""

    def __init__(self, craft: Craft):
        self.craft = craft
        self.frac = craft.feed_fractions()
        self.tanks = {i: TankModel(t) for i, t in enumerate(craft.tanks) if modelled(t)}
        self.ideal = [craft.tanks[i].id for i, m in self.tanks.items() if m.table.ideal]
        self.perf = {}
        for e, eng in enumerate(craft.engines):
            if eng.performance is not None:
                pf = eng.performance
                self.perf[e] = (np.asarray(pf.pressure_pa), np.asarray(pf.thrust_n), np.asarray(pf.isp_s))
        self.cos = np.array([math.cos(math.radians(e.cant_deg)) for e in craft.engines])

    def fed(self, e: int) -> list[int]:
        return self._fed[e]

    @cached_property
    def _fed(self) -> list[list[int]]:
        return [[int(t) for t in np.flatnonzero(row > 0)] for row in self.frac]

    def pressurised(self, e: int) -> bool:
        """Every tank the engine draws from is a blowdown tank (its feed pressure is known)."""
        return all(t in self.tanks for t in self.fed(e))

    @cached_property
    def table_engines(self) -> np.ndarray:
        return np.array([e in self.perf for e in range(len(self.craft.engines))], dtype=bool)

    def liquid(self, temps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Liquid density and vapour pressure (.., tanks) at tank temperatures (.., tanks); 1 and 0 elsewhere."""
        rho, pv = np.ones(temps.shape), np.zeros(temps.shape)
        for t, m in self.tanks.items():
            rho[..., t], pv[..., t] = m.liquid(temps[..., t])
        return rho, pv

    def tank_pressures(self, remaining: np.ndarray, temps: np.ndarray) -> np.ndarray:
        """Pressure of each blowdown tank (.., tanks), NaN for the others."""
        out = np.full(np.shape(remaining), np.nan)
        for t, m in self.tanks.items():
            out[..., t] = m.pressure(remaining[..., t], temps[..., t])
        return out

    def feed_pressure(self, e: int, r0: np.ndarray, x: np.ndarray, temps: np.ndarray, rho_l: np.ndarray,
                      p_vap: np.ndarray, rows: dict | None = None) -> np.ndarray:
        """Feed pressure of engine ``e`` after drawing x kg from states r0 (K, tanks) at temps (K, tanks);
        ``rows`` (tank -> TankModel.rows at these temperatures) speeds up isothermal tanks."""
        p = 0.0
        for t in self.fed(e):
            m, f = self.tanks[t], self.frac[e, t]
            if rows is not None and t in rows:
                vu = m.ullage(r0[:, t] - f * x, rho_l[:, t])
                rho = m.gas_kg / vu
                p = p + f * (m.compressibility_at(rho, rows[t]) * rho * m.rm * temps[:, t] + p_vap[:, t])
                continue
            start = m.ullage(r0[:, t], rho_l[:, t]) if m.expansion != 1.0 else None
            p = p + f * m.pressure(r0[:, t] - f * x, temps[:, t], rho_l[:, t], p_vap[:, t], start)
        return p

    def performance(self, e: int, p) -> tuple[np.ndarray, np.ndarray]:
        """(thrust N, Isp s) at feed pressure p: the table, or the engine's constants."""
        if e in self.perf:
            pp, ff, ii = self.perf[e]
            return np.interp(p, pp, ff), np.interp(p, pp, ii)
        eng = self.craft.engines[e]
        return np.full(np.shape(p), eng.thrust_n), np.full(np.shape(p), eng.isp_s)

    def flow(self, e: int, p) -> np.ndarray:
        thrust, isp = self.performance(e, p)
        return thrust / (isp * G0)

    def ve(self, e: int, p) -> np.ndarray:
        return self.performance(e, p)[1] * G0 * self.cos[e]


# --- integration --------------------------------------------------------------------------------

def step_counts(model: Model, e: int, draw_estimate: np.ndarray) -> np.ndarray:
    """Runge-Kutta steps per entry: a power of two, each step drawing at most STEP_SHARE of the fed load."""
    load = sum(model.craft.tanks[t].load_kg for t in model.fed(e)) or 1.0
    n = np.ceil(np.abs(draw_estimate) / (STEP_SHARE * load))
    n = np.exp2(np.ceil(np.log2(np.maximum(n, 1.0))))
    return np.minimum(n, MAX_STEPS).astype(np.intp)


def rk4(bind: Callable[[np.ndarray], Callable[[np.ndarray], np.ndarray]], span: np.ndarray,
        steps: np.ndarray) -> np.ndarray:
    """x(span) of dx/dτ = rate(x) from x = 0, per entry; entries with equal step counts together
    (``bind(entries)`` gives the rate of those entries, their inputs sliced once)."""
    x = np.zeros(len(span))
    for n in np.flatnonzero(np.bincount(steps)).tolist():  # the distinct step counts (powers of two)
        idx = np.flatnonzero(steps == n)
        h = span[idx] / n
        xi = np.zeros(len(idx))
        rate = bind(idx)
        for _ in range(n):
            k1 = rate(xi)
            k2 = rate(xi + 0.5 * h * k1)
            k3 = rate(xi + 0.5 * h * k2)
            k4 = rate(xi + h * k3)
            xi = xi + h / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
        x[idx] = xi
    return x


def _state(model: Model, r0, temps):
    r0 = np.atleast_2d(np.asarray(r0, dtype=float))
    temps = np.broadcast_to(np.asarray(temps, dtype=float), r0.shape)
    rho_l, p_vap = model.liquid(temps)
    return r0, temps, rho_l, p_vap


def _prepared(model: Model, e: int, r0, temps, props):
    """States with their liquid properties and Z rows; ``props`` = (rho_l, p_vap, rows) already computed
    for these entries (the replay computes them once for the whole history, not once per pass)."""
    if props is None:
        r0, temps, rho_l, p_vap = _state(model, r0, temps)
        return r0, temps, rho_l, p_vap, _rows(model, e, temps)
    return np.asarray(r0, dtype=float), np.asarray(temps, dtype=float), *props


def _rows_by_engine(model: Model, engines: Sequence[int], temps: np.ndarray) -> dict:
    """``_rows`` for several engines, each tank's rows computed once however many engines it feeds."""
    per_tank: dict = {}
    out = {}
    for e in engines:
        out[e] = {}
        for t in model.fed(e):
            if model.tanks[t].expansion == 1.0:
                if t not in per_tank:
                    per_tank[t] = model.tanks[t].rows(temps[:, t])
                out[e][t] = per_tank[t]
    return out


def _rows(model: Model, e: int, temps: np.ndarray) -> dict:
    """Z rows at each entry's temperature for the engine's isothermal tanks."""
    return {t: model.tanks[t].rows(temps[:, t]) for t in model.fed(e) if model.tanks[t].expansion == 1.0}


def timed_draw(model: Model, e: int, r0, temps, on_time, estimate=None, props=None) -> np.ndarray:
    """Propellant (kg) engine ``e`` draws firing ``on_time`` seconds from tank states r0 (K, tanks) at
    temperatures temps (K, tanks), the mass flow following the falling feed pressure. Pulse-mode firings
    call it with their total on-time."""
    r0, temps, rho_l, p_vap, rows = _prepared(model, e, r0, temps, props)
    on_time = np.broadcast_to(np.asarray(on_time, dtype=float), (len(r0),))

    def bind(idx):
        a, b, c, d = r0[idx], temps[idx], rho_l[idx], p_vap[idx]
        sub = {t: (r[0], r[1][idx]) for t, r in rows.items()}
        return lambda x: model.flow(e, model.feed_pressure(e, a, x, b, c, d, sub))

    if estimate is None:
        estimate = bind(np.arange(len(r0)))(np.zeros(len(r0))) * on_time
    return rk4(bind, on_time, step_counts(model, e, estimate))


def dv_draw(model: Model, e: int, m0, r0, temps, dv, estimate=None, props=None) -> np.ndarray:
    """Propellant (kg) a burn of ``dv`` m/s by engine ``e`` draws from mass m0 and tank states r0: the
    rocket equation with the exhaust velocity following the feed pressure over the draw."""
    r0, temps, rho_l, p_vap, rows = _prepared(model, e, r0, temps, props)
    m0 = np.broadcast_to(np.asarray(m0, dtype=float), (len(r0),))
    dv = np.broadcast_to(np.asarray(dv, dtype=float), (len(r0),))

    def bind(idx):
        a, b, c, d = r0[idx], temps[idx], rho_l[idx], p_vap[idx]
        sub = {t: (r[0], r[1][idx]) for t, r in rows.items()}
        m = m0[idx]
        return lambda x: (m - x) / model.ve(e, model.feed_pressure(e, a, x, b, c, d, sub))

    if estimate is None:
        rate0 = bind(np.arange(len(r0)))(np.zeros(len(r0)))  # dx/d(dv) at the start: m0 / ve
        estimate = -m0 * np.expm1(-dv * rate0 / m0)  # the rocket equation at the starting ve
    return rk4(bind, dv, step_counts(model, e, estimate))


GL3 = (np.array([-math.sqrt(0.6), 0.0, math.sqrt(0.6)]), np.array([5.0, 8.0, 5.0]) / 9.0)


def dv_over_draw(model: Model, e: int, mass, r0, temps, draw, panels: int = 64) -> np.ndarray:
    """Delta-v from drawing ``draw`` kg (per sample) from mass and tank states: ∫ ve(p(x))/(m - x) dx by
    composite 3-point Gauss-Legendre quadrature (the falling Isp under the integral, not one ve)."""
    r0, temps, rho_l, p_vap = _state(model, r0, temps)
    mass = np.broadcast_to(np.asarray(mass, dtype=float), (len(r0),))
    draw = np.broadcast_to(np.asarray(draw, dtype=float), (len(r0),))
    nodes, weights = GL3
    u = (np.arange(panels)[:, None] + 0.5 * (nodes[None, :] + 1.0)).ravel() / panels  # (P*3,) in (0, 1)
    w = np.tile(weights, panels) / (2.0 * panels)
    k = len(r0)
    x = draw[:, None] * u[None, :]                       # (K, P*3)
    rep = lambda a: np.repeat(a, len(u), axis=0)  # noqa: E731
    rows = {t: (flat, rep(offset)) for t, (flat, offset) in _rows(model, e, temps).items()}
    p = model.feed_pressure(e, rep(r0), x.ravel(), rep(temps), rep(rho_l), rep(p_vap), rows).reshape(k, len(u))
    with np.errstate(divide="ignore", invalid="ignore"):
        integrand = model.ve(e, p) / (mass[:, None] - x)
        return np.where(draw > 0, draw * (integrand @ w), 0.0)


# --- the replay ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class Flown:
    """Per event, what the blowdown replay adds to the affine one."""

    pressure_start: np.ndarray   # (n,) engine feed pressure at the start of the firing (NaN if not known)
    pressure_end: np.ndarray     # (n,) at its end (polytropic during the firing)
    ve_event: np.ndarray         # (n,) effective exhaust velocity each burn's delta-v is counted at
    flow_event: np.ndarray       # (n,) effective mass flow of firings by duration (NaN otherwise)
    dependent: np.ndarray        # (n,) bool: the draw came from integrating a performance table
    engine: np.ndarray           # (n,) engine index of each event (-1 for mass changes and re-baselines)
    temperatures: np.ndarray     # (n, tanks) tank temperature at each event
    passes: int


def model_flow0(model: Model, engines: np.ndarray) -> np.ndarray:
    """Each engine's mass flow at loading (what a zero-length firing is counted at)."""
    return model.craft.mass_flows()[engines]


def event_temperatures(craft: Craft, ats: np.ndarray, readings: Sequence[tuple[int, float, float]]) -> np.ndarray:
    """(n, tanks) tank temperature at each event time: the latest reading (tank index, at, K) at or
    before it, else the pressurant's loading temperature (else 293.15 K for tanks without one)."""
    ats = np.asarray(ats, dtype=float)
    out = np.empty((len(ats), len(craft.tanks)))
    for t, tank in enumerate(craft.tanks):
        base = tank.pressurant.temperature_k if tank.pressurant is not None else 293.15
        mine = sorted((at, k) for tt, at, k in readings if tt == t)
        if not mine:
            out[:, t] = base
            continue
        times = np.array([m[0] for m in mine])
        values = np.array([base] + [m[1] for m in mine])
        out[:, t] = values[np.searchsorted(times, ats, side="right")]
    return out


def _column(events: Sequence[Entry], key: str) -> np.ndarray:
    return np.fromiter((np.nan if (v := ev.data.get(key)) is None else v for ev in events), dtype=float,
                       count=len(events))


def replay_blowdown(craft: Craft, model: Model, events: Sequence[Entry], temps: np.ndarray,
                    steps: Steps | None = None) -> tuple[Replay, Flown]:
    """Replay with table engines' draws integrated against the falling feed pressure (module docstring).

    Engines with constant performance keep their affine steps; a table engine's propellant-given draws
    stay as given; its duration firings and delta-v burns are integrated."""
    steps = steps if steps is not None else steps_from_events(craft, events)
    n = len(steps.kind)
    ve0 = craft.ve()
    a, b = _affine(steps, ve0)
    eng = steps.engine
    engine_ok = eng >= 0
    dep = engine_ok & model.table_engines[np.maximum(eng, 0)] & ((steps.kind == STEP_DRAW) | (steps.kind == STEP_SCALE))
    duration = np.full(n, np.nan)
    maybe = np.flatnonzero(dep & (steps.kind == STEP_DRAW))  # only these can be timed firings of a table engine
    picked = [events[k] for k in maybe.tolist()]
    duration[maybe] = _column(picked, "duration")
    pulse_scale = pulse_duration_scale(craft, [ev.data for ev in picked], eng[maybe])
    if pulse_scale is not None:  # impulse-bit pulse trains: their steady-state equivalent on-time
        duration[maybe] = duration[maybe] * pulse_scale
    timed = dep & (steps.kind == STEP_DRAW) & ~np.isnan(duration)
    bydv = dep & (steps.kind == STEP_SCALE)
    dep = timed | bydv
    ve_event = ve0[np.maximum(eng, 0)].copy()
    flow_event = np.full(n, np.nan)
    x = np.where(timed, steps.amount, 0.0)
    last_r = np.full((n, len(craft.tanks)), np.nan)
    last_m = np.full(n, np.nan)
    passes = 0
    rep = replay_affine(craft, steps, a, b, ve_event)
    by_engine = [(e, np.flatnonzero(timed & (eng == e)), np.flatnonzero(bydv & (eng == e))) for e in model.perf]
    rho_all, pv_all = model.liquid(temps) if dep.any() else (None, None)
    rows_all = _rows_by_engine(model, list(model.perf), temps) if dep.any() else {}

    direction = _one_direction(model, steps) if dep.any() else None
    rel = None

    def props(e, sel):
        return rho_all[sel], pv_all[sel], {t: (flat, off[sel]) for t, (flat, off) in rows_all[e].items()}

    while dep.any() and passes < MAX_PASSES:
        passes += 1
        r_before = np.vstack([craft.loads()[None, :], rep.remaining[:-1]])
        m_before = rep.mass_before
        new_x = x.copy()
        # an entry is integrated again only when its starting state moved (whole-array tests: cheaper than
        # the same test on each engine's slice)
        moved = np.any(np.abs(r_before - last_r) > 1e-13 * (1.0 + np.abs(r_before)), axis=1)
        moved |= ~(np.abs(m_before - last_m) <= 1e-13 * m_before)
        for e, ti, di in by_engine:
            for sel, is_dv in ((ti, False), (di, True)):
                sel = sel[moved[sel]]
                if not sel.size:
                    continue
                if is_dv:
                    est = np.where(x[sel] > 0, x[sel], (1.0 - a[sel]) * m_before[sel])
                    new_x[sel] = dv_draw(model, e, m_before[sel], r_before[sel], temps[sel], steps.amount[sel], est,
                                         props(e, sel))
                else:
                    new_x[sel] = timed_draw(model, e, r_before[sel], temps[sel], duration[sel], x[sel],
                                            props(e, sel))
        last_r = np.where(moved[:, None], r_before, last_r)
        last_m = np.where(moved, m_before, last_m)
        change = np.max(np.abs(new_x - x)[dep])
        done = change <= TOL_REL * max(1.0, float(np.max(np.abs(new_x[dep]))))
        if not done and direction is not None and passes > 1:  # slopes at states the first pass corrected
            if rel is None:
                rel = _slopes(model, direction, dep, bydv, eng, m_before, r_before, temps, steps.amount, rho_all,
                              pv_all, rows_all)
            new_x = _newton(x, new_x, dep, rel)
        x = new_x
        a[dep], b[dep] = 1.0, -x[dep]
        with np.errstate(divide="ignore", invalid="ignore"):
            ve_dv = steps.amount[bydv] / np.log(m_before[bydv] / (m_before[bydv] - x[bydv]))
        ve_event[bydv] = np.where(np.isfinite(ve_dv) & (x[bydv] > 0), ve_dv, ve0[eng[bydv]])
        rep = replay_affine(craft, steps, a, b, ve_event)
        if done:
            break
    with np.errstate(divide="ignore", invalid="ignore"):
        flow_event[timed] = np.where(duration[timed] > 0, x[timed] / duration[timed], model_flow0(model, eng[timed]))
    p_start, p_end = np.full(n, np.nan), np.full(n, np.nan)
    r_before = np.vstack([craft.loads()[None, :], rep.remaining[:-1]]) if n else np.empty((0, len(craft.tanks)))
    timed_burn = timed & steps.is_burn
    if timed_burn.any():  # a burn by duration delivers the falling ve integrated over its draw
        dv = rep.dv.copy()
        for e, ti, _ in by_engine:
            sel = ti[steps.is_burn[ti]]
            panels = step_counts(model, e, x[sel]) if sel.size else sel
            for n_panels in np.flatnonzero(np.bincount(panels)).tolist():  # a Gauss panel per Runge-Kutta step
                part = sel[panels == n_panels]
                dv[part] = dv_over_draw(model, e, rep.mass_before[part], r_before[part], temps[part], x[part],
                                        panels=int(n_panels))
        if steps.isp_factor is not None:  # pulse trains deliver the pulse-mode Isp, as in replay_affine
            dv[timed_burn] = dv[timed_burn] * steps.isp_factor[timed_burn]
        with np.errstate(divide="ignore", invalid="ignore"):
            ve_t = dv[timed_burn] / np.log(rep.mass_before[timed_burn] / rep.mass_after[timed_burn])
        ve_event[timed_burn] = np.where(np.isfinite(ve_t) & (x[timed_burn] > 0), ve_t, ve0[eng[timed_burn]])
        rep = replace(rep, dv=dv)
    for e in range(len(craft.engines)):
        sel = np.flatnonzero(engine_ok & (eng == e) & (steps.kind != STEP_MASS) & (steps.kind != STEP_REBASE))
        if not sel.size or not model.pressurised(e):
            continue
        if rho_all is not None:  # liquid properties and Z rows of the whole history, computed once above
            r0, tt, rho_l, p_vap = r_before[sel], temps[sel], rho_all[sel], pv_all[sel]
            rows = {t: (flat, off[sel]) for t, (flat, off) in
                    (rows_all[e] if e in rows_all else _rows_by_engine(model, [e], temps)[e]).items()}
        else:
            r0, tt, rho_l, p_vap = _state(model, r_before[sel], temps[sel])
            rows = _rows(model, e, tt)  # isothermal tanks; polytropic ones end the firing at their gas temperature
        p_start[sel] = model.feed_pressure(e, r0, np.zeros(len(sel)), tt, rho_l, p_vap, rows)
        p_end[sel] = model.feed_pressure(e, r0, rep.propellant[sel], tt, rho_l, p_vap, rows)
    return rep, Flown(p_start, p_end, ve_event, flow_event, dep, eng, temps, passes)


def _one_direction(model: Model, steps: Steps) -> np.ndarray | None:
    """The feed row every table engine draws along, when they share one and no re-baseline resets a tank:
    then an earlier draw moves every later entry's state along that one line, and ``_newton`` applies."""
    rows = [model.frac[e] for e in model.perf]
    if not rows or np.any(steps.kind == STEP_REBASE) or any(not np.array_equal(r, rows[0]) for r in rows[1:]):
        return None
    return np.asarray(rows[0], dtype=float)


def _slopes(model: Model, direction: np.ndarray, dep: np.ndarray, bydv: np.ndarray, eng: np.ndarray,
            m_before: np.ndarray, r_before: np.ndarray, temps: np.ndarray, amount: np.ndarray,
            rho_all: np.ndarray, pv_all: np.ndarray, rows_all: dict) -> np.ndarray:
    """Per entry, d ln(x_k)/dc_k: how its draw changes (relatively) with extra propellant c_k drawn before it
    along the shared feed row, by a finite difference of the draw's first-order form (flow, or the rocket
    equation at ve, at the starting pressure); 0 for entries that are not integrated."""
    rel = np.zeros(len(dep))
    for e in model.perf:
        if not model.pressurised(e):
            continue
        sel = np.flatnonzero(dep & (eng == e))
        if not sel.size:
            continue
        r0, tt, rho, pv = r_before[sel], temps[sel], rho_all[sel], pv_all[sel]
        rows = {t: (flat, off[sel]) for t, (flat, off) in rows_all[e].items()}
        eps = 1e-6 * max(1.0, float(np.max(np.abs(direction * r0))))
        zero = np.zeros(len(sel))
        p0 = model.feed_pressure(e, r0, zero, tt, rho, pv, rows)  # at the start of the firing
        p1 = model.feed_pressure(e, r0 - eps * direction, zero, tt, rho, pv, rows)
        with np.errstate(divide="ignore", invalid="ignore"):
            g_t = (model.flow(e, p1) / model.flow(e, p0) - 1.0) / eps
            m0 = m_before[sel]
            x0 = -m0 * np.expm1(-amount[sel] / model.ve(e, p0))
            x1 = -(m0 - eps) * np.expm1(-amount[sel] / model.ve(e, p1))
            g_v = (x1 / x0 - 1.0) / eps
        g = np.where(bydv[sel], g_v, g_t)
        rel[sel] = np.where(np.isfinite(g), g, 0.0)
    return rel


def _newton(x: np.ndarray, fx: np.ndarray, dep: np.ndarray, rel: np.ndarray) -> np.ndarray:
    """The next iterate of the fixed point x = F(x) by a Newton step instead of x = F(x).

    Why: a plain pass only carries a change one dependency further, so its error falls by a constant factor
    per pass (about 25 on a late-life blowdown history: eight passes). Here each draw k depends on the extra
    propellant c_k drawn before it (along the shared feed row) with slope h_k = dx_k/dc_k = x_k·rel_k
    (``_slopes``, taken once: the slope need only be close, the pass after checks F(x) itself). The
    correction δ solves δ_k = d_k + h_k·c_k with c_{k+1} = c_k + δ_k and d = F(x) - x: an affine recurrence,
    one prefix scan (``replay.mass_scan``). Other draws (constant engines' burns scaling with the mass) are
    left to the following passes, as before."""
    from .replay import mass_scan  # noqa: PLC0415 - replay is imported above; kept beside its one use

    h = fx * rel
    d = np.where(dep, fx - x, 0.0)
    if not np.all(1.0 + h > 0.0):
        return fx
    c_after = mass_scan(0.0, 1.0 + h, d)
    c_before = np.concatenate(([0.0], c_after[:-1]))
    out = x + d + h * c_before
    return np.where(dep & np.isfinite(out), out, fx)


# --- capability and the equivalent constant-performance ledger ---------------------------------

def effective_ve(model: Model, mass: float, remaining: np.ndarray, temps: np.ndarray) -> np.ndarray:
    """Per engine, the exhaust velocity the remaining usable propellant flies at on average: delta-v
    available (the falling Isp integrated over the draw) over ln(m/(m - draw)). Constant engines: their ve."""
    craft = model.craft
    out = craft.ve().copy()
    residuals = craft.residuals()
    for e in model.perf:
        if not model.pressurised(e):
            continue
        frac = model.frac[e]
        fed = frac > 0
        draw = max(0.0, float(np.min((remaining - residuals)[fed] / frac[fed])))
        if draw <= 0 or mass - draw <= 0:
            r0, tt, rho_l, p_vap = _state(model, remaining[None, :], temps[None, :])
            out[e] = float(model.ve(e, model.feed_pressure(e, r0, np.zeros(1), tt, rho_l, p_vap))[0])
            continue
        dv = float(dv_over_draw(model, e, mass, remaining[None, :], temps[None, :], draw)[0])
        out[e] = dv / math.log(mass / (mass - draw))
    return out


def equivalent_craft(craft: Craft, model: Model, ve_now: np.ndarray) -> Craft:
    """The craft with each table engine at ``ve_now`` and its mass flow at loading (see ``equivalent``)."""
    engines = list(craft.engines)
    for e in model.perf:
        eng = craft.engines[e]
        isp = float(ve_now[e]) / (G0 * model.cos[e])
        engines[e] = replace(eng, isp_s=isp, thrust_n=eng.thrust_n / eng.isp_s * isp)
    return replace(craft, engines=tuple(engines))


def equivalent(craft: Craft, model: Model, events: Sequence[Entry], flown: Flown,
               ve_now: np.ndarray) -> tuple[Craft, tuple[Entry, ...]]:
    """A constant-performance craft and history that replay to the same nominal figures.

    Each table engine flies at ``ve_now`` (its effective exhaust velocity over the remaining propellant),
    keeping its mass flow at loading; each integrated entry is rescaled (a duration by its own effective
    flow over the engine's, a delta-v by the engine's ve over the entry's, its sigma with it). The Monte
    Carlo and the closed-form capability then run unchanged on it: engine errors act as the same relative
    factors, and the feedback of a sample's draws on its later pressures (second order) is left out."""
    craft_eq = equivalent_craft(craft, model, ve_now)
    flow_eq = craft_eq.mass_flows()
    out = list(events)
    index = {e.id: i for i, e in enumerate(craft.engines)}
    for k in np.flatnonzero(flown.dependent).tolist():
        ev = out[k]
        d = dict(ev.data)
        e = index[d["engine"]]
        if d.get("duration") is not None and not (ev.kind == "burn" and d.get("dv") is not None):
            factor = float(flown.flow_event[k]) / flow_eq[e]
            d["duration"] = d["duration"] * factor
        else:
            factor = float(ve_now[e]) / float(flown.ve_event[k])
            d["dv"] = d["dv"] * factor
        if d.get("sigma") is not None:
            d["sigma"] = d["sigma"] * factor
        out[k] = ev._replace(data=d)
    return craft_eq, tuple(out)


def qualified_ok(engine: Engine, p: float) -> bool:
    q = engine.qualified_pressure_pa
    return q is None or not (p == p) or q[0] <= p <= q[1]


def flyer(model: Model, temps: np.ndarray):
    """``fly_fn`` for ``capability.check``: burns (engine id, dv) flown in order, a table engine's draw by
    ``dv_draw`` (the falling Isp integrated over it), a constant engine's by the rocket equation."""
    from .capability import State  # noqa: PLC0415 - capability does not import this module

    craft = model.craft
    temps = np.asarray(temps, dtype=float)[None, :]

    def fly(state, burns):
        m, rem, draws = float(state.mass_kg), np.array(state.remaining_kg, dtype=float), []
        for engine_id, dv in burns:
            e = craft.engine_index(engine_id)
            if e in model.perf and model.pressurised(e):
                x = float(dv_draw(model, e, m, rem[None, :], temps, float(dv))[0])
            else:
                x = float(-m * np.expm1(-float(dv) / craft.engines[e].ve))
            draw = x * model.frac[e]
            rem, m = rem - draw, m - x
            draws.append(draw)
        return State(m, rem), draws

    return fly
