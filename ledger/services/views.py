"""Plain-data views of a snapshot (status, check, log): what JSON output, tables and the console show."""
from __future__ import annotations

from typing import Any

from ..core import capability as cap
from ..core.entries import APPROVE, BURN, CORRECT, GAUGE, HANDOVER, MASS, PLAN, REBASELINE, REJECT, USE, WITHDRAW
from .forecast import forecast
from .ledger import Snapshot
from .timefmt import iso

CAUTION = ("Decision support only: verify every figure against the mission's flight-dynamics system of record, "
           "its mission rules and the responsible engineers before acting.")
LATE_AFTER_S = 3600.0
"""An executed event recorded more than this long after it happened is marked as logged late."""


def status(snap: Snapshot, *, with_thrusters: bool = True) -> dict[str, Any]:
    """The status figures; ``with_thrusters=False`` leaves out the per-thruster totals (a pass over every
    entry) for a caller that shows none of them (the fleet row). Life warnings are the snapshot's own."""
    craft = snap.craft
    usable = snap.usable_kg
    gauges = latest_gauges(snap)
    reserves = []
    for r in craft.reserves:
        reserves.append({"id": r.id, "engine": r.engine, "dv_m_s": r.dv_m_s})
    view = snap.blowdown
    out = {
        "craft": craft.name,
        "ledger": snap.path,
        "entries": len(snap.entries),
        "as_of": iso(snap.resolved.last_event_at) if snap.resolved.events else None,
        "mass_kg": snap.state.mass_kg,
        "dry_mass_kg": craft.dry_mass_kg,
        "tanks": {
            t.id: {"fluid": t.fluid, "load_kg": t.load_kg, "remaining_kg": float(snap.state.remaining_kg[i]),
                   "residual_kg": t.residual_kg, "usable_kg": float(usable[i]), "gauge": gauges.get(t.id),
                   **blowdown_keys(view, i)}
            for i, t in enumerate(craft.tanks)
        },
        "engines": {
            e.engine: {"dv_available_m_s": e.dv_available_m_s, "dv_free_m_s": e.dv_free_m_s,
                       "limiting_tank": e.limiting_tank, "reserves_met": e.reserves_met}
            for e in snap.engines
        },
        "reserves": reserves,
        "mixture_outage": mixture_outage(snap),
        **({"thrusters": thrusters(snap)} if with_thrusters else {}),
        "pending_plans": [plan_row(p) for p in snap.resolved.pending],
        "integrity": "intact" if snap.integrity is None else str(snap.integrity),
        "warnings": list(snap.warnings),
        "caution": CAUTION,
    }
    # Last, so that any low bounds already in the status (dv_free_low_m_s) give the low-bound dates too.
    out["forecast"] = forecast(snap, out)
    return out


def thrusters(snap: Snapshot) -> list[dict[str, Any]]:
    """Per engine over the whole ledger: on-time (s), pulses, throughput (kg) and, against each ``life:``
    limit of the craft file, the share used (``services.pulses.totals``; the warning at 80 % is the one
    warning list's)."""
    from .pulses import totals  # noqa: PLC0415

    return totals(snap.craft, snap.resolved.events, snap.replay)


def mixture_outage(snap: Snapshot) -> list[dict[str, Any]]:
    """Per bipropellant pair: what the other tank would strand were the pair's engine to draw everything
    usable at its nominal mixture ratio from the tanks as they stand (``core.mixture``)."""
    from ..core.mixture import pairs, stranded  # noqa: PLC0415

    craft, rows = snap.craft, []
    for p in pairs(craft):
        kg, tank = stranded(craft, snap.state.remaining_kg, p)
        eng = craft.engines[p.engine]
        ids = craft.tank_ids
        left = ids[int(tank)] if kg > 0 else None
        rows.append({"tanks": [ids[p.first], ids[p.second]], "engine": eng.id, "mixture_ratio": eng.mixture_ratio,
                     "mixture_ratio_sigma": eng.mixture_ratio_sigma, "stranded_kg": float(kg),
                     "stranded_tank": left,
                     "runs_out_first": None if left is None else ids[p.second if int(tank) == p.first else p.first]})
    return rows


def blowdown_keys(view, i: int) -> dict[str, Any]:
    """A blowdown tank's predicted pressure now and the temperature it is predicted at (else nothing)."""
    if view is None or i not in view.model.tanks:
        return {}
    return {"pressure_pa": float(view.pressure_pa[i]), "pressure_temperature_k": float(view.temperature_k[i]),
            "expansion": view.model.tanks[i].expansion}


GAUGE_KEYS = ("propellant_kg", "sigma_kg", "bookkeeping_kg", "difference_kg", "difference_sigma", "flagged")
TWO_PHASE_KEYS = ("phase", "min_kg", "max_kg", "bookkeeping_in_range")
"""Present only for a reading on the saturation line (a range, no estimate): services.gauging."""


