"""Read commands: status, check, log, verify. Tables by rich, or JSON with --json."""
from __future__ import annotations

import sys

from ..services import approvalrule, uncertainty, views
from ..services.probtext import prob_text
from .approvals import add_confidence_options
from .common import add_json, console, dump_json, esc, open_ledger, qty
from .helptext import about
from .progress import Progress

EXIT_INFEASIBLE = 1
EXIT_MARGINAL = 3
EXIT = {"feasible": 0, "marginal": EXIT_MARGINAL, "infeasible": EXIT_INFEASIBLE}


def register(sub) -> None:
    p = sub.add_parser("status", **about("propellant per tank, delta-v per engine, plans and warnings now"))
    add_confidence_options(p)
    add_json(p)
    p.set_defaults(func=cmd_status)

    p = sub.add_parser("check", **about("check a proposed burn against the capability left (after pending plans)"))
    p.add_argument("--engine", required=True, help="engine id from the craft file, e.g. lae")
    p.add_argument("--dv", required=True, help="proposed delta-v, e.g. '3.2 m/s' (a bare number is m/s)")
    p.add_argument("--approved-only", action="store_true",
                   help="count only approved pending plans as commitments, e.g. to see what is committed")
    add_confidence_options(p)
    add_json(p)
    p.set_defaults(func=cmd_check)

    p = sub.add_parser("log", **about("the entries in replay order with mass after and propellant per tank"))
    p.add_argument("--last", type=int, help="only the last N rows, e.g. 20")
    add_json(p)
    p.set_defaults(func=cmd_log)

    p = sub.add_parser("verify", **about("recompute the hash chain and check the recorded head; exit 1 on any break"))
    add_json(p)
    p.set_defaults(func=cmd_verify)


def cmd_status(args) -> int:
    snap = open_ledger(args).snapshot()
    with Progress("sampling the ledger") as progress:
        data = uncertainty.status_with_confidence(snap, args.confidence, args.samples, args.seed, progress)
    if args.json:
        dump_json(data)
        return 0
    print_status(data)
    return 0


