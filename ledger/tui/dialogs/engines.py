"""Engine detail: each engine's performance and its totals over the ledger (on-time, pulses, throughput)
against the qualified life in the craft file; the life warnings are the one warning list's."""
from __future__ import annotations

from typing import Any, Sequence

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from ...services.views import CAUTION
from ...services.warnings import LIFE_WARN_SHARE
from ..fmt import COLOUR
from .detail import fit_scroll

LIFE_WORD = {"pulses": "pulses", "throughput_kg": "throughput", "on_time_s": "on-time"}


def engines_text(craft, totals: Sequence[dict[str, Any]]) -> Text:
    """One block per engine: Isp, thrust, pulse-mode Isp, then on-time, pulses, throughput and life used."""
    out = Text()
    for eng, t in zip(craft.engines, totals):
        out.append(f"{eng.id}\n", style="bold")
        line = f"  Isp {eng.isp_s:,.1f} s · thrust {eng.thrust_n:g} N · flow {1000 * eng.mass_flow:,.4g} g/s"
        if eng.pulse_isp_factor != 1.0:
            line += f" · pulse Isp {100 * eng.pulse_isp_factor:.0f} % ({eng.isp_s * eng.pulse_isp_factor:,.1f} s)"
        out.append(line + "\n", style="grey70")
        if eng.impulse_bit is not None:
            ib = eng.impulse_bit
            at = f" at {ib.pressure_pa / 1e5:,.1f} bar" if ib.pressure_pa is not None else ""
            out.append(f"  impulse bit {1000 * ib.impulse_ns[0]:,.4g}-{1000 * ib.impulse_ns[-1]:,.4g} mN s over "
                       f"{1000 * ib.on_time_s[0]:,.4g}-{1000 * ib.on_time_s[-1]:,.4g} ms on-time{at}\n", style="grey70")
        out.append(f"  on-time {t['on_time_s']:,.1f} s · pulses {t['pulses']:,} · throughput "
                   f"{t['throughput_kg']:,.3f} kg\n")
        life = t.get("life") or {}
        if not life:
            out.append("  qualified life: not given in the craft file\n", style="grey70")
        for key, limit in life.items():
            used = t["life_used"].get(key, 0.0)
            value = t["pulses"] if key == "pulses" else t[key]
            unit = {"pulses": "", "throughput_kg": " kg", "on_time_s": " s"}[key]
            style = "bold red" if used >= 1 else f"bold {COLOUR['attention']}" if used >= LIFE_WARN_SHARE else ""
            out.append(f"  life {LIFE_WORD[key]}: {value:,.6g} of {limit:,.6g}{unit} ({100 * used:.0f} %)"
                       + ("  ⚠" if used >= LIFE_WARN_SHARE else "") + "\n", style=style)
        out.append("\n")
    return out


class EnginesDialog(ModalScreen):
    """Every engine in full: performance, totals over the ledger, qualified life used."""

    BINDINGS = [Binding("escape", "close", "Close"), Binding("enter", "close", "Close", show=False)]

    def __init__(self, craft, totals: Sequence[dict[str, Any]]) -> None:
        super().__init__(classes="form-dialog")
        self.craft, self.totals = craft, list(totals)

    def compose(self) -> ComposeResult:
        with Vertical(id="form"):
            yield Static(f"Engines ({len(self.totals)}): thruster totals", id="form-title")
            with VerticalScroll(id="detail-body"):
                yield Static(engines_text(self.craft, self.totals), id="engines-detail")
            yield Static(CAUTION, id="form-caution")
            yield Static("esc close", id="form-keys")

    def on_mount(self) -> None:
        self.call_after_refresh(fit_scroll, self, "#detail-body", "#engines-detail", 11)

    def on_resize(self) -> None:
        self.call_after_refresh(fit_scroll, self, "#detail-body", "#engines-detail", 11)

    def action_close(self) -> None:
        self.dismiss(None)
