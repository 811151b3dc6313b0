"""Gauging commands: gauge (a tank pressure and temperature reading) and rebaseline (adopt one).

Exit status of ``gauge``: 0 when the reading agrees with the bookkeeping, 1 when it differs beyond
3 sigma (the reading is still recorded: it is a fact), 2 on an error (nothing written).
"""
from __future__ import annotations

from .common import add_json, console, dump_json, esc, open_ledger, qty, warn, when
from .helptext import about

EXIT_FLAGGED = 1


def register(sub) -> None:
    p = sub.add_parser("gauge", **about("propellant in a tank from its pressure and temperature, against the bookkeeping"))
    p.add_argument("--tank", required=True, help="tank id from the craft file, e.g. hz")
    p.add_argument("--pressure", required=True, help="tank pressure as read, e.g. '7.1 bar', '6.2 MPa' or '100 psia' (psig is read as psia: a "
                                                      "gauge pressure needs the ambient added, about zero in orbit; "
                                                      "a bare number is Pa)")
    p.add_argument("--temperature", required=True, help="tank temperature, e.g. '20 degC', '20 C', '68 degF' or '293.15 K' (a bare number is K)")
    p.add_argument("--pressure-sigma", help="1-sigma of the pressure reading, e.g. '0.1 bar' (default 0.5 %% of an assumed full "
                                            "scale: 15 kPa for liquid tanks, 100 kPa for gas-stored tanks)")
    p.add_argument("--temperature-sigma", help="1-sigma of the temperature reading, e.g. '0.5 K' or '1 degC' (default 0.5 K)")
    p.add_argument("--gas-temperature-offset", metavar="SIGMA",
                   help="1-sigma of the pressurant's temperature about the wall sensor's, liquid tanks only, e.g. "
                        "'0.8 K' (default 1 K within 12 h after a firing from the tank, else 0.5 K)")
    p.add_argument("--at", help="time of the reading (ISO 8601; UTC unless an offset is given; default now), e.g. 2026-05-04T13:20Z")
    p.add_argument("--by", help="who records it, e.g. 'P. Ilves' (default: the operating-system user)")
    p.add_argument("--note", help="free text kept with the entry, e.g. 'after the heater cycle'")
    p.add_argument("--dry-run", action="store_true", help="compute and show, record nothing, e.g. to try a reading first")
    add_json(p)
    p.set_defaults(func=cmd_gauge)

    p = sub.add_parser("rebaseline", **about("adopt a gauge reading combined with the bookkeeping as the tank's value"))
    p.add_argument("--tank", required=True, help="tank id (must be the tank of the gauge reading), e.g. hz")
    p.add_argument("--gauge", required=True, help="id of the gauge entry to adopt, e.g. 31")
    p.add_argument("--by", required=True, help="the person adopting the value (required), e.g. 'P. Ilves'")
    p.add_argument("--reason", help="why the value is adopted, e.g. 'two readings agree'")
    p.add_argument("--force", action="store_true",
                   help="adopt even when the reading differs from the bookkeeping beyond 3 sigma, e.g. after a confirmed leak")
    p.add_argument("--note", help="free text kept with the entry, e.g. 'ref. anomaly report 3'")
    add_json(p)
    p.set_defaults(func=cmd_rebaseline)


def cmd_gauge(args) -> int:
    from ..services import gauging, views  # noqa: PLC0415

    led = open_ledger(args)
    p = qty(args.pressure, "pressure", "--pressure")
    t = qty(args.temperature, "temperature", "--temperature")
    p_sigma = qty(args.pressure_sigma, "pressure", "--pressure-sigma")
    t_sigma = qty(args.temperature_sigma, "temperature_difference", "--temperature-sigma")
    g_offset = qty(args.gas_temperature_offset, "temperature_difference", "--gas-temperature-offset")
    at = when(args)
    snap = led.snapshot()
    sigmas = gauging.default_sigmas(gauging.tank_of(snap, args.tank), p_sigma, t_sigma, g_offset)
    out = gauging.record_gauge(led, args.tank, p, t, sigmas, at=at, by=args.by, note=args.note,
                               dry_run=args.dry_run)
    out["caution"] = views.CAUTION
    if args.json:
        dump_json(out)
    else:
        print_reading(out)
        warn(out["warnings"])
    return EXIT_FLAGGED if out["flagged"] else 0