def print_status(data: dict) -> None:
    from rich import box  # noqa: PLC0415
    from rich.table import Table  # noqa: PLC0415

    out = console()
    if data["integrity"] != "intact":
        out.print(f"[bold white on red] INTEGRITY BROKEN [/] [bold red]{esc(data['integrity'])}: the figures below "
                  "replay a ledger changed after it was written; run 'propledger verify' and 'propledger restore'[/]")
    out.print(f"[bold]{esc(data['craft'])}[/]  mass {data['mass_kg']:.2f} kg  entries {data['entries']}  "
              f"chain {esc(data['integrity'])}")
    tanks = Table(title="Tanks", title_justify="left", box=box.SIMPLE_HEAVY)
    low = f"low {100 * data['confidence']:g}%" if "confidence" in data else None
    for col in ("tank", "fluid", "loaded kg", "remaining kg", "residual kg", "usable kg") + ((low,) if low else ()) + (
            "usable %",):
        # no header word cut on an 80-column terminal: a column is at least as wide as its longest word
        tanks.add_column(col, justify="left" if col in ("tank", "fluid") else "right",
                         min_width=max(len(w) for w in col.split()))
    for tid, t in data["tanks"].items():
        pct = 100.0 * t["usable_kg"] / max(t["load_kg"] - t["residual_kg"], 1e-12)
        tanks.add_row(esc(tid), esc(t["fluid"]), f"{t['load_kg']:.2f}", f"{t['remaining_kg']:.3f}",
                      f"{t['residual_kg']:.2f}", f"{t['usable_kg']:.3f}",
                      *((f"{t['usable_low_kg']:.3f}",) if low else ()), f"{pct:.1f}")
    out.print(tanks)
    pressures = [(tid, t) for tid, t in data["tanks"].items() if t.get("pressure_pa") is not None]
    if pressures:
        out.print("Predicted pressure (blowdown): " + "; ".join(
            f"{esc(tid)} {t['pressure_pa'] / 1e5:.2f} bar at {t['pressure_temperature_k'] - 273.15:.1f} degC"
            for tid, t in pressures))
    gauged = {tid: t["gauge"] for tid, t in data["tanks"].items() if t.get("gauge")}
    if gauged:
        table = Table(title="Latest gauge reading per tank, against the bookkeeping then", title_justify="left",
                      box=None, pad_edge=False, header_style="bold")
        for col in ("tank", "date", "gauged kg", "+- kg", "book kg", "diff kg", "sigmas", "verdict"):
            table.add_column(col, justify="left" if col in ("tank", "date", "verdict") else "right")
        for tid, g in gauged.items():
            if g.get("phase") == "two-phase":
                table.add_row(esc(tid), g["at"][:10], f"{g['min_kg']:.1f}..{g['max_kg']:.1f}", "", f"{g['bookkeeping_kg']:.3f}",
                              "", "", "two-phase: no estimate" + ("" if g.get("bookkeeping_in_range") else "; book outside"))
                continue
            verdict = "BEYOND 3 SIGMA" if g["flagged"] else "agrees"
            if g.get("adopted_by"):
                verdict += f"; adopted (entry {g['adopted_by']})"
            table.add_row(esc(tid), g["at"][:10], f"{g['propellant_kg']:.3f}", f"{g['sigma_kg']:.3f}",
                          f"{g['bookkeeping_kg']:.3f}", f"{g['difference_kg']:+.3f}", f"{g['difference_sigma']:+.2f}",
                          f"[bold red]{verdict}[/]" if g["flagged"] else verdict)
        out.print(table)
        for tid, g in gauged.items():
            if g.get("predicted_pressure_pa") is not None:
                sig = g.get("pressure_difference_sigma")
                out.print(f"  {esc(tid)} pressure: measured {g['measured_pressure_pa'] / 1e5:.3f} bar, predicted "
                          f"{g['predicted_pressure_pa'] / 1e5:.3f} bar from the bookkeeping"
                          + (f", {sig:+.2f} sigma" if sig is not None else ""))
    engines = Table(title="Engines", title_justify="left", box=box.SIMPLE_HEAVY)
    for col in ("engine", "dv available m/s", "dv free m/s") + ((low,) if low else ()) + ("limiting tank",):
        engines.add_column(col, justify="left" if col in ("engine", "limiting tank") else "right")
    for eid, e in data["engines"].items():
        engines.add_row(esc(eid), f"{e['dv_available_m_s']:.2f}", f"{e['dv_free_m_s']:.2f}",
                        *((f"{e['dv_free_low_m_s']:.2f}",) if low else ()), esc(e["limiting_tank"]))
    out.print(engines)
    thruster_table(out, data.get("thrusters") or [])
    if low:
        u = data["uncertainty"]
        out.print(f"[dim]{low}: value exceeded with probability {data['confidence']:g} over {u['samples']} samples "
                  f"(seed {u['seed']}); reserves flyable now with {prob_text(u['reserves_probability'], u['samples'])}[/]")
    for line in outage_lines(data.get("mixture_outage") or [], data.get("confidence")):
        out.print(line)
    if data["reserves"]:
        out.print("Reserves held back: " + "; ".join(
            f"{esc(r['id'])} {r['dv_m_s']:.2f} m/s on {esc(r['engine'])}" for r in data["reserves"]))
    if data["pending_plans"]:
        out.print("Pending plans: " + "; ".join(
            f"#{p['id']} {esc(p['engine'])} {p['dv_m_s']:.3f} m/s at {p['at']}"
            + (f" ({approvalrule.words(p)})" if p.get("approval", "none") != "none" else "") for p in data["pending_plans"]))
    for line in forecast_lines(data.get("forecast") or {}):
        out.print(line)
    for w in data["warnings"]:
        out.print(f"[bold dark_orange]warning:[/] {esc(w)}")
    out.print(f"[dim]{esc(data['caution'])}[/]")


LIFE_WORDS = {"pulses": "pulses", "throughput_kg": "throughput", "on_time_s": "on-time"}


def thruster_table(out, rows: list) -> None:
    """Each engine's use over the whole ledger against its qualified life (``thrusters`` of the JSON);
    a share at the warning level (``LIFE_WARN_SHARE``) in orange, as its warning says."""
    from rich import box  # noqa: PLC0415
    from rich.table import Table  # noqa: PLC0415

    from ..services.warnings import LIFE_WARN_SHARE  # noqa: PLC0415

    if not any(r["on_time_s"] or r["pulses"] or r["throughput_kg"] or r["life"] for r in rows):
        return
    table = Table(title="Thruster use, whole ledger", title_justify="left", box=box.SIMPLE_HEAVY)
    for col in ("engine", "on-time s", "pulses", "throughput kg", "life used"):
        table.add_column(col, justify="left" if col in ("engine", "life used") else "right")
    for r in rows:
        used = []
        for key, share in r["life_used"].items():
            text = f"{LIFE_WORDS.get(key, key)} {100 * share:.0f} %"
            used.append(f"[bold dark_orange]{text}[/]" if share >= LIFE_WARN_SHARE else text)
        table.add_row(esc(r["engine"]), f"{r['on_time_s']:.1f}", f"{r['pulses']:,}", f"{r['throughput_kg']:.3f}",
                      ", ".join(used) or "no limits given")
    out.print(table)


