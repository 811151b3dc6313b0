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
        locator = AutoDateLocator()
        ax.xaxis.set_major_locator(locator)
        ax.xaxis.set_major_formatter(ConciseDateFormatter(locator))
        ax.set_ylabel("dv free (m/s)")
        ax.set_ylim(bottom=0)
        ax.grid(True, lw=0.4, alpha=0.5)
        ax.legend(loc="upper right", fontsize=7, frameon=False)
        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None})
    text = buf.getvalue()
    text = text[text.index("<svg"):]
    head_end = text.index(">")
    return _SIZE_ATTRS.sub("", text[:head_end], count=2) + text[head_end:]

