"""Trend: propellant (total and per tank) and dv free per engine over the ledger's history.

The samples come from ``services.trend`` (a few hundred points at most, whatever the ledger's size).
"""
from __future__ import annotations

from datetime import datetime, timezone

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Static
from textual_plotext import PlotextPlot

from ...services import trend as trend_service
from ...services.ledger import Snapshot
from ..widgets.keybar import KeyBar
from .main import SHORT_CAUTION



def _axis(t) -> tuple[list[float], list[float], list[str]]:
    """x in days since the first sample, with a few ticks labelled by date."""
    t0 = float(t[0]) if len(t) else 0.0
    x = [(float(v) - t0) / 86400.0 for v in t]
    span = x[-1] if x and x[-1] > 0 else 1.0
    ticks = [span * k / 4 for k in range(4)]  # none at the right end: its label would spill past the plot
    labels = [datetime.fromtimestamp(t0 + d * 86400.0, tz=timezone.utc).strftime("%Y-%m-%d") for d in ticks]
    return x, ticks, labels


def _frame(plt, title: str, ticks, labels) -> None:
    plt.clear_data()
    plt.clear_figure()
    plt.title(title)
    plt.xticks(ticks, labels)


class TrendScreen(Screen):
    IS_TREND = True
    BINDINGS = [Binding("escape", "back", "Back"), Binding("t", "back", "Back", show=False),
                Binding("q", "back", "Back", show=False)]
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (120, "-wide")]

    def compose(self) -> ComposeResult:
        yield Static("", id="masthead")
        with Vertical(id="trend-body"):
            yield PlotextPlot(id="plot-prop", classes="panel")
            with Horizontal(id="plot-dv-row"):
                for i, e in enumerate(self.app.snap.craft.engines):
                    yield PlotextPlot(id=f"plot-dv-{i}", classes="panel plot-dv")
        yield KeyBar([("esc", "Back to the ledger", "screen.back"), ("^p", "Commands", "app.command_palette")],
                     id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.show(self.app.snap)

    def show(self, snap: Snapshot) -> None:
        tr = trend_service.trend(snap)
        self.query_one("#masthead", Static).update(
            f" ◆ propledger  {snap.craft.name} │ trend over {tr.events:,} events, {len(tr.t)} samples │ esc back")
        x, ticks, labels = _axis(tr.t)
        prop = self.query_one("#plot-prop", PlotextPlot)
        p = prop.plt
        _frame(p, "Propellant remaining, kg (UTC dates)", ticks, labels)
        p.plot(x, list(tr.total_kg), label="total", marker="hd")
        for tid, y in tr.tanks.items():
            p.plot(x, list(y), label=tid, marker="hd")
        prop.refresh()
        for i, (eid, y) in enumerate(tr.dv_free.items()):  # one chart per engine: scales differ a lot
            dv = self.query_one(f"#plot-dv-{i}", PlotextPlot)
            d = dv.plt
            _frame(d, f"dv free for {eid} (reserves kept), m/s", ticks, labels)
            d.plot(x, list(y), marker="hd")
            dv.refresh()

    def action_back(self) -> None:
        self.app.pop_screen()