def outage_lines(rows: list, confidence) -> list[str]:
    """One rich line per bipropellant pair: what the tank left over would strand, nominal and at the bound."""
    lines = []
    for r in rows:
        sigma = f" +- {r['mixture_ratio_sigma']:.3f}" if r.get("mixture_ratio_sigma") else ""
        text = (f"Mixture-ratio outage {esc('/'.join(r['tanks']))} ({esc(r['engine'])} at ratio "
                f"{r['mixture_ratio']:.3f}{sigma}): ")
        if r["stranded_tank"]:
            text += (f"{esc(r['runs_out_first'])} runs out first, stranding {r['stranded_kg']:.3f} kg of "
                     f"{esc(r['stranded_tank'])}")
        else:
            text += "none at the nominal ratio"
        if r.get("stranded_high_kg") is not None and isinstance(confidence, (int, float)):
            shares = ", ".join(f"{esc(t)} {100 * v:.0f}%" for t, v in r["stranded_tank_share"].items())
            text += (f"; at {100 * confidence:g}% up to {r['stranded_high_kg']:.3f} kg "
                     f"[dim](tank left over in the samples: {shares})[/]")
        lines.append(text)
    return lines


def forecast_lines(fc: dict) -> list[str]:
    """One rich line per routine engine: the date dv free runs out at its routine rate (and the low bound)."""
    lines = []
    for row in fc.get("engines", []):
        when = row["runs_out"][:10] if row["runs_out"] else "beyond the horizon"
        years = f" ({row['years_left']:.1f} yr)" if row["years_left"] is not None else ""
        text = (f"Lifetime: {esc(row['engine'])} at {row['dv_per_year_m_s']:.2f} m/s/yr runs out of dv free "
                f"[bold]{when}[/]{years}")
        low = row.get("low")
        if low:
            conf = fc.get("confidence")
            level = f" at {100 * conf:g}%" if isinstance(conf, (int, float)) else ""
            text += f"; low bound{level} {low['runs_out'][:10] if low['runs_out'] else 'beyond the horizon'}"
        lines.append(text + f" [dim](from {fc['reference'][:10]}, {esc(fc['reference_basis'])})[/]")
    for note in fc.get("notes", []) if fc.get("engines") else []:
        lines.append(f"[dim]forecast: {esc(note)}[/]")
    return lines


def cmd_check(args) -> int:
    snap = open_ledger(args).snapshot()
    dv = qty(args.dv, "speed", "--dv")
    with Progress("sampling the ledger") as progress:
        data = uncertainty.confidence_check(snap, args.engine, dv, args.confidence, args.approved_only,
                                            args.samples, args.seed, progress)
    if args.json:
        dump_json(data)
    else:
        out = console()
        style = {"feasible": "bold green", "marginal": "bold dark_orange"}.get(data["verdict"], "bold red")
        plans = "approved pending plan(s)" if args.approved_only else "pending plan(s)"
        out.print(f"[{style}]{data['verdict'].upper()}[/]  {esc(args.engine)} {dv:.3f} m/s "
                  f"after {len(data['commitments'])} {plans}")
        out.print(f"reserves intact with {prob_text(data['probability'], data.get('samples'))}; "
                  f"confidence asked {data['confidence']:g}")
        out.print(f"propellant needed {data['propellant_kg']:.3f} kg (" + ", ".join(
            f"{esc(t)} {kg:.3f}" for t, kg in data["propellant_by_tank_kg"].items()) + ")")
        out.print(f"dv free after {data['dv_free_after_m_s']:.2f} m/s (low {data['dv_free_after_low_m_s']:.2f}); "
                  f"{esc(data['reason'])}")
        out.print(f"limiting tank {esc(str(data['limiting_tank'] or '-'))} (runs out first); "
                  f"least margin after reserves: {esc(str(data['least_margin_tank']))}")
        out.print(f"[dim]{esc(data['caution'])}[/]")
    return EXIT[data["verdict"]]


