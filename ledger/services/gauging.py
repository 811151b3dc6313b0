"""Gauge readings and re-baselines: the use cases the command line and the console share.

A reading (tank pressure and temperature) becomes a propellant estimate through core.gauging, with
real-gas densities from CoolProp (ledger.realgas, imported only here and only when a reading is
computed) and liquid correlations from core.liquids. The estimate, its sigma and the comparison with
the bookkeeping at that time are stored in the entry, so reading the ledger later needs no CoolProp.
A re-baseline adopts the inverse-variance combination of a stored reading and the bookkeeping.
"""
from __future__ import annotations

from dataclasses import asdict, replace
from functools import partial
from typing import Any

import numpy as np

from ..core import liquids
from ..core.booksigma import bookkeeping_sigma
from ..core.craft import Tank
from ..core.entries import BURN, GAUGE, REBASELINE, USE
from ..core.fluids import canonical_gas, is_gas_name
from ..core.gauging import GaugeSigmas, TwoPhaseGauge, blowdown_estimate, gas_stored_estimate
from ..core.reconcile import reconcile
from ..core.replay import steps_from_events
from ..errors import InputError
from .ledger import Ledger, Snapshot
from .records import adopted_by, clean_text
from .timefmt import iso, now

BLOWDOWN, GAS = "blowdown PVT", "gas density"
LIMIT_SIGMAS = 3.0
GAS_FULL_SCALE_PA = 20.0e6
"""Assumed transducer full scale of a gas-stored tank (xenon, cold-gas bottles), 0.5 % of it taken as
the default pressure sigma: 100 kPa [practice]. Liquid blowdown tanks keep GaugeSigmas' 3 MPa scale."""
SAMPLES, SEED = 20_000, 0
TWO_PHASE = "two-phase"
GAS_OFFSET_AFTER_BURN_K, GAS_OFFSET_SETTLED_K = 1.0, 0.5


def tank_of(snap: Snapshot, tank_id: str) -> Tank:
    if tank_id not in snap.craft.tank_ids:
        raise InputError(f"--tank: unknown tank '{tank_id}' (tanks: {', '.join(snap.craft.tank_ids)})")
    return snap.craft.tanks[snap.craft.tank_index(tank_id)]


def method_for(tank: Tank) -> str:
    """How this tank can be gauged, or one line saying what the craft file lacks."""
    try:
        gas = is_gas_name(tank.fluid)
    except ValueError as exc:
        raise InputError(f"tank {tank.id}: {exc}") from None
    if gas:
        if tank.volume_m3 is None:
            raise InputError(f"tank {tank.id} ({tank.fluid}, gas-stored): the craft file gives no `volume`;"
                             " mass = density(P, T) x volume needs it")
        return GAS
    missing = [name for name, value in (("`volume`", tank.volume_m3), ("`pressurant: {gas, pressure, temperature}`",
                                                                      tank.pressurant)) if value is None]
    if missing:
        raise InputError(f"tank {tank.id} ({tank.fluid}): the craft file gives no {' and no '.join(missing)};"
                         " PVT needs a blowdown tank's volume and pressurant loading conditions (a pressure-"
                         "regulated tank's pressure is set by its regulator and says nothing of its propellant)")
    try:
        canonical_gas(tank.pressurant.gas)
    except ValueError as exc:
        raise InputError(f"tank {tank.id} pressurant: {exc}") from None
    return BLOWDOWN


SETTLING_S = 12 * 3600.0
"""A reading within this long after a firing that drew from the tank counts as "after a burn": the
pressurant has not settled to the wall's temperature (gas-temperature offset sigma 1 K then, 0.5 K
otherwise; project choice [practice], issue 12 point 5)."""


def after_burn(snap: Snapshot, tank_id: str, at: float) -> bool:
    """Whether an engine feeding ``tank_id`` fired (burn or use) in the SETTLING_S before ``at``."""
    feeding = {e.id for e in snap.craft.engines if tank_id in e.feeds}
    return any(e.kind in (BURN, USE) and e.data.get("engine") in feeding and at - SETTLING_S <= e.at <= at
               for e in snap.resolved.events)


