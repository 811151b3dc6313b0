"""Text for the console: kind labels with symbols (never colour alone), numbers, gauge bars, times."""
from __future__ import annotations

from datetime import datetime, timezone

from rich.text import Text

# Colours by hex: entries of the xterm 256-colour palette (Textual's markup does not know those palette
# names and looks for a spelling suggestion on every redraw). Each colour has one meaning in the console
# (docs/screens/colours.md); glyphs and words always carry the meaning too, colour only repeats it.
COLOUR = {
    "attention": "#ff8700",  # 208 orange: look again before deciding (marginal verdict, stale approval, warnings)
    "reserve": "#5fafff",    # 75 sky blue: propellant held back for the reserves (tank bars and legend)
    "accent": "#5fd7d7",     # 80 teal: panel and form titles, key names (the console theme's accent)
    "free": "#00d700",       # 40 green: free propellant; a feasible verdict, an approval that stands
}
"""The safety caution has its own style (plain text, italic, on the boost background; console.tcss)."""
KIND_TAG = {
    "burn": ("▲", "BURN"), "plan": ("◇", "PLAN"), "mass": ("±", "MASS"),
    "use": ("•", "USE"), "withdraw": ("✕", "WITHDRAW"), "correct": ("✎", "CORRECT"),
    "handover": ("⇄", "HANDOVER"), "gauge": ("◉", "GAUGE"), "rebaseline": ("≡", "REBASELINE"),
    "approve": ("✓", "APPROVE"), "reject": ("⊘", "REJECT"),
}
KIND_NAMES = {"burn": "executed burns", "plan": "plans", "mass": "mass changes", "use": "other uses",
              "withdraw": "withdrawals", "correct": "corrections", "handover": "handovers",
              "gauge": "gauge readings and re-baselines", "approve": "approvals and rejections"}
KIND_GROUPS = {"gauge": ("gauge", "rebaseline"), "approve": ("approve", "reject")}
"""Filter stops that take several kinds (the filter key cycles through KIND_NAMES' keys)."""

APPROVAL_TAG = {
    "approved": ("✓", "approved", "green"), "rejected": ("⊘", "rejected", "bold red"),
    "stale": ("⚠", "approval stale", f"bold {COLOUR['attention']}"), "none": ("·", "undecided", "#9e9e9e"),
    "approved?": ("✓", "approved, re-checking", "green"),
    "unchecked": ("✓", "approved, not re-checked", "yellow"),
}
"""A plan's approval state as glyph, words and colour ('approved?' until the Monte Carlo has said
whether the ledger has moved under the approval)."""


def approval_tag(state: str | None) -> tuple[str, str, str]:
    """Glyph, words and colour of an approval state; a partial one under the craft's two-person rule comes
    as its words, e.g. '1 of 2 approvals' (``services.approvalrule.words``)."""
    state = state or "none"
    if state in APPROVAL_TAG:
        return APPROVAL_TAG[state]
    if state.endswith(" approvals") and " of " in state:
        return ("◐", state, "yellow")
    return APPROVAL_TAG["none"]

# Gauge cells: the glyph carries the meaning, colour only repeats it.
FREE, RESERVE, RESIDUAL, EMPTY = "█", "▒", "░", "·"
LEGEND = f"{FREE} free  {RESERVE} reserve  {RESIDUAL} residual  {EMPTY} used"
GLYPH_STYLE = {FREE: COLOUR["free"], RESERVE: COLOUR["reserve"], RESIDUAL: "#9e9e9e", EMPTY: "#6c6c6c"}


def legend(compact: bool) -> str:
    """Content markup for the gauge legend, each glyph in its bar colour."""
    words = (("free", FREE), ("reserve", RESERVE), ("residual", RESIDUAL), ("used", EMPTY))
    sep = " " if compact else "  "
    gap = "" if compact else " "
    return sep.join(f"[{GLYPH_STYLE[g]}]{g}[/]{gap}[$text]{w}[/]" for w, g in words)


