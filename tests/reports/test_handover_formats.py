"""The handover in text, Markdown and HTML: contents, 80 columns, escaping of hostile text, print CSS."""
from __future__ import annotations

import json
import re
import subprocess
import sys
from html.parser import HTMLParser
from xml.etree import ElementTree

import pytest

from ledger.reports import render
from ledger.reports.chart import svg
from ledger.services import handover
from ledger.services.timefmt import iso

HOSTILE = "<script>alert(1)</script> ]]> [red]x[/] | *b* # h"   # what plan #8's note holds (tests/conftest.py)
RAW_HOSTILE = "\x1b[31mred\x1b[0m\u202e<img src=x onerror=alert(2)>\x07 ]]> & [bold]y[/bold]"
VOID = {"meta", "br", "hr", "img", "input", "link", "col", "wbr"}


@pytest.fixture
def report(two_shifts):
    return handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")


@pytest.fixture
def hostile_report(report):
    """Text that never passed input cleaning (a damaged or edited file): renderers must cope on their own."""
    report = json.loads(json.dumps(report))
    report["burns"][0]["note"] = RAW_HOSTILE
    report["from"] = "Bo <b>\x1b]0;title\x07"
    report["craft"] = "GEO-TEST <i>" + "\u202e"
    report["warnings"].append("warn " + RAW_HOSTILE)
    report["state"]["engines"][0]["id"] = "E" * 120   # too wide for any 80-column table
    report["state"]["tanks"][0]["fluid"] = "MON|3 `x`"  # a pipe inside a table cell
    return report


def one_line(text: str) -> str:
    return re.sub(r"\s+", " ", text)


class Parsed(HTMLParser):
    """Tags, attributes and text of an HTML page, with a check that our own elements nest properly."""

    def __init__(self, page: str):
        super().__init__(convert_charrefs=True)
        self.tags, self.attrs, self.data, self.stack, self.problems = [], [], [], [], []
        self.in_svg = 0
        self.feed(page)
        self.close()

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += attrs
        if tag == "svg":
            self.in_svg += 1
        if tag not in VOID and not self.in_svg:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += attrs

    def handle_endtag(self, tag):
        if tag == "svg":
            self.in_svg -= 1
            return
        if self.in_svg:
            return
        if not self.stack or self.stack.pop() != tag:
            self.problems.append(tag)

    def handle_data(self, data):
        self.data.append(data)

    @property
    def text(self) -> str:
        return "".join(self.data)


def test_text_contents(report, two_shifts):
    text = render(report, "text")
    flat = one_line(text)
    assert "Outgoing: Bo" in flat and "Incoming: Cy" in flat
    assert iso(two_shifts.t1)[:16].replace("T", " ") in flat       # window start
    assert re.search(r"#6 +\S+ \S+ +thr +- +- +0\.500", text)          # the late burn's row
    assert "#6: LOGGED LATE (recorded" in flat
    assert re.search(r"#5 .* #3 +1\.800 +0\.700 +0\.3888 +0\.527", text)  # planned against achieved
    assert "#1: corrected by #7" in flat
    assert "thr at 45.60 m/s/yr" in flat and "runs out" in flat and "thr dv free m/s:" in flat
    assert re.search(r"#4 .* lae +20\.000 +- +feasible", text)
    assert "after 1 other pending plan(s)" in flat
    assert "Hash chain: intact" in flat and report["integrity"]["head_hash"] in flat
    assert report["caution"] in flat
    assert HOSTILE in flat                                           # plain text: shown as typed
    assert "not recorded (preview)" in flat


def test_text_fits_80_columns_even_with_long_and_hostile_text(report, hostile_report):
    for r in (report, hostile_report):
        lines = render(r, "text").splitlines()
        assert max(len(line) for line in lines) <= 80
    text = render(hostile_report, "text")
    assert "\x1b" not in text and "\x07" not in text and "\u202e" not in text
    assert "E" * 60 in text                                          # the long id is wrapped, not cut


def test_markdown_contents_and_escaping(report, hostile_report):
    md = render(report, "md")
    assert md.startswith("# Shift handover: GEO-TEST")
    assert "> **Caution:** " + report["caution"] in md
    assert "| id | at UTC | engine | plan | plan m/s | done m/s | ratio | kg |" in md
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in md and "<script>" not in md
    assert r"\[red\]x\[/\]" in md and r"\*b\*" in md
    bad = render(hostile_report, "md")
    (row,) = [line for line in bad.splitlines() if line.startswith("| ox |")]
    (header,) = [line for line in bad.splitlines() if line.startswith("| tank |")]
    # As many cells as the header (which may carry a low-bound column): the pipe in the fluid is escaped.
    assert len(re.findall(r"(?<!\\)\|", row)) == header.count("|")
    assert r"MON\|3 \`x\`" in row
    assert "\x1b" not in bad and "\u202e" not in bad and "<img" not in bad and "<b>" not in bad
    assert "&lt;img src=x onerror=alert(2)&gt;" in bad


