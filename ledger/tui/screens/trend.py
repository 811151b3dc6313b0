"""Trend: propellant (total and per tank) and dv free per engine over the ledger's history.

The samples come from ``services.trend`` (a few hundred points at most, whatever the ledger's size).
"""
from __future__ import annotations

from datetime import datetime, timezone

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

DATE_FORM = "Y-m-d"
MARKERS = ("braille", "dot", "hd", "fhd", "sd")


def _dates(t) -> list[str]:
    return [datetime.fromtimestamp(x, tz=timezone.utc).strftime("%Y-%m-%d") for x in t]


class TrendScreen(Screen):
    BINDINGS = [Binding("escape", "back", "Back"), Binding("t", "back", "Back", show=False),
                Binding("q", "back", "Back", show=False)]
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (120, "-wide")]

    def compose(self) -> ComposeResult:
        yield Static("", id="masthead")
        with Vertical(id="trend-body"):
            yield PlotextPlot(id="plot-prop", classes="panel")
            yield PlotextPlot(id="plot-dv", classes="panel")
        yield KeyBar([("esc", "Back to the ledger", "screen.back"), ("^p", "Commands", "app.command_palette")],
                     id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.show(self.app.snap)

    def show(self, snap: Snapshot) -> None:
        tr = trend_service.trend(snap)
        self.query_one("#masthead", Static).update(
            f" ◆ propledger  {snap.craft.name} │ trend over {tr.events:,} events, {len(tr.t)} samples │ esc back")
        dates = _dates(tr.t)
        prop = self.query_one("#plot-prop", PlotextPlot)
        p = prop.plt
        p.clear_data()
        p.clear_figure()
        p.date_form(DATE_FORM)
        p.title("Propellant remaining, kg")
        p.plot(dates, list(tr.total_kg), label="total", marker="braille")
        for tid, y in tr.tanks.items():
            p.plot(dates, list(y), label=tid, marker="braille")
        prop.refresh()
        dv = self.query_one("#plot-dv", PlotextPlot)
        d = dv.plt
        d.clear_data()
        d.clear_figure()
        d.date_form(DATE_FORM)
        d.title("dv free (reserves kept), m/s")
        for eid, y in tr.dv_free.items():
            d.plot(dates, list(y), label=eid, marker="braille")
        dv.refresh()

    def action_back(self) -> None:
        self.app.pop_screen()
