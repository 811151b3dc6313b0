"""HTML handover: one self-contained file (inline CSS and SVG, no script, nothing fetched) that prints on A4.

Every piece of user text goes through ``esc``: control characters dropped, then ``html.escape`` with
quotes, so a note can never open a tag, an attribute or a CDATA section. The only markup not written
here is the chart's SVG, which matplotlib writes with its own escaping from cleaned names and numbers.
"""
from __future__ import annotations

import html
from typing import Any, Mapping, Sequence

from .layout import Block, blocks
from .text import clean

CSS = """
@page { size: A4; margin: 14mm 12mm 16mm 12mm; }
* { box-sizing: border-box; }
body { font: 10pt/1.4 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #111; background: #fff;
       max-width: 190mm; margin: 1.5em auto; padding: 0 1em; }
h1 { font-size: 15pt; margin: 0 0 .4em; border-bottom: 2px solid #222; padding-bottom: .2em; }
h2 { font-size: 11.5pt; margin: 1.3em 0 .4em; border-bottom: 1px solid #888; break-after: avoid;
     page-break-after: avoid; }
p, ul { margin: .3em 0; }
ul { padding-left: 1.3em; }
table { border-collapse: collapse; width: 100%; font-size: 9pt; margin: .3em 0 .5em; }
th, td { border: 1px solid #aaa; padding: 2px 5px; vertical-align: top; text-align: left; }
th { background: #e8e8e8; }
td.r, th.r { text-align: right; font-variant-numeric: tabular-nums; }
thead { display: table-header-group; }
tr, li, figure { break-inside: avoid; page-break-inside: avoid; }
dl.kv { display: grid; grid-template-columns: max-content 1fr; gap: 1px 12px; margin: .4em 0; }
dl.kv dt { font-weight: bold; }
dl.kv dd { margin: 0; overflow-wrap: anywhere; }
.caution { border: 2px solid #a00; background: #fff3f3; padding: .4em .6em; font-weight: bold; }
ul.warn li { color: #7a3e00; font-weight: bold; }
figure { margin: .5em 0; }
figure svg { width: 100%; height: auto; display: block; }
figcaption { font-size: 8.5pt; color: #444; }
table.sign td { height: 2.4em; }
@media print {
  body { margin: 0; padding: 0; max-width: none; font-size: 9pt; }
  .caution, th { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


def esc(text: Any) -> str:
    """User text as inert HTML."""
    return html.escape(clean(text), quote=True)


def _table(headers: Sequence[str], rows: Sequence[Sequence[Any]], align: str, cls: str = "") -> str:
    def cell(tag: str, value: Any, a: str) -> str:
        return f'<{tag}{" class=r" if a == "r" else ""}>{esc(value)}</{tag}>'

    head = "".join(cell("th", h, a) for h, a in zip(headers, align))
    body = "".join("<tr>" + "".join(cell("td", c, a) for c, a in zip(row, align)) + "</tr>" for row in rows)
    attr = f' class="{cls}"' if cls else ""
    return f"<table{attr}><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _chart(data: Mapping[str, Any]) -> str:
    series = data.get("series") or {}
    if not series:
        return ""
    try:
        from .chart import svg  # noqa: PLC0415
        drawing = svg(series)
    except ImportError:
        return "<p>Chart not drawn: matplotlib is not installed.</p>"
    caption = ("dv free after each recorded event (solid), then projected at the routine rate (dashed) and from "
               "the low bound where known (dotted).")
    return f"<figure>{drawing}<figcaption>{esc(caption)}</figcaption></figure>" if drawing else ""


def _block(b: Block) -> str:
    if b.kind == "title":
        return f"<h1>{esc(b.text)}</h1>"
    if b.kind == "heading":
        return f"<h2>{esc(b.text)}</h2>"
    if b.kind == "para":
        return f'<p class="caution">Caution: {esc(b.text)}</p>' if b.style == "caution" else f"<p>{esc(b.text)}</p>"
    if b.kind == "kv":
        return '<dl class="kv">' + "".join(f"<dt>{esc(k)}</dt><dd>{esc(v)}</dd>" for k, v in b.rows) + "</dl>"
    if b.kind == "table":
        return _table(b.headers, b.rows, b.align)
    if b.kind == "list":
        cls = ' class="warn"' if b.style == "warn" else ""
        return f"<ul{cls}>" + "".join(f"<li>{esc(item)}</li>" for item in b.rows) + "</ul>"
    if b.kind == "signoff":
        return _table(("Role", "Name", "Signature", "Time (UTC)"), [(r, n, "", "") for r, n in b.rows], "llll",
                      "sign")
    if b.kind == "chart":
        return _chart(b.data)
    return ""


def render(report: Mapping[str, Any]) -> str:
    body: list[str] = []
    open_section = False
    for b in blocks(report):
        if b.kind == "heading":
            body.append("</section>" if open_section else "")
            body.append("<section>")
            open_section = True
        body.append(_block(b))
    if open_section:
        body.append("</section>")
    title = esc(f"{report['title']}: {report['craft']} ({report['window']['end'][:16].replace('T', ' ')} UTC)")
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
            f"<title>{title}</title>\n<style>{CSS}</style>\n</head>\n<body>\n<main>\n"
            + "\n".join(x for x in body if x) + "\n</main>\n</body>\n</html>\n")
