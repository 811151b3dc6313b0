"""Write commands: init, burn, plan, mass, use, withdraw, correct."""
from __future__ import annotations

from ..core.entries import BURN, MASS, PLAN, USE, WITHDRAW
from ..services.ledger import create, resolve_path
from .common import add_write_options, console, dump_json, esc, open_ledger, qty, warn, when
from .helptext import about


def register(sub) -> None:
    p = sub.add_parser("init", **about("create a new ledger from a craft file (never overwrites)"))
    p.add_argument("--craft", required=True, help="craft file (YAML), e.g. craft.yaml")
    p.add_argument("--by", help="who creates it, e.g. 'R. Okafor'")
    p.add_argument("--json", action="store_true", help="print the result as JSON, e.g. for a script")
    p.set_defaults(func=cmd_init)

    p = sub.add_parser("burn", **about("log an executed burn"))
    p.add_argument("--engine", required=True, help="engine id from the craft file, e.g. lae")
    amount = p.add_mutually_exclusive_group(required=True)
    amount.add_argument("--dv", help="achieved delta-v, e.g. '1.8 m/s' (a bare number is m/s)")
    amount.add_argument("--duration", help="burn duration, e.g. '95 s' or '1.5 min' (propellant = thrust/(Isp g0) x duration)")
    amount.add_argument("--propellant", help="propellant used, e.g. '2.4 kg' or '5.3 lbm'")
    add_pulses(amount, p)
    p.add_argument("--plan", help="id of the pending plan this burn executes, e.g. 12")
    add_sigma(p)
    add_write_options(p)
    p.set_defaults(func=cmd_burn)

    p = sub.add_parser("plan", **about("log a planned burn (pending until executed or withdrawn)"))
    p.add_argument("--engine", required=True, help="engine id from the craft file, e.g. lae")
    p.add_argument("--dv", required=True, help="planned delta-v, e.g. '2.5 m/s' (a bare number is m/s)")
    add_write_options(p)
    p.set_defaults(func=cmd_plan)

    p = sub.add_parser("mass", **about("log a non-propulsive mass change (deployment, separation)"))
    p.add_argument("--delta", required=True, help="signed mass change, e.g. '-35 kg' (a bare number is kg)", type=str)
    add_sigma(p, "'0.5 kg'")
    add_write_options(p)
    p.set_defaults(func=cmd_mass)

    p = sub.add_parser("use", **about("log propellant used without delta-v (attitude control, off-loading, venting)"))
    p.add_argument("--engine", required=True, help="engine id from the craft file, e.g. rcs")
    amount = p.add_mutually_exclusive_group(required=True)
    amount.add_argument("--duration", help="total thruster on-time, e.g. '40 s' or '3 min'")
    amount.add_argument("--propellant", help="propellant used, e.g. '0.2 kg'")
    add_pulses(amount, p)
    add_sigma(p, "'2 s' with --duration")
    add_write_options(p)
    p.set_defaults(func=cmd_use)

    p = sub.add_parser("withdraw", **about("withdraw a pending plan"))
    p.add_argument("--plan", required=True, help="id of the pending plan, e.g. 12")
    add_write_options(p)
    p.set_defaults(func=cmd_withdraw)

    p = sub.add_parser("correct", **about("supersede an earlier entry with corrected fields (the original stays)"))
    p.add_argument("--entry", required=True, help="id of the entry to correct, e.g. 7")
    p.add_argument("--reason", help="why the entry was wrong (required), e.g. 'telemetry recount'")
    p.add_argument("--engine", help="corrected engine id, e.g. rcs")
    p.add_argument("--dv", help="corrected delta-v, e.g. '1.75 m/s'")
    p.add_argument("--duration", help="corrected duration, e.g. '94 s'")
    p.add_argument("--propellant", help="corrected propellant, e.g. '2.35 kg'")
    p.add_argument("--delta", help="corrected signed mass change, e.g. '-34.2 kg'")
    p.add_argument("--pulses", help="corrected pulse count of a pulse train, e.g. 1180")
    p.add_argument("--on-time", dest="on_time", help="corrected on-time per pulse, e.g. '45 ms'")
    add_sigma(p)
    add_write_options(p)
    p.set_defaults(func=cmd_correct)


DIMENSION = {"dv": "speed", "duration": "time", "propellant": "mass", "delta": "mass"}


def add_pulses(amount, p) -> None:
    """--pulses N (one of the amounts) with --on-time T per pulse (services.pulses)."""
    amount.add_argument("--pulses", help="a pulse train: number of pulses, e.g. 1200 (with --on-time; "
                                         "propellant = pulses x on-time x thrust/(Isp g0))")
    p.add_argument("--on-time", dest="on_time", help="on-time of each pulse with --pulses, e.g. '50 ms'")


