"""Blowdown tanks in a snapshot: the replay against falling feed pressure, predicted pressures, warnings.

Why a service: the core (``core.blowdown``) is pure maths on arrays; here the ledger's gauge readings give
the tank temperatures, the integrated replay replaces the affine one for craft with performance tables,
and the warnings are worded. Everything comes from the stored craft (its real-gas tables were computed
when the ledger was created), so a status loads no property library.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Mapping, Sequence

import numpy as np

from ..core import blowdown as bd
from ..core.craft import Craft
from ..core.entries import GAUGE, Entry, Resolved
from ..core.replay import Replay

BAR = 1e5


@dataclass(frozen=True)
class View:
    """What a snapshot knows of its blowdown tanks and table engines."""

    model: bd.Model
    flown: bd.Flown | None
    """Per-event feed pressures and effective performance (None without table engines)."""
    temperature_k: np.ndarray
    """(tanks,) temperature used now: latest gauge reading of the tank, else the loading temperature."""
    pressure_pa: np.ndarray
    """(tanks,) predicted pressure now (NaN for tanks that are not modelled blowdown tanks)."""
    craft_eq: Craft
    events: tuple[Entry, ...]
    warnings: tuple[str, ...] = field(default_factory=tuple)

    @cached_property
    def events_eq(self) -> tuple[Entry, ...]:
        """The history rescaled to replay on ``craft_eq`` (built when a sampler or a check asks for it)."""
        if self.flown is None:
            return self.events
        return bd.equivalent(self.model.craft, self.model, self.events, self.flown, self.ve_now)[1]

    @cached_property
    def ve_now(self) -> np.ndarray:
        return np.array([e.ve for e in self.craft_eq.engines])


def readings(craft: Craft, resolved: Resolved) -> list[tuple[int, float, float]]:
    """(tank index, at, temperature K) of every gauge reading, in seq order."""
    index = {t.id: i for i, t in enumerate(craft.tanks)}
    out = []
    for e in resolved.effective.values():
        if e.kind == GAUGE and e.data.get("tank") in index and e.data.get("temperature_k") is not None:
            out.append((index[e.data["tank"]], float(e.at), float(e.data["temperature_k"])))
    return out


def applies(craft: Craft) -> bool:
    return any(bd.modelled(t) for t in craft.tanks)


def flight(craft: Craft, resolved: Resolved, rep: Replay | None, replay_fn) -> tuple[Replay, View | None]:
    """The replay (integrated when an engine has a performance table) and the blowdown view, or the
    given replay and None for a craft without modelled blowdown tanks (today's prefix scan, unchanged)."""
    if not applies(craft):
        return (rep if rep is not None else replay_fn(craft, resolved.events)), None
    model = bd.Model(craft)
    events = resolved.events
    found = readings(craft, resolved)
    flown = None
    if craft.has_tables:
        ats = np.fromiter((e.at for e in events), dtype=float, count=len(events))
        temps = bd.event_temperatures(craft, ats, found)
        rep, flown = bd.replay_blowdown(craft, model, events, temps)
    elif rep is None:
        rep = replay_fn(craft, events)
    now = bd.event_temperatures(craft, np.array([np.inf]), found)[0]
    pressure = model.tank_pressures(rep.remaining_kg[None, :], now[None, :])[0]
    craft_eq = craft
    if flown is not None:
        ve_now = bd.effective_ve(model, rep.mass_kg, rep.remaining_kg, now)
        craft_eq = bd.equivalent_craft(craft, model, ve_now)
    view = View(model, flown, now, pressure, craft_eq, tuple(events))
    return rep, _with_warnings(view, craft, events)


def _bar(p: float) -> str:
    return f"{p / BAR:.2f} bar"


def _with_warnings(view: View, craft: Craft, events: Sequence[Entry]) -> View:
    out = []
    if view.model.ideal:
        out.append(f"tank {', '.join(view.model.ideal)}: the stored craft has no real-gas pressurant table (created"
                   " before blowdown modelling); predicted pressures use the ideal gas (about 1 % off at 22 bar)")
    fl = view.flown
    if fl is not None and len(events):
        lo_p = np.fmin(fl.pressure_start, fl.pressure_end)
        hi_p = np.fmax(fl.pressure_start, fl.pressure_end)
        engine_of = fl.engine
        for e, eng in enumerate(craft.engines):
            if not view.model.pressurised(e):
                continue
            table = eng.performance
            qual = eng.qualified_pressure_pa
            if table is None and qual is None:
                continue
            with np.errstate(invalid="ignore"):
                off = np.zeros(len(events), dtype=bool)
                if table is not None:
                    off |= (lo_p < table.pressure_pa[0]) | (hi_p > table.pressure_pa[-1])
                if qual is not None:
                    off |= (lo_p < qual[0]) | (hi_p > qual[1])
            for k in np.flatnonzero((engine_of == e) & off).tolist():
                ev = events[k]
                span = (_bar(lo_p[k]) if abs(hi_p[k] - lo_p[k]) < 0.005 * BAR
                        else f"{_bar(lo_p[k])} to {_bar(hi_p[k])}")
                if table is not None and (lo_p[k] < table.pressure_pa[0] or hi_p[k] > table.pressure_pa[-1]):
                    out.append(f"entry #{ev.seq} (engine {eng.id}): feed pressure {span} outside its performance table"
                               f" ({_bar(table.pressure_pa[0])} to {_bar(table.pressure_pa[-1])}); end values used")
                if qual is not None and (lo_p[k] < qual[0] or hi_p[k] > qual[1]):
                    out.append(f"entry #{ev.seq} fires engine {eng.id} at {span}, outside its qualified inlet pressure"
                               f" {_bar(qual[0])} to {_bar(qual[1])}")
    return View(view.model, view.flown, view.temperature_k, view.pressure_pa, view.craft_eq, view.events,
                tuple(out))


def predicted_at_reading(view: View, rep: Replay, events: Sequence[Entry], craft: Craft,
                         data: Mapping[str, Any], at: float) -> dict[str, Any] | None:
    """Predicted pressure for a gauge reading (bookkeeping at its time, its temperature) beside the measured
    one, and their difference in sigma: sensor sigma and the bookkeeping sigma carried through dp/dm.
    A second reconciliation beside the mass comparison, from the stored values only."""
    tank_id = data.get("tank")
    if tank_id not in craft.tank_ids:
        return None
    t = craft.tank_index(tank_id)
    model = view.model.tanks.get(t)
    if model is None or data.get("pressure_pa") is None:
        return None
    ats = np.fromiter((e.at for e in events), dtype=float, count=len(events))
    k = int(np.searchsorted(ats, at, side="right"))
    book = float(rep.remaining[k - 1, t]) if k else float(craft.tanks[t].load_kg)
    temp = float(data.get("temperature_k") or view.temperature_k[t])
    p = float(model.pressure(book, temp))
    dm = max(1e-3, 1e-4 * craft.tanks[t].load_kg)
    slope = (float(model.pressure(book + dm, temp)) - float(model.pressure(book - dm, temp))) / (2 * dm)
    s_book = float(data.get("bookkeeping_sigma_kg") or 0.0)
    s_p = float(data.get("pressure_sigma_pa") or 0.0)
    sigma = float(np.hypot(s_p, slope * s_book))
    measured = float(data["pressure_pa"])
    return {"predicted_pressure_pa": p, "measured_pressure_pa": measured,
            "pressure_difference_pa": measured - p, "pressure_sigma_pa": sigma,
            "pressure_difference_sigma": (measured - p) / sigma if sigma > 0 else None}