def latest_gauges(snap: Snapshot) -> dict[str, dict[str, Any]]:
    """Tank id -> the latest gauge reading's comparison (by reading time), from the stored values only:
    no property library is loaded to show it."""
    latest: dict[str, Any] = {}
    for e in snap.resolved.effective.values():
        if e.kind == GAUGE:
            tank = e.data.get("tank")
            if tank not in latest or (e.at, e.seq) >= (latest[tank].at, latest[tank].seq):
                latest[tank] = e
    adopted = {int(e.data["gauge"]): e.seq for e in snap.resolved.events if e.kind == REBASELINE}
    out = {tank: {"id": e.seq, "at": iso(e.at), "method": e.data.get("method"),
                  **{k: e.data.get(k) for k in GAUGE_KEYS}, "adopted_by": adopted.get(e.seq),
                  **{k: e.data[k] for k in TWO_PHASE_KEYS if k in e.data}}
           for tank, e in latest.items()}
    if snap.blowdown is not None:
        from .blowdown import predicted_at_reading  # noqa: PLC0415

        for tank, e in latest.items():
            pred = predicted_at_reading(snap.blowdown, snap.replay, snap.resolved.events, snap.craft, e.data, e.at)
            if pred is not None:
                out[tank].update(pred)
    return out


def plan_row(p) -> dict[str, Any]:
    return {"id": p.seq, "engine": p.get("engine"), "dv_m_s": p.get("dv"), "at": iso(p.at), "by": p.by, "note": p.note}


def commitments(snap: Snapshot, exclude_plan: int | None = None) -> list[tuple[str, float]]:
    """Pending plans as (engine, dv), less ``exclude_plan`` when that plan is the burn being checked."""
    return [(p.get("engine"), float(p.get("dv"))) for p in snap.resolved.pending if p.seq != exclude_plan]


def check(snap: Snapshot, engine: str, dv: float, include_pending: bool = True,
          exclude_plan: int | None = None) -> dict[str, Any]:
    res = cap.check(snap.flight_craft, snap.state, engine, dv, commitments(snap, exclude_plan) if include_pending else [],
                    fly_fn=_flyer(snap))
    return {
        "engine": res.engine, "dv_m_s": res.dv_m_s,
        "verdict": "feasible" if res.feasible else "infeasible",
        "propellant_kg": res.propellant_kg, "propellant_by_tank_kg": res.propellant_by_tank,
        "dv_free_after_m_s": res.dv_free_after_m_s, "limiting_tank": res.limiting_tank,
        "least_margin_tank": res.least_margin_tank, "margin_after_reserves_kg": res.margin_by_tank,
        "commitments": [{"engine": e, "dv_m_s": d} for e, d in res.commitments],
        "reason": res.reason, "caution": CAUTION,
    }


def _flyer(snap: Snapshot):
    """For a craft with performance tables: burns flown against the falling feed pressure, and the dv free
    after them integrated the same way (else None)."""
    view = snap.blowdown
    if view is None or view.flown is None:
        return None
    from ..core.blowcap import flyer  # noqa: PLC0415

    return flyer(view.model, view.temperature_k)


def _amount(data) -> str:
    if data.get("phase") == "two-phase" and data.get("min_kg") is not None:  # a gauge reading with no estimate
        return f"{data.get('tank')} two-phase {data['min_kg']:.3f}..{data.get('max_kg', 0.0):.3f} kg"
    if data.get("method") is not None and data.get("propellant_kg") is not None:  # a gauge reading
        return f"{data.get('tank')} {data['propellant_kg']:.3f}+-{data.get('sigma_kg', 0.0):.3f} kg"
    if data.get("remaining_kg") is not None:  # a re-baseline
        return f"{data.get('tank')} = {data['remaining_kg']:.3f} kg"
    if data.get("dv") is not None:
        return f"{data['dv']:.3f} m/s"
    if data.get("pulses") is not None and data.get("duration") is not None:
        return f"{int(data['pulses'])} x {data['on_time']:.3f} s pulses"
    if data.get("duration") is not None:
        return f"{data['duration']:.3f} s"
    if data.get("propellant") is not None:
        return f"{data['propellant']:.4f} kg"
    if data.get("delta") is not None:
        return f"{data['delta']:+.3f} kg"
    if data.get("from") is not None:
        return f"{data['from']} -> {data.get('to', '')}"
    return ""


def log(snap: Snapshot) -> list[dict[str, Any]]:
    """Every entry in replay order. A corrected entry keeps its original values, marked superseded; the
    latest correction of it stands where the corrected event replays and carries its effect. The rows
    are the console's (``browse``), built for the whole ledger."""
    from .browse import index, rows  # noqa: PLC0415 - browse builds on this module

    ix = index(snap)
    return rows(snap, ix, ix.order)