def print_reading(r: dict) -> None:
    out = console()
    out.print(f"tank [bold]{esc(r['tank'])}[/] ({esc(r['fluid'])}, {esc(r['method'])}) at {esc(r['at'])}")
    offset = (r.get("sigmas") or {}).get("gas_temperature_offset_k")
    out.print(f"  reading      {r['pressure_pa'] / 1e5:.6g} bar, {r['temperature_k'] - 273.15:.2f} degC "
              f"(+- {r['pressure_sigma_pa'] / 1e5:.3g} bar, {r['temperature_sigma_k']:.3g} K"
              + (f"; pressurant +- {offset:.3g} K about the wall" if offset else "") + ")")
    if r.get("predicted_pressure_pa") is not None:
        sig = r.get("pressure_difference_sigma")
        out.print(f"  pressure     measured {r['measured_pressure_pa'] / 1e5:.4g} bar, predicted "
                  f"{r['predicted_pressure_pa'] / 1e5:.4g} bar from the bookkeeping"
                  + (f" ({sig:+.2f} sigma)" if sig is not None else ""))
    if r.get("phase") == "two-phase":
        print_two_phase(out, r)
        return
    out.print(f"  gauged       {r['propellant_kg']:10.3f} kg  +- {r['sigma_kg']:.3f} (1 sigma)")
    d = r.get("details") or {}
    if d.get("interval_95_kg"):
        lo, hi = d["interval_95_kg"]
        out.print(f"  sampled      95 % of samples {lo:.3f} to {hi:.3f} kg"
                  + (f"; {d['two_phase_samples']} on the saturation line (fill drawn)" if d.get("two_phase_samples") else ""))
    out.print(f"  bookkeeping  {r['bookkeeping_kg']:10.3f} kg  +- {r['bookkeeping_sigma_kg']:.3f}")
    out.print(f"  difference   {r['difference_kg']:+10.3f} kg  = {r['difference_sigma']:+.2f} sigma"
              + ("" if r["flagged"] else ", within 3 sigma"))
    if r["flagged"]:
        out.print("  [bold red]BEYOND 3 SIGMA[/]: look for a leak, a sensor fault or a flow-model error first")
    else:
        out.print(f"  combined     {r['rebaseline_kg']:10.3f} kg  +- {r['rebaseline_sigma_kg']:.3f} "
                  "(what a rebaseline would adopt)")
    out.print("dry run: nothing recorded" if r["dry_run"] else f"recorded entry {r['id']} (gauge)")
    out.print(f"[dim]{esc(r['caution'])}[/]")


def print_two_phase(out, r: dict) -> None:
    """A reading on the saturation line: the range, the bookkeeping against it, and why nothing is adopted."""
    d = r["details"]
    out.print(f"  [bold]two-phase[/]: any mass between {r['min_kg']:.3f} kg (all vapour, {d['vapour_density_kg_m3']:.1f} "
              f"kg/m3) and {r['max_kg']:.3f} kg (all liquid, {d['liquid_density_kg_m3']:.1f} kg/m3)")
    out.print(f"  saturation   {d['saturation_pressure_pa'] / 1e5:.6g} bar at this temperature; the reading is "
              f"{d['pressure_from_saturation_sigma']:+.2f} sigma from it: no point estimate")
    inside = "inside" if r["bookkeeping_in_range"] else "[bold red]OUTSIDE[/]"
    out.print(f"  bookkeeping  {r['bookkeeping_kg']:10.3f} kg  +- {r['bookkeeping_sigma_kg']:.3f}, {inside} the range")
    out.print(f"  no rebaseline: {esc(r['rebaseline_refused'])}")
    out.print("dry run: nothing recorded" if r["dry_run"] else f"recorded entry {r['id']} (gauge, two-phase)")
    out.print(f"[dim]{esc(r['caution'])}[/]")


def cmd_rebaseline(args) -> int:
    from ..services import gauging, views  # noqa: PLC0415

    out = gauging.record_rebaseline(open_ledger(args), args.tank, args.gauge, args.by, reason=args.reason,
                                    force=args.force, note=args.note)
    if args.json:
        dump_json({**out, "caution": views.CAUTION})
        return 0
    c = console()
    c.print(f"recorded entry {out['id']} (rebaseline): tank {esc(out['tank'])} from {esc(out['at'])} is "
            f"{out['remaining_kg']:.3f} +- {out['sigma_kg']:.3f} kg (bookkeeping was {out['bookkeeping_kg']:.3f}, "
            f"change {out['change_kg']:+.3f} kg), adopted by {esc(out['by'])}")
    c.print(f"remaining now {out['remaining_now_kg']:.3f} kg")
    warn(out["warnings"])
    c.print(f"[dim]{esc(views.CAUTION)}[/]")
    return 0