def test_html_is_one_inert_self_contained_page(hostile_report, report):
    for r in (report, hostile_report):
        page = render(r, "html")
        doc = Parsed(page)
        assert doc.problems == [] and doc.stack == []                 # our elements all close in order
        assert "script" not in doc.tags and "img" not in doc.tags and "b" not in doc.tags and "i" not in doc.tags
        assert not [a for a, _ in doc.attrs if a.lower().startswith("on")]
        assert not [v for a, v in doc.attrs if a in ("src", "href") and v and not v.startswith("#")]
        assert "<link" not in page and "@import" not in page
        assert all(ref.startswith("#") for ref in re.findall(r"url\(([^)]*)\)", page))  # only the SVG's own clips
        assert page.count("<svg") == 1                                # the chart is inline
        assert r["caution"] in one_line(doc.text)
    doc = Parsed(render(hostile_report, "html"))
    assert "<img src=x onerror=alert(2)> ]]> & [bold]y[/bold]" in doc.text   # shown, as characters
    assert "\x1b" not in doc.text and "\x07" not in doc.text and "\u202e" not in doc.text
    assert HOSTILE in Parsed(render(report, "html")).text


def test_html_prints_on_a4(report):
    page = render(report, "html")
    style = page[page.index("<style>"):page.index("</style>")]
    assert "@page { size: A4;" in style and "@media print" in style
    assert "break-inside: avoid" in style


def test_optional_sections_in_every_format(two_shifts, optional_sections):
    r = handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy")
    for fmt in ("text", "md", "html"):
        out = render(r, fmt)
        flat = one_line(Parsed(out).text if fmt == "html" else out)
        for expected in ("usable low kg", "dv free low m/s", "approved", "marginal", "probability 0.9700",
                         "Gauging against bookkeeping", "method PVT; gauged kg 210.5; difference kg -0.25",
                         "low bound at 99% confidence", "Low bounds at 99% confidence"):
            assert expected in flat, (fmt, expected)
        if fmt == "text":
            assert max(len(line) for line in out.splitlines()) <= 80


def test_recorded_handover_names_its_entry_and_backup_in_every_format(two_shifts, fake_backup):
    r = handover.record(two_shifts.ledger, handover.assemble(two_shifts.ledger, from_name="Bo", to_name="Cy"))
    for fmt in ("text", "md", "html"):
        flat = one_line(render(r, fmt))
        assert f"entry #9 (hash {r['record']['hash'][:16]})" in flat
        # Text breaks a long path across lines to stay within 80 columns; Markdown escapes its underscores.
        assert two_shifts.ledger.path + ".backup-test" in re.sub(r"\s|\\", "", render(r, fmt))


def test_chart_svg_is_well_formed_and_escapes_names():
    name = "<b>x</b>]]>&"
    series = {name: {"history_t": [0.0, 3.15e7], "history_dv": [100.0, 54.4],
                     "projection_t": [3.15e7, 9.0e7], "projection_dv": [54.4, 0.0],
                     "low_t": [3.15e7, 8.0e7], "low_dv": [48.0, 0.0]}}
    drawing = svg(series)
    root = ElementTree.fromstring(drawing)
    assert root.tag.endswith("svg") and "width" not in root.attrib and "viewBox" in root.attrib
    texts = ["".join(t.itertext()) for t in root.iter() if t.tag.endswith("text")]
    assert f"{name}: recorded" in texts and f"{name}: projection from the low bound" in texts
    assert "<b>" not in drawing
    assert svg({}) is None


def test_text_and_markdown_do_not_load_matplotlib(report, tmp_path):
    path = tmp_path / "report.json"
    path.write_text(json.dumps(report), encoding="utf-8")
    code = ("import json, sys; from ledger.reports import render; r = json.load(open(sys.argv[1])); "
            "render(r, 'text'); render(r, 'md'); print('matplotlib' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code, str(path)], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_chart_axis_stops_at_a_horizon_and_names_dates_beyond():
    """Issue 11 point 5: a run-out centuries away (a small routine rate) squashed the whole history into the
    left edge. The axis now ends at the later of 2 x the soonest nominal run-out span and 30 years; later
    dates are named at the right edge. Times in POSIX seconds; one Julian year = 365.25 d (IAU)."""
    from ledger.reports.chart import horizon  # noqa: PLC0415

    year = 365.25 * 86400.0
    now = 2.0 * year
    series = {"nsk": {"history_t": [0.0, now], "history_dv": [400.0, 300.0],
                      "projection_t": [now, now + 6 * year], "projection_dv": [300.0, 0.0]},
              "ewk": {"history_t": [0.0, now], "history_dv": [60.0, 50.0],
                      "projection_t": [now, now + 400 * year], "projection_dv": [50.0, 0.0]}}
    t0, t1 = horizon(series)
    assert t0 == 0.0 and t1 == now + 30 * year  # 2 x 6 years < 30 years
    root = ElementTree.fromstring(svg(series))
    texts = ["".join(t.itertext()) for t in root.iter() if t.tag.endswith("text")]
    assert any(t.startswith("ewk runs out 2372-") for t in texts)  # 1970 + 402 years, past the axis
    assert not any(t.startswith("nsk runs out") for t in texts)
    long = dict(series, nsk=dict(series["nsk"], projection_t=[now, now + 20 * year]))
    assert horizon(long)[1] == now + 40 * year  # 2 x 20 years > 30 years
    alone = {"ewk": series["ewk"]}  # only the far run-out: the axis stops at 60 years and names the date
    assert horizon(alone)[1] == now + 60 * year
