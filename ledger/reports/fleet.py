"""The fleet handover laid out as the single-craft report's blocks (``layout.Block``), rendered by the same
text, Markdown and HTML block renderers; HTML adds one overview chart of every craft's margin.

Per craft: its fleet row as key-value pairs, then the executed burns and other entries of its own
handover window (the single-craft report's sections, headed with the craft's name). Nothing here computes.
"""
from __future__ import annotations

from typing import Any, Mapping, Sequence

from . import layout
from .layout import NONE, Block, day, num, when
from .text import clean

FORMATS = ("text", "md", "html")


def _name(row: Mapping[str, Any]) -> str:
    return row["craft"] or row["ledger"].rsplit("/", 1)[-1]


def _row_pairs(row: Mapping[str, Any], rep: Mapping[str, Any] | None) -> tuple[tuple[str, str], ...]:
    if row["state"] == "unreadable":
        return (("State", "UNREADABLE"), ("Ledger", row["ledger"]), ("Error", row["error"] or ""))
    engines = "; ".join(f"{e} {num(v['dv_free_m_s'])} (low {num(v['dv_free_low_m_s'])})" for e, v in row["engines"].items())
    runout = "; ".join(f"{r['engine']} {day(r['runs_out'])} (low {day(r['runs_out_low'])})" for r in row["runout"])
    plans = "; ".join(f"#{p['id']} {p['engine']} {num(p['dv_m_s'], 3)} m/s {p['approval']}, checks {p['verdict_now'] or NONE}"
                      for p in row["pending_plans"])
    gauge = NONE if row["days_since_gauge"] is None else f"{row['days_since_gauge']:.0f} days ago ({day(row['last_gauge_at'])})"
    pairs = [("Attention", "; ".join(row["attention"]) or "nothing flagged"),
             ("Hash chain", row["integrity"]), ("Mass", f"{num(row['mass_kg'])} kg"),
             ("Usable", f"{num(row['usable_kg'], 3)} kg (sum of tank low bounds {num(row['usable_low_kg'], 3)} kg)"),
             ("dv free m/s", engines or NONE),
             ("Margin", f"{num(row['margin_m_s'])} m/s low bound on {row['margin_engine'] or NONE}"),
             ("Runs out", runout or "no routine rate"), ("Pending plans", plans or "none"),
             ("Warnings", str(row["warnings_count"])), ("Last gauge", gauge),
             ("Last entry", f"{when(row['last_entry_at'])} UTC"), ("Ledger", row["ledger"])]
    if rep is not None:
        w = rep["window"]
        pairs.insert(1, ("Window", f"{when(w['start'])} to {when(w['end'])} UTC ({w['basis']})"))
        rec = rep.get("record") or {}
        pairs.append(("Recorded as", f"entry #{rec['entry']}; backup {rec.get('backup') or 'none'}"
                      if rec.get("recorded") else "not recorded (preview)"))
    return tuple(pairs)


def _overview(report: Mapping[str, Any]) -> Block:
    rows = tuple((_name(p["row"])[:20], p["row"]["state"], num(p["row"]["margin_m_s"]),
                  str(len(p["row"]["pending_plans"])), str(p["row"]["warnings_count"]),
                  "; ".join(p["row"]["attention"]) or NONE)
                 for p in report["craft"])
    return Block("table", headers=("craft", "state", "margin m/s", "plans", "warn", "attention"),
                 rows=rows, align="llrrrl")


def blocks(report: Mapping[str, Any]) -> list[Block]:
    s = report["summary"]
    out = [Block("title", f"{report['title']}: {report['fleet']}"), Block("para", report["caution"], style="caution"),
           Block("kv", rows=(("Outgoing", report["from"]), ("Incoming", report["to"]),
                             ("Generated", when(report["generated"]) + " UTC"),
                             ("Craft", f"{s['craft']} ({s['attention']} need attention, {s['broken']} broken chain, "
                                       f"{s['unreadable']} unreadable)"),
                             ("Threshold", f"margin {report['margin_m_s']:g} m/s")))]
    out += [Block("heading", "Fleet overview"), _overview(report),
            Block("chart", data={"fleet": [p["row"] for p in report["craft"]], "margin": report["margin_m_s"]}),
            Block("para", "margin = the lowest dv free low bound among the engines holding a reserve; usable low = "
                          "the sum of the tanks' low bounds.")]
    for part in report["craft"]:
        row, rep = part["row"], part["report"]
        name = _name(row)
        out += [Block("heading", f"{name}"), Block("kv", rows=_row_pairs(row, rep))]
        if part["error"] and row["state"] != "unreadable":
            out.append(Block("para", f"Handover not assembled: {part['error']}", style="warn"))
        if rep is not None:
            for b in layout._burns(rep) + layout._others(rep):
                out.append(Block("heading", f"{name}: {b.text}") if b.kind == "heading" else b)
            if rep["warnings"]:
                out += [Block("heading", f"{name}: warnings"), Block("list", rows=tuple(rep["warnings"]), style="warn")]
    if report["warnings"]:
        out += [Block("heading", "Fleet warnings"), Block("list", rows=tuple(report["warnings"]), style="warn")]
    out += [Block("heading", "Sign-off"),
            Block("signoff", rows=(("Outgoing", report["from"]), ("Incoming", report["to"]))),
            Block("para", report["caution"], style="caution")]
    return out


