"""Every console action once: its key, footer label and command-palette wording (one source for both)."""
from __future__ import annotations

from dataclasses import dataclass

from textual.binding import Binding


@dataclass(frozen=True)
class Action:
    key: str
    name: str          # action_<name> on the main screen
    label: str         # footer
    title: str         # command palette
    help: str
    key_display: str | None = None
    short: str = ""    # footer on narrow terminals (default: the label)

    def __post_init__(self) -> None:
        if not self.short:
            object.__setattr__(self, "short", self.label)


ACTIONS = (
    Action("b", "burn", "Burn", "Log an executed burn", "delta-v, duration or propellant; may execute a plan"),
    Action("p", "plan", "Plan", "Log a planned burn", "engine, delta-v and the planned time"),
    Action("m", "mass", "Mass", "Log a mass change", "signed, e.g. -35 kg for a separation"),
    Action("u", "use", "Use", "Log other propellant use", "attitude control, venting: a duration or a mass"),
    Action("w", "withdraw", "Withdraw", "Withdraw a pending plan", "the plan stays, marked withdrawn"),
    Action("c", "correct", "Correct", "Correct the selected entry", "a new entry supersedes it; the original stays"),
    Action("k", "check", "Check", "Check a manoeuvre", "engine and delta-v or a pending plan; verdict at 99 %; "
           "records nothing"),
    Action("d", "decide", "Decide", "Approve or reject a pending plan",
           "a named person; the check it rests on is recorded with it"),
    Action("g", "gauge", "Gauge", "Gauge a tank from pressure and temperature",
           "preview the estimate against the bookkeeping, then record the reading"),
    Action("r", "rebaseline", "Re-baseline", "Re-baseline a tank from a gauge reading",
           "a named person adopts the reading combined with the bookkeeping"),
    Action("h", "handover", "Handover", "Shift handover", "preview the report, export text/md/html, record it"),
    Action("t", "trend", "Trend", "Show the trend", "propellant per tank and dv free over time"),
    Action("o", "detail", "Open", "Open the selected entry", "all fields, who, when logged, what it drew"),
    Action("a", "alerts", "Alerts", "Show every warning in full", "chain integrity, overdrawn tanks, reserves"),
    Action("slash", "find", "Find", "Find entries", "search id, engine, tank, note, by, reason, time", "/"),
    Action("f", "kinds", "Kinds", "Filter by kind",
           "cycle: all, burns, plans, mass, uses, withdrawals, corrections, gauging, decisions, handovers"),
    Action("q", "quit", "Quit", "Quit the console", "the ledger is already saved"),
)


OFF_BAR = (
    Action("i", "import", "Import", "Import a CCSDS message or firings CSV",
           "OPM/OCM (KVN or XML) or telemetry firings: the dry run first, then recorded exactly once"),
    Action("e", "engines", "Engines", "Show engine detail",
           "each engine's on-time, pulses and throughput against its qualified life (or click the engines panel)"),
)
"""Actions with a key and a palette command but no place on the key bar (it is full at 80 columns)."""


def bindings() -> list[Binding]:
    return [Binding(a.key, a.name, a.label, key_display=a.key_display) for a in ACTIONS + OFF_BAR]
