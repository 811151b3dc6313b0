"""``propledger demo``: a fresh ledger from a bundled scenario, in a temporary folder, then opened."""
from __future__ import annotations

import os
import tempfile

from ..errors import InputError
from .common import plain

DEFAULT = "geo-comsat"


def register(sub) -> None:
    p = sub.add_parser("demo", help="build a fresh ledger from a bundled scenario and open it")
    p.add_argument("--scenario", default=DEFAULT, help=f"bundled scenario (default {DEFAULT}); 'list' lists them")
    p.add_argument("--folder", help="where to put the demo ledger (default: a new temporary folder)")
    p.add_argument("--print", dest="print_only", action="store_true", help="print status and log instead of the console")
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
    path = os.path.join(folder, f"{args.scenario}.ledger.json")
    scenario.build(found[args.scenario], path)
    args.ledger = path
    print(plain(f"demo ledger: {path}  (use --ledger {path} with any command)"))
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