def cmd_log(args) -> int:
    snap = open_ledger(args).snapshot()
    rows = views.log(snap)
    if args.last:
        rows = rows[-args.last:]
    if args.json:
        stored = {r["seq"]: r for r in open_ledger(args).file.records()}
        dump_json([log_json(r, stored.get(r["id"], {})) for r in rows])
        return 0
    print_log(snap.craft, rows)
    return 0


SI_KEYS = {"dv": "dv_m_s", "duration": "duration_s", "propellant": "propellant_kg", "delta": "delta_kg",
           "pressure": "pressure_pa", "temperature": "temperature_k", "volume": "volume_m3",
           "on_time": "on_time_s"}
"""Stored SI fields renamed so each key names its unit (the stored record keeps the short names)."""


def _si_data(data: dict) -> dict:
    """An entry's data with unit-named keys; a correction's changes as an object, its time in ISO 8601."""
    from ..services.timefmt import iso  # noqa: PLC0415

    out = {}
    for k, v in data.items():
        if k == "changes" and isinstance(v, dict):
            v = {SI_KEYS.get(ck, ck): (iso(cv) if ck == "at" and isinstance(cv, (int, float)) else cv)
                 for ck, cv in v.items()}
        out[SI_KEYS.get(k, k) if isinstance(v, (int, float)) and not isinstance(v, bool) else k] = v
    return out


def log_json(row: dict, stored: dict) -> dict:
    """One log row for scripts: the replay figures of the row, everything stored (data in SI with the unit
    in each key, hash, previous hash, host, program), and the human amount text as ``amount``."""
    out = dict(row)
    out["data"] = _si_data(dict(stored.get("data") or {}))
    if isinstance(out["data"].get("changes"), dict):
        out["changes"] = out["data"]["changes"]
    for k in ("hash", "prev", "host", "program"):
        out[k] = stored.get(k)
    if stored.get("on_behalf_of"):  # database store: --by differed from the authenticated user in 'by'
        out["on_behalf_of"] = stored["on_behalf_of"]
    return out


def kind_label(r: dict) -> str:
    """Kind as text (never colour alone): superseded entries carry '~', late ones '+late'."""
    label = r["kind"].upper()
    if r["kind"] == "plan":
        label += f" {r['state']}"
    if r["kind"] == "correct":
        label = f"CORR #{r['corrects']}"
    if r["kind"] in ("approve", "reject", "withdraw") and r.get("plan") is not None:
        label += f" #{r['plan']}"
    if r.get("late"):
        label += " +late"
    return ("~" if r["superseded"] else "") + label


def print_log(craft, rows: list[dict]) -> None:
    from rich import box  # noqa: PLC0415
    from rich.table import Table  # noqa: PLC0415

    out = console()
    wide = out.width >= 120
    tank_ids = craft.tank_ids if out.width >= 100 else []
    table = Table(title=f"{esc(craft.name)}: ledger in replay order (~ superseded)", title_justify="left",
                  pad_edge=False, box=None, header_style="bold")
    cols = ["id", "kind", "at (UTC)", "engine", "amount", "mass after kg", "drawn kg"]
    cols += [f"{t} kg" for t in tank_ids] + (["by", "note"] if wide else [])
    for col in cols:
        right = col.endswith("kg") or col == "id"
        table.add_column(esc(col), justify="right" if right else "left", no_wrap=col not in ("note",),
                         overflow="ellipsis")
    for r in rows:
        drawn = r.get("drawn_kg", {})
        cells = [str(r["id"]), esc(kind_label(r)), r["at"][:16].replace("T", " "), esc(r.get("engine") or ""),
                 esc(r.get("amount", "")), f"{r['mass_after_kg']:.3f}" if "mass_after_kg" in r else "",
                 f"{r['propellant_kg']:.4f}" if r.get("propellant_kg") else ""]
        cells += [f"{drawn[t]:.4f}" if t in drawn else "" for t in tank_ids]
        if wide:
            cells += [esc(r["by"]), esc(r.get("reason") or r.get("note") or "")]
        table.add_row(*cells)
    out.print(table)


def cmd_verify(args) -> int:
    from .integrity import cmd_verify as verify  # noqa: PLC0415 - the chain and head checks live there

    return verify(args)
