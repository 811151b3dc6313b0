"""The handover dict laid out once as format-neutral blocks; text, Markdown and HTML only add markup.

Laying out once keeps the three formats from drifting apart: a section shown in one is shown in all.
Blocks hold raw strings (user text unescaped); each renderer escapes for its own format. Nothing here
computes: numbers from the service are only formatted.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping
from ..services import approvalrule
from ..services.probtext import prob_text

NONE = "-"


@dataclass(frozen=True)
class Block:
    """kind: title | heading | para | kv | table | list | chart | signoff. ``style``: caution | warn | ''."""

    kind: str
    text: str = ""
    rows: tuple = ()
    headers: tuple[str, ...] = ()
    align: str = ""
    """One letter per column: l or r."""
    style: str = ""
    data: Mapping[str, Any] = field(default_factory=dict)


def num(x: Any, digits: int = 2) -> str:
    return NONE if x is None else f"{x:.{digits}f}"


def when(iso_text: str | None) -> str:
    """ISO 8601 'Z' text shown to the minute: 2026-01-10 00:05."""
    return NONE if not iso_text else iso_text[:16].replace("T", " ")


def day(iso_text: str | None) -> str:
    return NONE if not iso_text else iso_text[:10]


def pct(conf: Any) -> str:
    return f" at {100 * conf:g}% confidence" if isinstance(conf, (int, float)) else ""


def _header(r: Mapping[str, Any]) -> list[Block]:
    w, rec = r["window"], r.get("record") or {}
    if rec.get("recorded"):
        recorded = f"entry #{rec['entry']} (hash {rec['hash'][:16]})"
        backup = rec.get("backup") or "none written (see warnings)"
    else:
        recorded, backup = "not recorded (preview)", NONE
    pairs = [("Craft", r["craft"]), ("Outgoing", r["from"]), ("Incoming", r["to"]),
             ("Window", f"{when(w['start'])} to {when(w['end'])} UTC"), ("Window basis", w["basis"]),
             ("Generated", when(r["generated"]) + " UTC"), ("Ledger", r["ledger"]),
             ("Recorded as", recorded), ("Backup", backup)]
    return [Block("title", f"{r['title']}: {r['craft']}"), Block("para", r["caution"], style="caution"),
            Block("kv", rows=tuple(pairs))]


def _burns(r: Mapping[str, Any]) -> list[Block]:
    out = [Block("heading", "Executed burns in the window")]
    if not r["burns"]:
        return out + [Block("para", "No burn executed or logged in the window.")]
    rows = tuple((f"#{b['id']}", when(b["at"]), b["engine"], NONE if b["plan"] is None else f"#{b['plan']}",
                  num(b["planned_dv_m_s"], 3), num(b["achieved_dv_m_s"], 3), num(b["ratio"], 4),
                  num(b["propellant_kg"], 3)) for b in r["burns"])
    out.append(Block("table", headers=("id", "at UTC", "engine", "plan", "plan m/s", "done m/s", "ratio", "kg"),
                     rows=rows, align="llllrrrr"))
    details = []
    for b in r["burns"]:
        bits = []
        if b["late"]:
            bits.append(f"LOGGED LATE (recorded {when(b['recorded'])})")
        if b["achieved_from"] != "logged dv":
            bits.append(f"dv {b['achieved_from']} at nominal thrust and Isp")
        if b["corrected_by"]:
            bits.append("corrected by " + ", ".join(f"#{c}" for c in b["corrected_by"]))
        bits.append(f"by {b['by']}")
        if b["note"]:
            bits.append(f"note: {b['note']}")
        details.append(f"#{b['id']}: " + "; ".join(bits))
    out.append(Block("list", rows=tuple(details)))
    out.append(Block("para", "ratio = achieved / planned delta-v; kg = propellant used (replay)."))
    return out


def _others(r: Mapping[str, Any]) -> list[Block]:
    out = [Block("heading", "Other entries in the window")]
    if not r["other_entries"]:
        return out + [Block("para", "None.")]
    items = []
    for e in r["other_entries"]:
        line = f"#{e['id']} {when(e['at'])} {e['summary']}; by {e['by']}"
        if e["late"]:
            line += f"; LOGGED LATE (recorded {when(e['recorded'])})"
        if e["note"]:
            line += f"; note: {e['note']}"
        items.append(line)
    return out + [Block("list", rows=tuple(items))]


def _state(r: Mapping[str, Any]) -> list[Block]:
    s = r["state"]
    after = f"after the last event, {when(s['as_of'])} UTC" if s.get("as_of") else "as loaded (no event recorded yet)"
    text = f"Mass {num(s['mass_kg'])} kg (dry {num(s['dry_mass_kg'])} kg) {after}."
    if s.get("confidence") is not None:
        text += f" Low bounds{pct(s['confidence'])}."
    out = [Block("heading", "State now"), Block("para", text)]
    low_t = any("usable_low_kg" in t for t in s["tanks"])
    headers = ("tank", "fluid", "remaining kg", "usable kg") + (("usable low kg",) if low_t else ()) + ("residual kg",)
    rows = tuple((t["id"], t["fluid"], num(t["remaining_kg"], 3), num(t["usable_kg"], 3))
                 + ((num(t.get("usable_low_kg"), 3),) if low_t else ()) + (num(t["residual_kg"], 2),)
                 for t in s["tanks"])
    out.append(Block("table", headers=headers, rows=rows, align="ll" + "r" * (len(headers) - 2)))
    blowdown = [t for t in s["tanks"] if t.get("pressure_pa") is not None]
    if blowdown:
        out.append(Block("para", "Predicted pressure (blowdown, from the bookkeeping): " + "; ".join(
            f"{t['id']} {num(t['pressure_pa'] / 1e5, 2)} bar at {num(t['pressure_temperature_k'] - 273.15, 1)} degC"
            for t in blowdown) + "."))
    low_e = any("dv_free_low_m_s" in e for e in s["engines"])
    headers = ("engine", "dv available m/s", "dv free m/s") + (("dv free low m/s",) if low_e else ()) + ("limiting tank",)
    rows = tuple((e["id"], num(e["dv_available_m_s"]), num(e["dv_free_m_s"]))
                 + ((num(e.get("dv_free_low_m_s")),) if low_e else ()) + (e.get("limiting_tank") or NONE,)
                 for e in s["engines"])
    out.append(Block("table", headers=headers, rows=rows, align="l" + "r" * (len(headers) - 2) + "l"))
    if s["reserves"]:
        out.append(Block("para", "Reserves held back: " + "; ".join(
            f"{x['id']} {num(x['dv_m_s'], 3)} m/s on {x['engine']}" for x in s["reserves"]) + "."))
    return out


LIFE_WORD = {"pulses": "pulses", "throughput_kg": "throughput", "on_time_s": "on-time"}


def _thrusters(r: Mapping[str, Any]) -> list[Block]:
    """Per-thruster totals over the ledger against the craft file's qualified life (services.pulses)."""
    rows_in = r.get("thrusters") or []
    if not rows_in:
        return []
    rows = tuple((t["engine"], num(t["on_time_s"], 1), f"{t['pulses']:,}", num(t["throughput_kg"], 3),
                  ", ".join(f"{LIFE_WORD.get(k, k)} {100 * v:.0f} %" for k, v in t.get("life_used", {}).items())
                  or NONE) for t in rows_in)
    return [Block("heading", "Thruster totals"),
            Block("table", headers=("engine", "on-time s", "pulses", "throughput kg", "qualified life used"),
                  rows=rows, align="lrrrl"),
            Block("para", "On-time as recorded for timed and pulse firings (steady-state equivalent for firings "
                          "logged by delta-v or propellant); life limits from the craft file; a warning at 80 %.")]


