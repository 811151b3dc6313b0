"""History and projection of dv free as an SVG chart (matplotlib, imported only when a chart is drawn).

Drawn on a bare ``Figure`` with its SVG canvas, so no pyplot, no GUI backend and no global figure state.
Text stays text in the SVG (svg.fonttype none: small, searchable, prints sharp); maths parsing is off, so
a '$' in an engine name is just a character; ids in the SVG are salted with a fixed string so the same
handover gives the same file.
"""
from __future__ import annotations

import io
import re
from datetime import datetime, timezone
from typing import Mapping, Sequence

from .text import clean

_SIZE_ATTRS = re.compile(r'\s(width|height)="[^"]*"')


def _dates(ts: Sequence[float]) -> list[datetime]:
    return [datetime.fromtimestamp(float(t), tz=timezone.utc).replace(tzinfo=None) for t in ts]


YEAR_S = 365.25 * 86400.0
MIN_HORIZON_S = 30 * YEAR_S
MAX_HORIZON_S = 60 * YEAR_S
"""The axis shows at least 30 years past now (a mission's lifetime scale) and at most 60: a run-out
centuries away at a small routine rate is named at the axis's edge instead of drawn."""


def horizon(series: Mapping[str, Mapping[str, Sequence[float]]]) -> tuple[float, float]:
    """(start, end) of the time axis: from the first point to the later of 2 x the soonest nominal run-out
    span (from now, the projections' start) and 30 years, at most 60 years, and no later than the last
    date drawn. A run-out far beyond (centuries at a small routine rate) would squash the whole history
    into the left edge."""
    starts = [t for s in series.values() for t in (s.get("history_t") or s["projection_t"])[:1]]
    now = min(float(s["projection_t"][0]) for s in series.values())
    last = max(float(t) for s in series.values() for key in ("projection_t", "low_t") for t in (s.get(key) or []))
    nominal = [float(s["projection_t"][-1]) - float(s["projection_t"][0]) for s in series.values()]
    span = min(nominal) if nominal else 0.0  # the soonest nominal run-out sets the scale
    end = min(last, now + min(max(2.0 * span, MIN_HORIZON_S), MAX_HORIZON_S))
    return min(float(t) for t in starts), max(end, now + 1.0)


def svg(series: Mapping[str, Mapping[str, Sequence[float]]]) -> str | None:
    """Inline ``<svg>`` element (no XML prolog, no fixed size) for the forecast series; None if empty."""
    if not series:
        return None
    import matplotlib  # noqa: PLC0415 - heavy; only for the HTML handover
    from matplotlib.dates import AutoDateLocator, ConciseDateFormatter  # noqa: PLC0415
    from matplotlib.figure import Figure  # noqa: PLC0415

    rc = {"svg.fonttype": "none", "svg.hashsalt": "propledger", "text.parse_math": False, "font.size": 8,
          "font.family": "sans-serif"}
    with matplotlib.rc_context(rc):
        fig = Figure(figsize=(7.2, 3.0), layout="constrained")
        ax = fig.add_subplot()
        for i, (engine, s) in enumerate(series.items()):
            name, colour = clean(engine), f"C{i % 10}"
            if s.get("history_t"):
                ax.plot(_dates(s["history_t"]), s["history_dv"], color=colour, lw=1.6, label=f"{name}: recorded")
            ax.plot(_dates(s["projection_t"]), s["projection_dv"], color=colour, lw=1.4, ls="--",
                    label=f"{name}: projection at the routine rate")
            if s.get("low_t"):
                ax.plot(_dates(s["low_t"]), s["low_dv"], color=colour, lw=1.2, ls=":",
                        label=f"{name}: projection from the low bound")
        t0, t1 = horizon(series)
        ax.set_xlim(_dates([t0, t1]))
        beyond = [(clean(engine), s["projection_t"][-1]) for engine, s in series.items()
                  if float(s["projection_t"][-1]) > t1]
        for k, (name, t) in enumerate(beyond):  # dates past the axis are named at its right edge
            day = _dates([t])[0].strftime("%Y-%m-%d")
            ax.annotate(f"{name} runs out {day} \u2192", xy=(1.0, 0.92 - 0.08 * k), xycoords="axes fraction",
                        ha="right", va="top", fontsize=7)
        locator = AutoDateLocator()
        ax.xaxis.set_major_locator(locator)
        ax.xaxis.set_major_formatter(ConciseDateFormatter(locator))
        ax.set_ylabel("dv free (m/s)")
        ax.set_ylim(bottom=0)
        ax.grid(True, lw=0.4, alpha=0.5)
        ax.legend(loc="upper right", fontsize=7, frameon=False)
        return svg_of(fig)  # inside the rc context: its SVG settings (text as text) apply


def svg_of(fig) -> str:
    """A matplotlib figure as inline SVG: no XML prolog, no fixed size (the page scales it), no date (the
    same figure gives the same bytes)."""
    buf = io.StringIO()
    fig.savefig(buf, format="svg", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    head_end = text.index(">")
    return _SIZE_ATTRS.sub("", text[:head_end], count=2) + text[head_end:]