KIND_STYLE = {"burn": "bold bright_cyan", "plan": "bold yellow", "mass": "bold magenta", "use": "cyan",
              "withdraw": "#9e9e9e", "correct": "bold bright_red", "handover": "bold white",
              "gauge": "bold dodger_blue1", "rebaseline": "bold orchid", "approve": "bold #00d700",
              "reject": "bold red"}


def fit(text: Text, width: int) -> Text:
    """Cut a line to ``width`` cells with an ellipsis (a panel never wraps a row into the next)."""
    if text.cell_len <= width:
        return text
    out = text.copy()
    out.truncate(max(1, width - 1))
    out.append("…")
    return out


def kind_text(kind: str, superseded: bool = False) -> Text:
    sym, label = KIND_TAG.get(kind, ("?", kind.upper()))
    style = KIND_STYLE.get(kind, "")
    return Text(f"{sym} {label}", style=style + (" strike dim" if superseded else ""))


PLAN_STATE_TAG = {
    "pending": ("◇", "pending"), "executed": ("◆", "executed"),
    "withdrawn": ("✕", "withdrawn"), "rejected": ("⊘", "rejected"),
}
"""A plan row's kind cell: its own glyph and word per state, so the four never differ by colour alone
(a rejected plan stays pending until withdrawn; its glyph matches the rejection entry's)."""


def plan_state(state: str | None, approval: str | None = None) -> str:
    """'pending', 'executed', 'withdrawn' or 'rejected' (a pending plan whose decision is a rejection)."""
    if state == "pending" and approval == "rejected":
        return "rejected"
    return state if state in PLAN_STATE_TAG else "pending"


def plan_text(state: str | None, approval: str | None = None, superseded: bool = False) -> Text:
    """'◆ PLAN executed' and so on: glyph and word both say the state; colour only repeats the kind."""
    sym, word = PLAN_STATE_TAG[plan_state(state, approval)]
    style = KIND_STYLE["plan"] + (" strike dim" if superseded else "")
    return Text(f"{sym} PLAN {word}", style=style)


def kind_label(kind: str) -> str:
    sym, label = KIND_TAG.get(kind, ("?", kind.upper()))
    return f"{sym} {label}"


def when(iso_text: str | None) -> str:
    """'2026-05-04T13:20:00Z' -> '2026-05-04 13:20' (minutes are enough in a table)."""
    if not iso_text:
        return ""
    return iso_text[:16].replace("T", " ")


def when_t(t: float) -> str:
    return datetime.fromtimestamp(t, tz=timezone.utc).strftime("%Y-%m-%d %H:%M")


def kg(x: float | None, digits: int = 2) -> str:
    return "" if x is None else f"{x:,.{digits}f}"


def gauge(t: dict, width: int) -> Text:
    """One tank as a bar over its load: residual, reserve share, free usable, then what is used."""
    width = max(8, width)
    load = max(t["load_kg"], 1e-12)
    remaining = max(0.0, min(t["remaining_kg"], load))
    residual = min(t["residual_kg"], remaining)
    reserve = min(t["reserve_kg"], remaining - residual)
    free = max(0.0, remaining - residual - reserve)

    def cells(x: float) -> int:
        return int(round(width * x / load))

    n_res, n_rsv, n_free = cells(residual), cells(reserve), cells(free)
    if residual > 0 and n_res == 0:
        n_res = 1
    if reserve > 0 and n_rsv == 0:
        n_rsv = 1
    n_free = min(n_free, width - n_res - n_rsv)
    n_empty = max(0, width - n_res - n_rsv - n_free)
    bar = Text()
    for glyph, n in ((RESIDUAL, n_res), (RESERVE, n_rsv), (FREE, n_free), (EMPTY, n_empty)):
        bar.append(glyph * n, style=GLYPH_STYLE[glyph])
    return bar
