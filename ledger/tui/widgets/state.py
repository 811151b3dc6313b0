"""State panels: tank gauges and engine capability, each nominal figure beside its low bound.

They only draw what the screen hands them (plain dicts from the services); they never read the ledger.
A low bound is None until the Monte Carlo worker has finished for the snapshot on screen: it shows as
'…' while that runs, never as a stale figure from an earlier snapshot.
"""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.widget import Widget

from .. import fmt

PENDING = "…"


def _low(x: float | str | None, digits: int = 1) -> str:
    """A low bound, '…' while it is being computed, or the marker the screen gives ('-' on failure)."""
    return PENDING if x is None else x if isinstance(x, str) else f"{x:,.{digits}f}"


def gauge_line(g: dict[str, Any], wide: bool) -> Text:
    """The tank's latest gauge reading against the bookkeeping at its time (stored figures, no CoolProp):
    '◉ #63 06-10: 81.8±0.5 vs book 82.0 kg -0.4σ ok'."""
    out = Text("  " if wide else "")
    out.append("◉ ", style="dodger_blue1")
    if g.get("phase") == "two-phase":  # a range, no estimate (services.gauging)
        est = f"two-phase {g['min_kg']:,.1f}..{g['max_kg']:,.1f}"
        out.append(f"#{g['id']} {est} kg " + (f"vs book {g['bookkeeping_kg']:,.1f} kg" if wide else ""))
        out.append(" no estimate" if g.get("bookkeeping_in_range") else " ⚠ book outside",
                   style="yellow" if g.get("bookkeeping_in_range") else "bold red")
        return out
    est = f"{g['propellant_kg']:,.1f}±{g['sigma_kg']:,.1f}"
    if wide:
        out.append(f"#{g['id']} {fmt.when(g.get('at'))[5:10]}: {est} vs book {g['bookkeeping_kg']:,.1f} kg ")
    else:
        out.append(f"#{g['id']} {est} kg ")
    out.append(f"{g['difference_sigma']:+.1f}σ", style="bold")
    if g.get("flagged"):
        out.append(" ⚠ BEYOND 3σ" if wide else " ⚠ >3σ", style="bold red")
    else:
        out.append(" ok", style="green")
    if g.get("adopted_by"):
        out.append(f" · ≡ adopted #{g['adopted_by']}" if wide else f" ≡#{g['adopted_by']}", style="orchid")
    if wide and g.get("predicted_pressure_pa") is not None:  # blowdown: the pressure check beside the mass one
        sig = g.get("pressure_difference_sigma")
        out.append(f" · p {g['measured_pressure_pa'] / 1e5:.2f} vs {g['predicted_pressure_pa'] / 1e5:.2f} bar"
                   + (f" {sig:+.1f}σ" if sig is not None else ""), style="grey70")
    return out