def margins_svg(rows: Sequence[Mapping[str, Any]], margin: float) -> str | None:
    """One horizontal bar per craft: dv free nominal of the margin engine, its low bound as a darker bar,
    and the attention threshold as a line (matplotlib, drawn like ``chart.svg``)."""
    shown = [r for r in rows if r.get("margin_m_s") is not None]
    if not shown:
        return None
    import matplotlib  # noqa: PLC0415 - heavy; only for the HTML report
    from matplotlib.figure import Figure  # noqa: PLC0415

    from .chart import svg_of  # noqa: PLC0415

    rc = {"svg.fonttype": "none", "svg.hashsalt": "propledger", "text.parse_math": False, "font.size": 8,
          "font.family": "sans-serif"}
    names = [clean(_name(r))[:24] for r in shown]
    low = [float(r["margin_m_s"]) for r in shown]
    nominal = [float(r["engines"][r["margin_engine"]]["dv_free_m_s"]) for r in shown]
    with matplotlib.rc_context(rc):
        fig = Figure(figsize=(7.2, max(1.6, 0.28 * len(shown) + 0.8)), layout="constrained")
        ax = fig.add_subplot()
        y = list(range(len(shown)))
        ax.barh(y, nominal, color="C0", alpha=0.35, label="dv free, nominal")
        ax.barh(y, low, color="C0", label="dv free, low bound")
        ax.axvline(margin, color="C3", lw=1.2, ls="--", label=f"attention threshold {margin:g} m/s")
        ax.set_yticks(y, names)
        ax.invert_yaxis()
        ax.set_xlabel("margin: dv free of the reserve engine (m/s)")
        ax.set_xlim(left=0)
        ax.grid(True, axis="x", lw=0.4, alpha=0.5)
        ax.legend(loc="lower center", bbox_to_anchor=(0.5, 1.0), ncol=3, fontsize=7, frameon=False)
        return svg_of(fig)  # inside the rc context: its SVG settings (text as text) apply


def render(report: Mapping[str, Any], fmt: str) -> str:
    bl = blocks(report)
    if fmt == "text":
        from . import text  # noqa: PLC0415

        lines: list[str] = []
        previous = None
        for b in bl:
            body = text._block(b)
            if body and previous is not None and previous not in ("title", "heading"):
                lines.append("")
            lines += body
            previous = b.kind if body else previous
        return "\n".join(lines) + "\n"
    if fmt == "md":
        from . import markdown  # noqa: PLC0415

        return "\n\n".join("\n".join(p) for p in (markdown._block(b) for b in bl) if p) + "\n"
    from . import html  # noqa: PLC0415

    body = []
    open_section = False
    for b in bl:
        if b.kind == "heading":
            body.append("</section>" if open_section else "")
            body.append("<section>")
            open_section = True
        if b.kind == "chart":
            try:
                drawing = margins_svg(b.data["fleet"], b.data["margin"])
            except ImportError:
                drawing = None
                body.append("<p>Chart not drawn: matplotlib is not installed.</p>")
            if drawing:
                body.append(f"<figure>{drawing}<figcaption>{html.esc('Margin per craft: dv free of the reserve engine, nominal (light) and low bound (dark), against the attention threshold (dashed).')}</figcaption></figure>")
            continue
        body.append(html._block(b))
    if open_section:
        body.append("</section>")
    title = html.esc(f"{report['title']}: {report['fleet']} ({when(report['generated'])} UTC)")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{title}</title>\n<style>{html.CSS}</style>\n</head>\n<body>\n<main>\n"
            + "\n".join(x for x in body if x) + "\n</main>\n</body>\n</html>\n")