def _forecast(r: Mapping[str, Any]) -> list[Block]:
    fc = r.get("forecast") or {}
    out = [Block("heading", "Lifetime at routine rates")]
    if not fc.get("engines"):
        return out + [Block("para", "; ".join(fc.get("notes") or ["no forecast"]) + ".")]
    items = []
    for e in fc["engines"]:
        line = (f"{e['engine']} at {num(e['dv_per_year_m_s'])} m/s/yr: dv free {num(e['dv_free_m_s'])} m/s runs "
                f"out {day(e['runs_out']) if e['runs_out'] else 'beyond the horizon'}")
        if e["years_left"] is not None:
            line += f" ({e['years_left']:.2f} yr)"
        low = e.get("low")
        if low:
            line += (f"; low bound{pct(fc.get('confidence'))}: {num(low['dv_free_m_s'])} m/s, runs out "
                     f"{day(low['runs_out']) if low['runs_out'] else 'beyond the horizon'}")
        items.append(line)
        items.append(f"{e['engine']} dv free m/s: " + " | ".join(
            f"{day(f['at'])} {f['dv_free_m_s']:.1f}" for f in e["figures"]))
    out.append(Block("list", rows=tuple(items)))
    out.append(Block("chart", data={"series": fc.get("series") or {}, "reference": fc["reference"]}))
    notes = [f"Counted from {when(fc['reference'])} UTC ({fc['reference_basis']})."] + list(fc.get("notes") or [])
    return out + [Block("para", " ".join(n if n.endswith(".") else n + "." for n in notes))]