def default_sigmas(tank: Tank, pressure_sigma_pa: float | None = None,
                   temperature_sigma_k: float | None = None,
                   gas_temperature_offset_k: float | None = None) -> GaugeSigmas:
    """GaugeSigmas for this tank: the fluid's own correlation sigmas, the sensor sigmas if given. The
    pressurant's offset from the wall sensor (liquid tanks only) stays None unless given: the reading's
    time decides it (``after_burn``)."""
    s = GaugeSigmas()
    if method_for(tank) == GAS:
        if gas_temperature_offset_k is not None:
            raise InputError(f"--gas-temperature-offset: tank {tank.id} is gas-stored ({tank.fluid}): the sensor reads "
                             "the propellant itself; give its uncertainty as --temperature-sigma")
        s = replace(s, pressure_pa=0.005 * GAS_FULL_SCALE_PA)
    else:
        s = replace(s, liquid_density_rel=liquids.density_sigma_rel(tank.fluid),
                    vapour_pressure_rel=liquids.vapour_pressure_sigma_rel(tank.fluid))
    if pressure_sigma_pa is not None:
        s = replace(s, pressure_pa=float(pressure_sigma_pa))
    if temperature_sigma_k is not None:
        s = replace(s, temperature_k=float(temperature_sigma_k))
    if gas_temperature_offset_k is not None:
        if not (np.isfinite(gas_temperature_offset_k) and gas_temperature_offset_k >= 0):
            raise InputError(f"--gas-temperature-offset: expected a sigma of 0 K or more, got {gas_temperature_offset_k!r}")
        s = replace(s, gas_temperature_offset_k=float(gas_temperature_offset_k))
    return s


def bookkeeping_at(snap: Snapshot, tank_id: str, at: float) -> tuple[float, float, int]:
    """Bookkeeping remaining in a tank after every event up to ``at``, its sigma, and how many events."""
    events = snap.resolved.events
    ats = np.fromiter((e.at for e in events), dtype=float, count=len(events))
    k = int(np.searchsorted(ats, at, side="right"))
    t = snap.craft.tank_index(tank_id)
    value = float(snap.replay.remaining[k - 1, t]) if k else float(snap.craft.tanks[t].load_kg)
    view = snap.blowdown
    if view is not None and view.flown is not None:  # performance tables: each draw at its own Isp and thrust
        from ..core.blowcap import event_performance  # noqa: PLC0415

        steps = steps_from_events(snap.craft, events)
        isp, thrust = event_performance(view.model, view.flown, steps.is_burn)
        sigma = float(bookkeeping_sigma(snap.craft, events, steps, snap.replay, upto=k, isp_at=isp,
                                        thrust_at=thrust)[t])
        return value, sigma, k
    flight = snap.flight_events
    steps = steps_from_events(snap.flight_craft, flight)
    sigma = float(bookkeeping_sigma(snap.flight_craft, flight, steps, snap.replay, upto=k)[t])
    return value, sigma, k


def _estimate(tank: Tank, method: str, p: float, t: float, s: GaugeSigmas) -> tuple[float, float, dict]:
    """Nominal mass, sigma and the intermediate values behind them (CoolProp loads here)."""
    from .. import realgas  # noqa: PLC0415 - CoolProp only when a reading is computed

    if method == GAS:
        g = gas_stored_estimate(tank.volume_m3, p, t, partial(realgas.gas_density, tank.fluid, allow_nan=True), s,
                                n_samples=SAMPLES, seed=SEED, saturation=realgas.saturation(tank.fluid))
        if isinstance(g, TwoPhaseGauge):
            return None, None, asdict(g)
    else:
        pr = tank.pressurant
        p_vap0 = liquids.vapour_pressure(tank.fluid, pr.temperature_k)
        g = blowdown_estimate(
            tank.volume_m3, tank.load_kg, pr.temperature_k, pr.pressure_pa - p_vap0, p, t,
            partial(liquids.liquid_density, tank.fluid), partial(liquids.vapour_pressure, tank.fluid),
            partial(realgas.gas_density, pr.gas), s, n_samples=SAMPLES, seed=SEED,
            temperature_limits_k=liquids.valid_range_k(tank.fluid))
    details = {k: v for k, v in asdict(g).items() if k not in ("propellant_kg", "sigma_kg")}
    return g.propellant_kg, g.sigma_kg, details