def _pulses(args) -> dict:
    """The pulse-train fields of a burn or use, or nothing (one-line errors from services.pulses)."""
    if getattr(args, "pulses", None) is None and getattr(args, "on_time", None) is None:
        return {}
    from ..services.pulses import parse_count  # noqa: PLC0415

    return {"pulses": parse_count(args.pulses), "on_time": qty(args.on_time, "time", "--on-time")}


def add_sigma(p, example: str = "'0.02 m/s' with --dv") -> None:
    p.add_argument("--sigma", help="one standard deviation of the amount, in the amount's dimension "
                                   f"(e.g. {example}); default: see docs/uncertainty.md")


def sigma(args, field: str | None) -> float | None:
    """--sigma in SI, read in the dimension of the amount it belongs to."""
    if getattr(args, "sigma", None) is None:
        return None
    if field is None:
        from ..errors import InputError  # noqa: PLC0415

        raise InputError("--sigma: give the amount it belongs to (--dv, --duration, --propellant or --delta)")
    return qty(args.sigma, DIMENSION[field], "--sigma")


def _given(args, fields=("dv", "duration", "propellant", "delta")) -> str | None:
    return next((f for f in fields if getattr(args, f, None) is not None), None)


def _train(args) -> str | None:
    """A pulse train's --sigma is in seconds of its total on-time (it is stored as a duration)."""
    return "duration" if getattr(args, "pulses", None) is not None else None


def _report(stored: dict, warnings: list[str], as_json: bool) -> int:
    if as_json:
        dump_json({"id": stored["seq"], "kind": stored["kind"], "hash": stored["hash"], "warnings": warnings})
    else:
        console().print(f"recorded entry {stored['seq']} ({stored['kind']})")
    if not as_json:
        warn(warnings)
    return 0


def cmd_init(args) -> int:
    from ..services import craftfile  # noqa: PLC0415 - yaml only when a craft file is read

    craft = craftfile.load_craft(args.craft)
    path = resolve_path(args.ledger)
    lf = create(path, craft, by=args.by)
    if args.json:
        dump_json({"ledger": lf.path, "craft": craft.name})
    else:
        console().print(f"created ledger {esc(lf.path)} for {esc(craft.name)}")
    return 0


def _record(args, kind: str, data: dict) -> int:
    led = open_ledger(args)
    stored, warnings = led.record(kind, data, at=when(args), by=args.by, note=args.note)
    return _report(stored, warnings, args.json)


def cmd_burn(args) -> int:
    return _record(args, BURN, {"engine": args.engine, "dv": qty(args.dv, "speed", "--dv"),
                                "duration": qty(args.duration, "time", "--duration"),
                                "propellant": qty(args.propellant, "mass", "--propellant"), "plan": args.plan,
                                "sigma": sigma(args, _given(args) or _train(args)), **_pulses(args)})


def cmd_plan(args) -> int:
    return _record(args, PLAN, {"engine": args.engine, "dv": qty(args.dv, "speed", "--dv")})


def cmd_mass(args) -> int:
    return _record(args, MASS, {"delta": qty(args.delta, "mass", "--delta", signed=True),
                                "sigma": sigma(args, "delta")})


def cmd_use(args) -> int:
    return _record(args, USE, {"engine": args.engine, "duration": qty(args.duration, "time", "--duration"),
                               "propellant": qty(args.propellant, "mass", "--propellant"),
                               "sigma": sigma(args, _given(args) or _train(args)), **_pulses(args)})


def cmd_withdraw(args) -> int:
    return _record(args, WITHDRAW, {"plan": args.plan})


def cmd_correct(args) -> int:
    changes = {"at": when(args), "note": args.note, "engine": args.engine,
               "dv": qty(args.dv, "speed", "--dv"), "duration": qty(args.duration, "time", "--duration"),
               "propellant": qty(args.propellant, "mass", "--propellant"),
               "delta": qty(args.delta, "mass", "--delta", signed=True)}
    if args.pulses is not None or args.on_time is not None:
        changes.update(_pulses(args))
    led = open_ledger(args)
    snap = None
    if args.sigma is not None:
        field = _given(args)
        if field is None:  # the sigma belongs to the amount the entry already has
            snap = led.snapshot()
            field = _current_amount(snap, args.entry)
            if field is None:
                from ..errors import InputError  # noqa: PLC0415

                raise InputError(f"--entry: entry {args.entry} has no measured amount for --sigma to belong to")
        changes["sigma"] = sigma(args, field)
    stored, warnings = led.correct(args.entry, changes, reason=args.reason, by=args.by, snap=snap)
    return _report(stored, warnings, args.json)


def _current_amount(snap, target) -> str | None:
    """The amount field (dv, duration, propellant, delta) entry ``target`` has after its corrections."""
    try:
        seq = int(str(target).lstrip("#"))
    except ValueError:
        return None
    by_seq = {e.seq: e for e in snap.entries}
    while seq in by_seq and by_seq[seq].kind == "correct":
        seq = int(by_seq[seq].data["entry"])
    entry = snap.resolved.effective.get(seq)
    return None if entry is None else next((f for f in DIMENSION if entry.get(f) is not None), None)