def _plans(r: Mapping[str, Any]) -> list[Block]:
    out = [Block("heading", "Pending plans, each checked afresh")]
    if not r["plans"]:
        return out + [Block("para", "No pending plan.")]
    rows = tuple((f"#{p['id']}", when(p["at"]), p["engine"], num(p["dv_m_s"], 3), (approvalrule.words(p) if p.get("approval") not in (None, "none") else NONE),
                  p["check"].get("verdict", NONE), num(p["check"].get("propellant_kg"), 3),
                  num(p["check"].get("dv_free_after_m_s"))) for p in r["plans"])
    out.append(Block("table", headers=("id", "due UTC", "engine", "dv m/s", "approval", "check", "kg", "free after"),
                     rows=rows, align="lllrllrr"))
    details = []
    for p in r["plans"]:
        c = p["check"]
        line = f"#{p['id']}: {c.get('reason', '')}; after {c.get('commitments', 0)} other pending plan(s)"
        if c.get("limiting_tank"):
            line += f"; limiting tank {c['limiting_tank']} (runs out first)"
        if c.get("probability") is not None:
            line += f"; {prob_text(c['probability'], c.get('samples'), prefix='probability ')}"
        if p.get("overdue"):
            line += "; OVERDUE"
        line += f"; by {p['by']}" + (f"; note: {p['note']}" if p.get("note") else "")
        details.append(line)
    out.append(Block("list", rows=tuple(details)))
    return out + [Block("para", "kg = propellant the plan needs; free after = dv free of its engine (m/s) after the "
                                "other pending plans and this one, reserves held back.")]


def _tail(r: Mapping[str, Any]) -> list[Block]:
    out = []
    if r.get("gauge"):
        out += [Block("heading", "Gauging against bookkeeping"),
                Block("list", rows=tuple(f"{g['tank']}: {g['summary']}" for g in r["gauge"]))]
    out.append(Block("heading", "Warnings"))
    out.append(Block("list", rows=tuple(r["warnings"]), style="warn") if r["warnings"] else Block("para", "None."))
    i = r["integrity"]
    out += [Block("heading", "Integrity"),
            Block("kv", rows=(("Hash chain", i["status"]), ("Entries", str(i["entries"])),
                              ("Head", f"#{i['head_seq']} {i['head_hash']}")))]
    out += [Block("heading", "Sign-off"), Block("signoff", rows=(("Outgoing", r["from"]), ("Incoming", r["to"]))),
            Block("para", r["caution"], style="caution")]
    return out


def blocks(report: Mapping[str, Any]) -> list[Block]:
    """The whole handover, in reading order."""
    return (_header(report) + _burns(report) + _others(report) + _state(report) + _thrusters(report)
            + _forecast(report)
            + _plans(report) + _tail(report))
