"""import and export: manoeuvres from CCSDS OPM/OCM messages and firings from telemetry CSV, exactly
once; the ledger's manoeuvres and mass back to flight dynamics as an OCM."""
from __future__ import annotations

from .common import add_json, console, dump_json, esc, open_ledger, warn
from .helptext import about

FORMATS = ("opm", "ocm", "firings")
GROUPS = ("pass", "orbit", "none")
CAUTION = ("Decision support only: verify against the mission's flight-dynamics system of record, its mission "
           "rules and the responsible engineers.")


def register(sub) -> None:
    p = sub.add_parser("import", **about("record manoeuvres from a CCSDS OPM/OCM (KVN or XML) or firings from a "
                                         "telemetry CSV, exactly once"))
    p.add_argument("file", metavar="FILE", help="the message or CSV file, e.g. plan-0042.ocm or firings-2026-12-02.csv")
    p.add_argument("--format", choices=FORMATS,
                   help="opm, ocm or firings, e.g. --format firings (default: as the message says; firings for a .csv file)")
    p.add_argument("--dry-run", action="store_true", help="show exactly what would be recorded, with every warning; write nothing (e.g. before a real import)")
    p.add_argument("--group", choices=GROUPS, default="pass",
                   help="firings only: sum rows per pass (quiet gap, import.firings.pass_gap), per orbit "
                        "(import.firings.orbit_period) or not at all, e.g. --group orbit; default pass")
    p.add_argument("--engine", help="OPM only (it names no device): the engine of its manoeuvres, e.g. lae")
    p.add_argument("--executed", action="store_true",
                   help="OPM only: its manoeuvres are executed burns, e.g. a reconstruction (default: plans, "
                        "as an OPM's manoeuvre parameters usually are)")
    p.add_argument("--craft", help="take the import: section (devices, firings columns) from this craft file "
                                   "instead of the one the ledger was created with, e.g. craft.yaml")
    p.add_argument("--by", help="who records it, e.g. 'R. Okafor' (default: the operating-system user)")
    add_json(p)
    p.set_defaults(func=cmd_import)

    p = sub.add_parser("export", **about("write the executed and pending manoeuvres and the current mass for "
                                         "flight dynamics (CCSDS OCM)"))
    p.add_argument("--format", choices=("ocm",), default="ocm", help="ocm (the only format), e.g. --format ocm; default ocm")
    p.add_argument("--xml", action="store_true", help="write XML instead of KVN, e.g. for an XML-only flight-dynamics system")
    p.add_argument("--out", required=True, help="file to write, e.g. propledger-mass.ocm (never the ledger)")
    p.add_argument("--force", action="store_true", help="replace --out if it exists, e.g. a nightly export")
    p.add_argument("--originator", default="PROPLEDGER", help="ORIGINATOR in the header, e.g. 'SAT1 OPS'; default PROPLEDGER")
    add_json(p)
    p.set_defaults(func=cmd_export)


def _config(args):
    if not getattr(args, "craft", None):
        return None
    from ..services import craftfile  # noqa: PLC0415

    return dict(craftfile.load_craft(args.craft).extra.get("import") or {})


def reader_for(args):
    from ..services.imports import reader_for as make  # noqa: PLC0415

    return make(args.file, args.format, group=args.group, engine=args.engine, executed=args.executed,
                config=_config(args))


def cmd_import(args) -> int:
    from ..services import imports  # noqa: PLC0415

    led = open_ledger(args)
    prepared = imports.run(led, reader_for(args), dry_run=args.dry_run, by=args.by)
    data = imports.summary(prepared, args.dry_run)
    if args.json:
        dump_json(data)
        return 0
    print_summary(data)
    warn(data["warnings"])
    return 0


def print_summary(data: dict) -> None:
    from ..services.imports import summary_lines  # noqa: PLC0415

    out = console()
    for line in summary_lines(data):
        out.print(esc(line))
    out.print(f"[dim]{CAUTION}[/]")


def cmd_export(args) -> int:
    from ..services import ccsds_export, outpaths  # noqa: PLC0415

    led = open_ledger(args)
    target = outpaths.checked(args.out, led.path, force=args.force)
    snap = led.snapshot()
    text, counts = ccsds_export.ocm_text(snap, xml=args.xml, originator=args.originator)
    outpaths.write_atomic(target, text, force=args.force)
    data = {"out": target, "format": "ocm", "encoding": "xml" if args.xml else "kvn", **counts,
            "caution": CAUTION}
    if args.json:
        dump_json(data)
    else:
        console().print(f"wrote {esc(target)}: {counts['executed']} executed and {counts['planned']} planned "
                        f"manoeuvres, WET_MASS {counts['wet_mass_kg']:.3f} kg, DRY_MASS {counts['dry_mass_kg']:.3f} kg")
        console().print(f"[dim]{CAUTION}[/]")
    return 0