def _reading(snap: Snapshot, tank_id: str, pressure_pa: float, temperature_k: float,
             sigmas: GaugeSigmas | None, at: float) -> dict[str, Any]:
    """The gauge entry's payload: inputs, estimate, bookkeeping then, and the reconciliation."""
    tank = tank_of(snap, tank_id)
    method = method_for(tank)
    for name, value in (("--pressure", pressure_pa), ("--temperature", temperature_k)):
        if not (isinstance(value, (int, float)) and np.isfinite(value) and value > 0):
            raise InputError(f"{name}: expected a finite value greater than zero, got {value!r}")
    s = sigmas if sigmas is not None else default_sigmas(tank)
    if method != GAS and s.gas_temperature_offset_k is None:
        s = replace(s, gas_temperature_offset_k=GAS_OFFSET_AFTER_BURN_K if after_burn(snap, tank_id, at)
                    else GAS_OFFSET_SETTLED_K)
    elif method == GAS:
        s = replace(s, gas_temperature_offset_k=0.0)
    book_kg, book_sigma, _ = bookkeeping_at(snap, tank_id, at)
    try:
        mass, sigma, details = _estimate(tank, method, float(pressure_pa), float(temperature_k), s)
        rec = None if mass is None else reconcile(mass, sigma, book_kg, book_sigma, LIMIT_SIGMAS)
    except ValueError as exc:
        raise InputError(f"tank {tank_id}: {str(exc).splitlines()[0] if str(exc) else type(exc).__name__}") from None
    if rec is None:
        return _two_phase_payload(tank, method, float(pressure_pa), float(temperature_k), s, book_kg, book_sigma,
                                  details)
    return {
        "tank": tank_id, "fluid": tank.fluid, "method": method,
        "pressure_pa": float(pressure_pa), "temperature_k": float(temperature_k),
        "pressure_sigma_pa": s.pressure_pa, "temperature_sigma_k": s.temperature_k,
        "propellant_kg": mass, "sigma_kg": sigma,
        "bookkeeping_kg": book_kg, "bookkeeping_sigma_kg": book_sigma,
        "difference_kg": rec.difference_kg, "combined_sigma_kg": rec.combined_sigma_kg,
        "difference_sigma": rec.difference_sigmas, "flagged": rec.beyond_limit, "limit_sigma": rec.limit_sigmas,
        "rebaseline_kg": rec.rebaseline_kg, "rebaseline_sigma_kg": rec.rebaseline_sigma_kg,
        "sigmas": asdict(s), "details": details,
    }


def _two_phase_payload(tank: Tank, method: str, p: float, t: float, s: GaugeSigmas, book_kg: float,
                       book_sigma: float, details: dict) -> dict[str, Any]:
    """A reading on the saturation line: the mass range and the bookkeeping then, no point estimate, no
    comparison in sigmas and nothing a re-baseline could adopt."""
    inside = details["min_kg"] - 1e-9 <= book_kg <= details["max_kg"] + 1e-9
    return {
        "tank": tank.id, "fluid": tank.fluid, "method": method, "phase": TWO_PHASE,
        "pressure_pa": p, "temperature_k": t, "pressure_sigma_pa": s.pressure_pa, "temperature_sigma_k": s.temperature_k,
        "min_kg": details["min_kg"], "max_kg": details["max_kg"],
        "bookkeeping_kg": book_kg, "bookkeeping_sigma_kg": book_sigma, "bookkeeping_in_range": bool(inside),
        "flagged": False, "limit_sigma": LIMIT_SIGMAS,
        "rebaseline_refused": (f"two-phase reading: liquid and vapour coexist at {p / 1e6:.4g} MPa, {t:.2f} K, so any "
                               f"mass from {details['min_kg']:.3f} to {details['max_kg']:.3f} kg fits it; it fixes no "
                               "value to adopt (read it again away from the saturation line, e.g. after heating)"),
        "sigmas": asdict(s), "details": details,
    }


def gauge_reading(snapshot: Snapshot, tank_id: str, pressure_pa: float, temperature_k: float,
                  sigmas: GaugeSigmas | None = None, at: float | None = None) -> dict[str, Any]:
    """Estimate and comparison for one reading, nothing written. ``at`` (POSIX s) defaults to now;
    the bookkeeping compared with is the replay of every event up to it."""
    at = now() if at is None else float(at)
    payload = _reading(snapshot, tank_id, pressure_pa, temperature_k, sigmas, at)
    return {**payload, **_pressure_check(snapshot, payload, at), "at": iso(at)}


def _pressure_check(snap: Snapshot, payload: dict[str, Any], at: float) -> dict[str, Any]:
    """For a blowdown tank: the pressure predicted from the bookkeeping beside the measured one, in sigma
    (a second reconciliation beside the mass comparison; shown, not stored)."""
    if snap.blowdown is None:
        return {}
    from .blowdown import predicted_at_reading  # noqa: PLC0415

    return predicted_at_reading(snap.blowdown, snap.replay, snap.resolved.events, snap.craft, payload, at) or {}


