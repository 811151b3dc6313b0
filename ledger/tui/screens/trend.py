"""Trend: propellant (total and per tank) and dv free for one engine at a time over the ledger's history.

The samples come from ``services.trend`` (a few hundred points at most, whatever the ledger's size).
One engine's dv free is shown at a time (``e`` steps to the next): four charts stacked at 80x24 left each
two rows, and their tick labels ran into the dates. The line names are in a legend line above the charts
(each line has its own marker glyph as well as its colour), the titles are in the panel borders, so the
only text inside a chart is its axes.
"""
from __future__ import annotations

from datetime import datetime, timezone

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import Static
from textual_plotext import PlotextPlot

from ...services import trend as trend_service
from ...services.ledger import Snapshot
from ..widgets.keybar import KeyBar
from .main import SHORT_CAUTION

LINE_STYLES = (("•", "green", "#00d700"), ("x", "cyan", "#00d7d7"), ("+", "magenta", "#d700d7"),
               ("o", "blue", "#5f87ff"), ("*", "red", "#ff5f5f"), ("#", "white", "#e4e4e4"))
"""(marker, plotext colour, legend colour) for the propellant lines in order: total, then each tank."""
DV_STYLE = ("•", "green", "#00d700")


def _axis(t) -> tuple[list[float], list[float], list[str]]:
    """x in days since the first sample, with a few ticks labelled by date."""
    t0 = float(t[0]) if len(t) else 0.0
    x = [(float(v) - t0) / 86400.0 for v in t]
    span = x[-1] if x and x[-1] > 0 else 1.0
    ticks = [span * k / 4 for k in range(4)]  # none at the right end: its label would spill past the plot
    labels = [datetime.fromtimestamp(t0 + d * 86400.0, tz=timezone.utc).strftime("%Y-%m-%d") for d in ticks]
    return x, ticks, labels


def _frame(plt, ticks, labels) -> None:
    plt.clear_data()
    plt.clear_figure()
    plt.xticks(ticks, labels)


def legend(names: list[str], styles=LINE_STYLES) -> Text:
    """'• total  x ox  + fuel': marker glyph and name for each line, in the line's colour."""
    out = Text("lines: ")
    for k, name in enumerate(names):
        marker, _, colour = styles[k % len(styles)]
        if k:
            out.append("  ")
        out.append(f"{marker} {name}", style=colour)
    return out


class TrendScreen(Screen):
    IS_TREND = True
    BINDINGS = [Binding("escape", "back", "Back"), Binding("t", "back", "Back", show=False),
                Binding("q", "back", "Back", show=False), Binding("e", "next_engine", "Next engine")]
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (120, "-wide")]

    def __init__(self) -> None:
        super().__init__()
        self.engine = 0
        self.snap: Snapshot | None = None
        self._trend: trend_service.Trend | None = None

    def compose(self) -> ComposeResult:
        yield Static("", id="masthead")
        yield Static("", id="trend-legend")
        with Vertical(id="trend-body"):
            yield PlotextPlot(id="plot-prop", classes="panel")
            yield PlotextPlot(id="plot-dv", classes="panel")
        yield KeyBar([("e", "Next engine", "screen.next_engine"), ("esc", "Back to the ledger", "screen.back"),
                      ("^p", "Commands", "app.command_palette")], id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.show(self.app.snap)

    @property
    def engine_ids(self) -> list[str]:
        return [e.id for e in self.snap.craft.engines] if self.snap else []

    def show(self, snap: Snapshot) -> None:
        if snap is not self.snap or self._trend is None:  # stepping engines reuses the samples
            self._trend = trend_service.trend(snap)
        self.snap, tr = snap, self._trend
        self.engine = min(self.engine, max(0, len(tr.dv_free) - 1))
        self.query_one("#masthead", Static).update(
            f" ◆ propledger  {snap.craft.name} │ trend over {tr.events:,} events, {len(tr.t)} samples │ esc back")
        x, ticks, labels = _axis(tr.t)
        names = ["total", *tr.tanks]
        self.query_one("#trend-legend", Static).update(legend(names))
        prop = self.query_one("#plot-prop", PlotextPlot)
        prop.border_title = "Propellant remaining, kg · UTC dates"
        p = prop.plt
        _frame(p, ticks, labels)
        for k, y in enumerate([tr.total_kg, *tr.tanks.values()]):
            marker, colour, _ = LINE_STYLES[k % len(LINE_STYLES)]
            p.plot(x, list(y), marker=marker, color=colour)
        prop.refresh()
        ids = list(tr.dv_free)
        dv = self.query_one("#plot-dv", PlotextPlot)
        d = dv.plt
        _frame(d, ticks, labels)
        if ids:
            eid = ids[self.engine]
            more = f" · engine {self.engine + 1} of {len(ids)}, e next" if len(ids) > 1 else ""
            dv.border_title = f"dv free for {eid} (reserves kept), m/s{more}"
            d.plot(x, list(tr.dv_free[eid]), marker=DV_STYLE[0], color=DV_STYLE[1])
        dv.refresh()

    def action_next_engine(self) -> None:
        if self.snap is not None and self.engine_ids:
            self.engine = (self.engine + 1) % len(self.engine_ids)
            self.show(self.snap)

    def action_back(self) -> None:
        self.app.pop_screen()
