"""``propledger demo``: a fresh ledger from a bundled scenario, in a temporary folder, then opened."""
from __future__ import annotations

import os
import shutil
import tempfile

from ..errors import InputError
from .common import plain
from .helptext import about

DEFAULT = "geo-comsat"


def register(sub) -> None:
    p = sub.add_parser("demo", **about("build a fresh ledger from a bundled scenario and open it"))
    p.add_argument("--scenario", default=DEFAULT, help=f"bundled scenario, e.g. {DEFAULT} (the default); 'list' lists them")
    p.add_argument("--folder", help="keep the demo ledger in this folder, e.g. --folder /tmp/mydemo "
                                    "(default: a temporary folder removed on exit)")
    p.add_argument("--fleet", action="store_true",
                   help="build the demo fleet (every bundled craft and two more) and open the fleet screen, "
                        "e.g. with --print for its table")
    p.add_argument("--print", dest="print_only", action="store_true", help="print status and log instead of the console, e.g. in a terminal without full-screen support")
    p.set_defaults(func=cmd_demo)


def cmd_demo(args) -> int:
    from ..services import scenario  # noqa: PLC0415 - yaml and pint only when a scenario is built

    found = scenario.bundled()
    if args.scenario == "list":
        for name in found:
            print(plain(name))
        return 0
    if args.scenario not in found:
        raise InputError(f"--scenario: no bundled scenario '{args.scenario}' (have: {', '.join(found) or 'none'})")
    folder = args.folder or tempfile.mkdtemp(prefix="propledger-demo-")
    os.makedirs(folder, exist_ok=True)
    try:
        if args.fleet:
            return _run_fleet_demo(args, folder)
        return _run_demo(args, found, folder)
    finally:
        if not args.folder:
            shutil.rmtree(folder, ignore_errors=True)


def _run_demo(args, found, folder: str) -> int:
    """Build and show the demo; ``cmd_demo`` removes a temporary folder afterwards."""
    from ..services import scenario  # noqa: PLC0415

    path = os.path.join(folder, f"{args.scenario}.ledger.json")
    scenario.build(found[args.scenario], path)
    args.ledger = path
    args.demo = True
    if args.folder:
        print(plain(f"demo ledger: {path}  (kept, as --folder asked; use --ledger {path} with any command)"))
    else:
        print(plain(f"demo ledger: {path}  (temporary: removed when the demo exits; --folder DIR keeps it)"))
    from .console import open_console  # noqa: PLC0415
    from .reading import cmd_log, cmd_status  # noqa: PLC0415

    if args.print_only:
        from ..services import uncertainty  # noqa: PLC0415

        args.json, args.last = False, 25
        args.confidence, args.samples, args.seed = (uncertainty.DEFAULT_CONFIDENCE, uncertainty.DEFAULT_SAMPLES,
                                                    uncertainty.DEFAULT_SEED)
        cmd_status(args)
        return cmd_log(args)
    return open_console(args)


def _run_fleet_demo(args, folder: str) -> int:
    """The demo fleet in ``folder``: the fleet screen, or with --print its table."""
    from ..services import fleet, scenario  # noqa: PLC0415

    if args.folder and fleet.FolderSource(folder).members():
        raise InputError(f"--folder: {folder} already holds ledgers; give an empty or new folder for the demo fleet")
    scenario.build_fleet(folder)
    kept = "kept, as --folder asked" if args.folder else "temporary: removed when the demo exits"
    print(plain(f"demo fleet: {folder}  ({kept}; use --fleet {folder} with 'propledger fleet')"))
    source = fleet.FolderSource(folder)
    if args.print_only:
        from .fleet import print_fleet  # noqa: PLC0415

        print_fleet(source, fleet.view(fleet.rows(source)), fleet.DEFAULT_MARGIN_M_S)
        return 0
    from ..tui.fleet import run_fleet  # noqa: PLC0415

    return run_fleet(source, demo=True)