def record_gauge(ledger: Ledger, tank_id: str, pressure_pa: float, temperature_k: float,
                 sigmas: GaugeSigmas | None = None, *, at: float | None = None, by: str | None = None,
                 note: str | None = None, dry_run: bool = False) -> dict[str, Any]:
    """Compute a reading and append it as a gauge entry (unless ``dry_run``). Returns the reading with
    ``id`` (None on a dry run) and any warnings the new entry raises."""
    snap = ledger.snapshot()
    at = now() if at is None else float(at)
    payload = _reading(snap, tank_id, pressure_pa, temperature_k, sigmas, at)
    out = {**payload, **_pressure_check(snap, payload, at), "at": iso(at), "id": None, "dry_run": bool(dry_run),
           "warnings": []}
    if not dry_run:
        stored, warnings = ledger.record(GAUGE, payload, at=at, by=by, note=note, snap=snap)
        out.update(id=stored["seq"], warnings=warnings)
    return out


def record_rebaseline(ledger: Ledger, tank_id: str, gauge_id: Any, by: str | None, *, reason: str | None = None,
                      force: bool = False, note: str | None = None) -> dict[str, Any]:
    """Adopt the inverse-variance combination of a stored gauge reading and the bookkeeping at its time
    as the tank's bookkeeping from then on. Refused when the two disagree beyond 3 sigma unless ``force``."""
    who = clean_text(by, "--by")
    if not who:
        raise InputError("rebaseline: --by is required (the person adopting the value)")
    snap = ledger.snapshot()
    tank_of(snap, tank_id)
    try:
        seq = int(str(gauge_id).lstrip("#"))
    except ValueError:
        raise InputError(f"--gauge: expected an entry id such as 12, got {gauge_id!r}") from None
    reading = snap.resolved.effective.get(seq)
    if reading is None or reading.kind != GAUGE:
        raise InputError(f"--gauge: entry {seq} is not a gauge reading")
    if reading.data["tank"] != tank_id:
        raise InputError(f"--gauge: reading {seq} is of tank {reading.data['tank']}, not {tank_id}")
    earlier = adopted_by(snap.resolved, seq)
    if earlier is not None:
        raise InputError(f"--gauge: reading {seq} was already adopted by entry {earlier}")
    if reading.data.get("phase") == TWO_PHASE:
        raise InputError(f"rebaseline: reading {seq} is {reading.data.get('rebaseline_refused') or 'two-phase'}")
    g_kg, g_sigma = float(reading.data["propellant_kg"]), float(reading.data["sigma_kg"])
    book_kg, book_sigma, _ = bookkeeping_at(snap, tank_id, reading.at)
    try:
        rec = reconcile(g_kg, g_sigma, book_kg, book_sigma, LIMIT_SIGMAS)
    except ValueError as exc:
        raise InputError(f"rebaseline: {exc}") from None
    if rec.beyond_limit and not force:
        raise InputError(f"rebaseline: reading {seq} differs from the bookkeeping by {rec.difference_sigmas:+.2f} sigma"
                         f" (beyond {LIMIT_SIGMAS:g}); investigate a leak, a sensor or the flow model first, or give"
                         " --force to adopt the combination anyway")
    payload = {"tank": tank_id, "gauge": seq, "remaining_kg": rec.rebaseline_kg, "sigma_kg": rec.rebaseline_sigma_kg,
               "gauge_kg": g_kg, "gauge_sigma_kg": g_sigma, "bookkeeping_kg": book_kg,
               "bookkeeping_sigma_kg": book_sigma, "difference_sigma": rec.difference_sigmas, "forced": bool(force),
               "reason": clean_text(reason, "--reason")}
    stale = abs(book_kg - float(reading.data["bookkeeping_kg"])) > 1e-9
    stored, warnings = ledger.record(REBASELINE, payload, at=reading.at, by=who, note=note, snap=snap)
    if stale:
        warnings = [f"bookkeeping at reading {seq} changed since it was taken ({reading.data['bookkeeping_kg']:.3f}"
                    f" -> {book_kg:.3f} kg, late or corrected entries); the current value was combined"] + warnings
    after = ledger.snapshot()
    t = after.craft.tank_index(tank_id)
    return {**payload, "id": stored["seq"], "at": iso(reading.at), "by": who,
            "change_kg": rec.rebaseline_kg - book_kg, "remaining_now_kg": float(after.state.remaining_kg[t]),
            "warnings": warnings}