class TankGauges(Widget):
    """Each tank: usable and its low bound, a bar of residual / reserve share / free / used, and the latest
    gauge comparison when there is one."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.tanks: list[dict[str, Any]] = []

    def show(self, tanks: list[dict[str, Any]]) -> None:
        """``tanks``: ``browse.tanks`` rows plus ``usable_low_kg`` (None = not known yet) and ``gauge``."""
        self.tanks = tanks
        self.refresh(layout=True)

    def get_content_height(self, container, viewport, width: int) -> int:
        per = 3 if width >= 56 else 2
        return max(1, sum(per + (1 if t.get("gauge") else 0) for t in self.tanks))

    def render(self) -> Text:
        w = max(20, self.size.width)
        wide = w >= 56
        out = Text(no_wrap=True, overflow="ellipsis")
        for t in self.tanks:
            load_usable = max(t["load_kg"] - t["residual_kg"], 1e-12)
            pct = 100.0 * t["usable_kg"] / load_usable
            head = Text(f"{t['id']}", style="bold")
            if wide:
                head.append(f"  ({t['fluid']})", style="grey70")
            fig = Text(f"usable {t['usable_kg']:,.1f} kg ")
            fig.append(f"low {_low(t.get('usable_low_kg'))}", style="bold")
            fig.append(f" {pct:3.0f}%" if wide or len(head.plain) + fig.cell_len + 5 <= w else "")
            head.append(" " * max(1, w - head.cell_len - fig.cell_len))
            head.append_text(fig)
            out.append_text(fmt.fit(head, w))
            out.append("\n")
            tail = f" {t['remaining_kg']:,.1f}/{t['load_kg']:,.0f}"
            if t.get("pressure_pa") is not None:  # a blowdown tank: its predicted pressure now
                tail += f" {t['pressure_pa'] / 1e5:.1f} bar"
            out.append_text(fmt.gauge(t, w - len(tail)))
            out.append(tail, style="grey70")
            out.append("\n")
            if wide:
                out.append(f"  free {t['free_kg']:,.1f} · reserve {t['reserve_kg']:,.1f} · "
                           f"residual {t['residual_kg']:,.1f} kg\n", style="grey70")
            if t.get("gauge"):
                out.append_text(fmt.fit(gauge_line(t["gauge"], wide), w))
                out.append("\n")
        out.rstrip()
        return out


class EngineTable(Widget):
    """dv available, dv free and its low bound per engine, the tank that limits, whether reserves are met,
    and when dv free runs out at the routine rate (nominal and low)."""

    def __init__(self, **kw):
        super().__init__(**kw)
        self.engines: list[dict[str, Any]] = []
        self.reserves: list[dict[str, Any]] = []
        self.forecast: list[dict[str, Any]] = []
        self.summary: str = ""

    def show(self, engines: list[dict[str, Any]], reserves: list[dict[str, Any]],
             forecast: list[dict[str, Any]] | None = None, summary: str = "") -> None:
        """``engines``: status rows plus ``dv_free_low_m_s`` (None = not known yet); ``forecast``: the
        forecast service's engine rows; ``summary``: one line on the uncertainty run (wide panels)."""
        self.engines, self.reserves, self.forecast, self.summary = engines, reserves, forecast or [], summary
        self.refresh(layout=True)

    def on_click(self) -> None:
        """A click opens the engine detail (also in the command palette): totals against qualified life."""
        opener = getattr(self.app, "open_engines", None)
        if opener is not None:
            opener()

    def get_content_height(self, container, viewport, width: int) -> int:
        wide = width >= 56
        extra = (1 if self.reserves else 0) + (1 if self.summary else 0) if wide else 0
        return 1 + len(self.engines) + len(self.forecast) + extra

    def render(self) -> Text:
        w = self.size.width
        wide = w >= 56
        avail = w >= 44
        out = Text(no_wrap=True, overflow="ellipsis")
        a, b = (10, 6) if wide else (9, 5)
        head = f"{'engine' if wide else 'eng':<{b + 1}}" + (f"{'dv avail':>{a}}" if avail else "")
        head += f"{'dv free':>{a}}{'low':>{a - 1}} {'limit':<{b}} " + ("reserves" if wide else "rsv")
        out.append_text(fmt.fit(Text(head, style="bold underline"), w))
        out.append("\n")
        for e in self.engines:
            line = Text(f"{e['engine']:<{b + 1}}" + (f"{e['dv_available_m_s']:>{a},.1f}" if avail else "")
                        + f"{e['dv_free_m_s']:>{a},.1f}")
            line.append(f"{_low(e.get('dv_free_low_m_s')):>{a - 1}}", style="bold")
            line.append(f" {(e['limiting_tank'] or '-'):<{b}} ")
            line.append(("met" if wide else "ok") if e["reserves_met"] else ("NOT MET" if wide else "NO"),
                        style="green" if e["reserves_met"] else "bold red")
            out.append_text(fmt.fit(line, w))
            out.append("\n")
        for f in self.forecast:
            out.append_text(fmt.fit(forecast_line(f, wide), w))
            out.append("\n")
        if wide and self.reserves:
            held = ", ".join(f"{r['id']} {r['dv_m_s']:,.1f} ({r['engine']})" for r in self.reserves)
            out.append_text(fmt.fit(Text(f"held back: {held}", style="grey70"), w))
            out.append("\n")
        if wide and self.summary:
            out.append_text(fmt.fit(Text(self.summary, style="grey70"), w))
        out.rstrip()
        return out


def forecast_line(f: dict[str, Any], wide: bool) -> Text:
    """'↘ rcs runs out 2038-10-14, low 2037-11-02 at 6 m/s/y' (dates only, no clock time)."""
    out = Text("↘ ", style="grey70")
    out.append(f"{f['engine']} ", style="bold")
    if f.get("runs_out") is None:
        out.append("no routine spend" if not f.get("dv_per_year_m_s") else "does not run out")
        return out
    shared = bool(f.get("shares_with"))
    out.append(f"runs out {f['runs_out'][:10]}" if wide else f"{'to' if shared else 'runs out'} {f['runs_out'][:7]}")
    low = f.get("low")
    out.append(", low " if wide or shared else " · low ")
    out.append(PENDING if low is None else (low["runs_out"] or "never")[:10 if wide else 7], style="bold")
    if wide and not f.get("shares_with"):
        out.append(f" at {f['dv_per_year_m_s']:g} m/s/y", style="grey70")
    if f.get("shares_with"):  # both dates assume only their own spend from tanks another engine drains too
        out.append(" · shared tanks" if wide else " · shared", style=fmt.COLOUR["attention"])  # status says why: optimistic
    return out
