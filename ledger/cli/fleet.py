"""``propledger fleet``: one row per craft over a folder of ledgers or a PostgreSQL database; the console's
fleet screen in a terminal."""
from __future__ import annotations

import os
import sys

from ..errors import InputError
from ..services import fleet
from .common import add_json, console, dump_json, esc, qty
from .helptext import about


def register(sub) -> None:
    p = sub.add_parser("fleet", **about("every craft in a folder of ledgers or a database on one screen: margins, "
                                         "lifetime, open decisions, integrity"))
    add_fleet_option(p)
    p.add_argument("--sort", choices=fleet.SORT_KEYS, default="attention",
                   help="row order, e.g. margin (lowest first); default attention (broken ledgers, then flagged "
                        "craft, then the rest, each by margin)")
    p.add_argument("--attention", action="store_true",
                   help="only craft that need attention: a warning, an undecided plan, a broken or unreadable "
                        "ledger, or a margin under --margin, e.g. at the start of a shift")
    p.add_argument("--margin", metavar="M/S",
                   help=f"margin threshold for --attention, e.g. '10 m/s' (default {fleet.DEFAULT_MARGIN_M_S:g} m/s; "
                        "the margin is the lowest dv free low bound of the engines holding a reserve)")
    p.add_argument("--print", dest="print_only", action="store_true",
                   help="print the table instead of opening the console's fleet screen, e.g. in a terminal "
                        "without full-screen support")
    add_json(p)
    p.set_defaults(func=cmd_fleet)


def add_fleet_option(p) -> None:
    p.add_argument("--fleet", metavar="DIR|URL",
                   help=f"folder of ledger files (*.json), e.g. --fleet /ops/ledgers, or every craft of a database, "
                        f"e.g. --fleet postgresql://db.ops/ledgers (else ${fleet.ENV})")


def margin_of(args) -> float:
    if getattr(args, "margin", None) is None:
        return fleet.DEFAULT_MARGIN_M_S
    value = qty(args.margin, "speed", "--margin")
    if value is None or value != value or value < 0:
        raise InputError(f"--margin: expected a delta-v of zero or more such as '10 m/s', got {args.margin!r}")
    return value


def cmd_fleet(args) -> int:
    from ..services.fleetsource import open_source  # noqa: PLC0415

    source = open_source(fleet.resolve_folder(args.fleet))
    margin = margin_of(args)
    if not args.json and not args.print_only and sys.stdout.isatty() and sys.stdin.isatty():
        from ..tui.fleet import run_fleet  # noqa: PLC0415 - textual only when the screen opens

        return run_fleet(source, margin=margin, sort=args.sort, only_attention=args.attention)
    rows = fleet.view(fleet.rows(source), margin=margin, sort=args.sort, only_attention=args.attention)
    if args.json:
        dump_json(fleet_json(source, rows, margin, args.sort, args.attention))
        return 0
    print_fleet(source, rows, margin)
    return 0


def fleet_json(source, rows, margin: float, sort: str, only_attention: bool) -> dict:
    from ..services.timefmt import iso, now  # noqa: PLC0415
    from ..services.views import CAUTION  # noqa: PLC0415

    return {"fleet": source.label, "source": source.kind, "at": iso(round(now())), "margin_m_s": margin,
            "sort": sort, "attention_only": only_attention, "summary": fleet.summary(rows), "craft": rows,
            "caution": CAUTION}


def _num(x, fmt: str = ".1f") -> str:
    return "-" if x is None else format(x, fmt)


def _plans(row) -> str:
    plans = row["pending_plans"]
    if not plans:
        return "-"
    waiting = sum(1 for p in plans if p["approval"] in ("none", "stale"))
    bad = sum(1 for p in plans if p["verdict_now"] in ("marginal", "infeasible"))
    return f"{len(plans)}" + (f" {waiting}?" if waiting else "") + (f" {bad}!" if bad else "")


def _runout(row, low: bool) -> str:
    dates = [(r["runs_out_low"] if low else r["runs_out"]) for r in row["runout"]]
    dates = [d for d in dates if d]
    if not row["runout"]:
        return "-"
    return min(dates)[:10] if dates else "beyond"


def cells(row, wide: bool) -> list[str]:
    """One row as table text (also the console screen's cells)."""
    name = row["craft"] or os.path.basename(row["ledger"])
    if row["state"] == "unreadable":
        return [esc(name), "ERROR"] + [""] * (len(columns(wide)) - 2)
    chain = "ok" if row["state"] == "ok" else "BROKEN"
    margin = f"{_num(row['margin_m_s'])} {esc(row['margin_engine'] or '')}".strip() if wide else _num(row["margin_m_s"])
    nominal = row["engines"].get(row["margin_engine"], {}).get("dv_free_m_s") if row["margin_engine"] else None
    gauge = _num(row["days_since_gauge"], ".0f")
    out = [esc(name), chain, _num(row["mass_kg"], ".1f" if wide else ".0f"), f"{_num(row['usable_kg'])}/{_num(row['usable_low_kg'])}",
           margin, _runout(row, True), _plans(row), str(row["warnings_count"]), gauge]
    if wide:
        out[4:4] = [_num(nominal)]
        out[7:7] = [_runout(row, False)]
        out.append((row["last_entry_at"] or "")[:16].replace("T", " "))
    return out


def columns(wide: bool) -> list[str]:
    cols = ["craft", "chain", "mass\nkg", "usable kg\nnom/low", "margin\nlow m/s", "runs out\nlow", "plans",
            "warn", "gauge\ndays"]
    if wide:
        cols[4:4] = ["margin\nnom m/s"]
        cols[7:7] = ["runs out\nnominal"]
        cols.append("last entry\n(UTC)")
    return cols


WIDE = 130
"""Columns from which the table adds the nominal margin, the nominal run-out date and the last entry time."""
LEGEND = ("chain: hash chain ok, BROKEN (changed after writing) or ERROR (unreadable); margin: dv free low "
          "bound of the reserve engine(s); usable low: sum of the tanks' low bounds; "
          "plans: pending, '?' undecided, '!' checks marginal or infeasible now; gauge days: since the last "
          "gauge reading")


def print_fleet(source, rows, margin: float) -> None:
    from rich.table import Table  # noqa: PLC0415

    from ..services.views import CAUTION  # noqa: PLC0415

    out = console()
    wide = out.width >= WIDE
    s = fleet.summary(rows)
    out.print(f"[bold]Fleet[/] {esc(source.label)}: {s['craft']} craft, {s['attention']} need attention "
              f"({s['broken']} broken chain, {s['unreadable']} unreadable; margin threshold {margin:g} m/s)")
    table = Table(box=None, pad_edge=False, header_style="bold", show_edge=False, padding=(0, 1))
    for col in columns(wide):
        table.add_column(col, justify="left" if col in ("craft", "chain", "plans") else "right",
                         no_wrap=True, overflow="ellipsis", max_width=14 if col == "craft" else None)
    for row in rows:
        style = "bold red" if row["state"] != "ok" else ("dark_orange" if row["attention"] else None)
        table.add_row(*cells(row, wide), style=style)
    out.print(table)
    flagged = [r for r in rows if r["attention"]]
    for r in flagged:
        if r["state"] == "unreadable":  # the error names the file
            out.print(f"[bold red]unreadable:[/] {esc(r['error'])}")
            continue
        out.print(f"[bold dark_orange]attention:[/] {esc(r['craft'])}: {esc('; '.join(r['attention']))}")
    out.print(f"[dim]{esc(LEGEND)}[/]")
    out.print(f"[dim]{esc(CAUTION)}[/]")
