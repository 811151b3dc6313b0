"""The main view: state on one side (tanks, engines, watch list), the ledger window on the other.

Wide terminals put the two side by side; narrow ones stack a compact state strip above the ledger.
The screen is handed each new snapshot by the app and keeps the user's place in the ledger across them.
"""
from __future__ import annotations

from datetime import datetime, timezone

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import Container, Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Input, Label, Static

from ...services import browse, views
from ...services.ledger import Snapshot
from .. import actions, fmt
from ..lows import panel_inputs, plan_verdicts, shown_warnings
from ..widgets.keybar import KeyBar
from ..widgets.state import EngineTable, TankGauges
from ..widgets.grid import LedgerGrid
from ..widgets.watch import WatchList
from ..widgets.window import Window, cells, columns

KIND_CYCLE = (None, "burn", "plan", "mass", "use", "withdraw", "correct", "gauge", "approve", "handover")
KEYS = [(a.key_display or a.key, a.label, f"screen.{a.name}", a.short) for a in actions.ACTIONS] + [
    ("^p", "Commands", "app.command_palette", "Menu")]
SHORT_CAUTION = ("⚠ Decision support only: verify against the mission's flight-dynamics system of record, "
                 "its mission rules and the responsible engineers.")


NARROW_GRID = 120
"""Below this many columns the ledger grid drops the year and shortens 'engine', so that the status and
'by' columns still fit beside the per-tank columns (a 160-column terminal gives the grid about 107)."""

def one_year(ix) -> bool:
    """True when every entry falls in one calendar year (UTC): only then may a narrow grid drop the year."""
    if ix is None or not ix.keys:
        return True
    first, last = (datetime.fromtimestamp(ix.keys[i][0], tz=timezone.utc).year for i in (0, -1))
    return first == last


class MainScreen(Screen):
    HORIZONTAL_BREAKPOINTS = [(0, "-narrow"), (120, "-wide")]
    BINDINGS = actions.bindings()

    def __init__(self) -> None:
        super().__init__(id="main")
        self.snap: Snapshot | None = None
        self.status: dict | None = None
        self.approvals: dict[int, str] = {}
        self.verified = False
        self.ix: browse.LogIndex | None = None
        self.window = Window()
        self.kind_filter: str | None = None
        self.find_text = ""
        self._find_timer = None

    def compose(self) -> ComposeResult:
        yield Static("", id="masthead")
        with Container(id="body"):
            with Container(id="state-pane"):
                with Vertical(id="tanks-box", classes="panel"):
                    yield TankGauges(id="tanks")
                with Vertical(id="side"):
                    with Vertical(id="engines-box", classes="panel"):
                        yield EngineTable(id="engines")
                    with Vertical(id="watch-box", classes="panel"):
                        yield WatchList(id="watch")
            with Vertical(id="ledger-pane", classes="panel"):
                with Horizontal(id="findbar"):
                    yield Label("find ", id="find-label")
                    yield Input(placeholder="words in id, kind, engine, note, by, reason, time; Enter",
                                id="find", compact=True)
                yield LedgerGrid(id="ledger")
        yield KeyBar(KEYS, id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.query_one("#engines-box").border_title = "Engines · m/s"
        self.query_one("#watch-box").border_title = "Watch"
        self.query_one(LedgerGrid).focus()
        self.app.main_ready()

    # --- data in ---------------------------------------------------------------------------------
    def show(self, snap: Snapshot, ix: browse.LogIndex, verified: bool) -> None:
        """Redraw every panel from a new snapshot, keeping the ledger window's place and cursor."""
        self.snap, self.ix = snap, ix
        self.status = st = views.status(snap)
        self.verified = verified
        chain = "chain ✓" if snap.integrity is None and verified else "chain …" if snap.integrity is None \
            else "chain ✗ BROKEN"
        parts = [f"mass {st['mass_kg']:,.2f} kg", f"{st['entries']:,} entries", chain]
        if st["warnings"]:
            parts.insert(0, f"⚠ {len(st['warnings'])} warning{'s' if len(st['warnings']) > 1 else ''}")
        parts += [f"{len(st['pending_plans'])} pending", f"last event {fmt.when(st['as_of']) or '-'} UTC", snap.path]
        self.masthead(st["craft"], parts)
        self.draw_state()
        self.refill(keep_place=True)

    def draw_state(self) -> None:
        """Tanks, engines and watch list from the status and whatever the low-bound worker has so far."""
        snap, st, lows = self.snap, self.status, self.app.lows
        if snap is None:
            return
        tanks, engines, forecast, self.approvals = panel_inputs(snap, st, browse.tanks(snap), lows)
        self.query_one(TankGauges).show(tanks)
        box = self.query_one("#tanks-box")
        box.border_title = "Tanks  " + fmt.legend(compact=box.size.width < 56)
        self.query_one(EngineTable).show(engines, st["reserves"], forecast, lows.summary())
        self.query_one("#engines-box").border_title = f"Engines · m/s · {lows.title()}"
        if snap.integrity is not None:
            chain = ("✗", f"BROKEN: {snap.integrity}", "bold red")
        elif not self.verified:
            chain = ("…", f"checking {len(snap.entries):,} links", "yellow")
        else:
            chain = ("✓", f"intact ({len(snap.entries):,} links)", "green")
        warnings = [w for w in shown_warnings(st, lows.result) if not w.startswith("INTEGRITY")]
        verdicts = plan_verdicts(lows.result)
        self.query_one(WatchList).show(chain, st["pending_plans"], warnings, self.approvals, verdicts)

    def lows_changed(self) -> None:
        """The low-bound worker moved on: redraw the state panels and the plan rows' approval states."""
        before = dict(self.approvals)
        self.draw_state()
        if self.approvals != before:
            self.draw_rows()

    def masthead(self, craft: str, parts: list[str]) -> None:
        """Title line: as many facts as fit, most important first (nothing cut mid-word)."""
        width = self.size.width or 80
        mast = Text(no_wrap=True)
        mast.append(" ◆ propledger ", style="bold reverse")
        if getattr(self.app, "demo", False):
            mast.append(" DEMO DATA ", style="bold reverse")
        mast.append(f" {craft} ", style="bold")
        for part in parts:
            if mast.cell_len + len(part) + 3 > width:
                break
            mast.append(f"│ {part} ")
        self.query_one("#masthead", Static).update(mast)

    def refill(self, keep_place: bool = True) -> None:
        """Re-select entries with the filters and redraw the window's rows."""
        if self.snap is None:
            return
        table = self.query_one(LedgerGrid)
        kinds = fmt.KIND_GROUPS.get(self.kind_filter, (self.kind_filter,)) if self.kind_filter else None
        sel = browse.select(self.ix, kinds, self.find_text)
        if not keep_place:
            self.window.follow, self.window.anchor = True, None
        self.window.reselect(sel)
        self.window.size = max(3, table.page_rows) if table.size.height > 1 else 20
        self.draw_rows()

    def draw_rows(self) -> None:
        table = self.query_one(LedgerGrid)
        tank_ids = tuple(self.snap.craft.tank_ids)
        narrow = (table.size.width or self.size.width) < NARROW_GRID and one_year(self.ix)
        keep = self.window.cursor_seq
        seqs = self.window.seqs()
        rows = browse.rows(self.snap, self.ix, seqs)
        target = seqs.index(keep) if keep in seqs else len(seqs) - 1
        table.set_page([label for label, _ in columns(tank_ids, narrow)],
                       [(str(r["id"]), cells(r, tank_ids, narrow, self.ix.by_seq[r["id"]].data,
                                             self.approvals.get(r["id"]))) for r in rows], target)
        if seqs:
            self.window.cursor_seq = seqs[target]
        self.update_pager()

    def update_pager(self) -> None:
        """The ledger panel's title says what is shown: which rows of how many, which kinds, the search."""
        w = self.window
        n, total = len(w.sel), len(self.snap.entries) if self.snap else 0
        kind = fmt.KIND_NAMES.get(self.kind_filter, "") if self.kind_filter else ""
        rows = f"{w.start + 1 if n else 0:,}–{w.end:,} of {n:,}" + (f" (of {total:,})" if n != total else "")
        bits = ["Ledger", rows, "newest" if w.follow else "paged back"]
        if kind:
            bits.append(f"only {kind}")
        if self.find_text.strip():
            bits.append(f"find '{self.find_text.strip()}'")
        self.query_one("#ledger-pane").border_title = " · ".join(bits)
        self.query_one("#findbar").display = bool(self.find_text) or self.query_one("#find", Input).has_focus

    # --- ledger window events ---------------------------------------------------------------------
    def on_ledger_grid_edge(self, event: LedgerGrid.Edge) -> None:
        if event.step == 0:  # the table was resized: a page is now a different number of rows
            self.refill()
            return
        table = self.query_one(LedgerGrid)
        before = self.window.end
        self.window.move(event.step)
        if self.window.end == before:
            return
        seqs = self.window.seqs()
        if seqs:  # the row just brought into view: last when moving on, first when moving back
            self.window.cursor_seq = seqs[-1] if event.step > 0 else seqs[0]
        self.draw_rows()
        table.focus()

    def on_ledger_grid_highlighted(self, event: LedgerGrid.Highlighted) -> None:
        self.window.cursor_seq = int(event.key)

    def on_ledger_grid_selected(self, event: LedgerGrid.Selected) -> None:
        self.window.cursor_seq = int(event.key)
        self.action_detail()

    # --- find and filter --------------------------------------------------------------------------
    def on_input_changed(self, event: Input.Changed) -> None:
        if event.input.id != "find":
            return
        if self._find_timer is not None:
            self._find_timer.stop()
        self._find_timer = self.set_timer(0.2, self._apply_find)

    def _apply_find(self) -> None:
        self.find_text = self.query_one("#find", Input).value
        self.refill(keep_place=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        if event.input.id == "find":
            self._apply_find()
            self.query_one(LedgerGrid).focus()
            self.update_pager()

    def key_escape(self) -> None:
        """Esc clears a find, whether the find box or the ledger has the focus."""
        box = self.query_one("#find", Input)
        if box.has_focus or self.find_text or box.value:
            if box.value or self.find_text:
                box.value = ""
                self._apply_find()
            self.query_one(LedgerGrid).focus()
            self.update_pager()

    def action_find(self) -> None:
        self.query_one("#findbar").display = True
        self.query_one("#find", Input).focus()

    def action_kinds(self) -> None:
        i = KIND_CYCLE.index(self.kind_filter)
        self.kind_filter = KIND_CYCLE[(i + 1) % len(KIND_CYCLE)]
        label = fmt.KIND_NAMES.get(self.kind_filter, "all kinds") if self.kind_filter else "all kinds"
        self.notify(f"showing {label}", timeout=2)
        self.refill(keep_place=False)

    # --- actions the app carries out ----------------------------------------------------------------
    def selected(self) -> int | None:
        return self.window.cursor_seq

    def action_burn(self) -> None:
        self.app.open_form("burn")

    def action_plan(self) -> None:
        self.app.open_form("plan")

    def action_mass(self) -> None:
        self.app.open_form("mass")

    def action_use(self) -> None:
        self.app.open_form("use")

    def action_withdraw(self) -> None:
        self.app.open_form("withdraw")

    def action_correct(self) -> None:
        self.app.open_form("correct", self.selected())

    def action_check(self) -> None:
        self.app.open_check()

    def action_import(self) -> None:
        self.app.open_form("import")

    def action_trend(self) -> None:
        self.app.open_trend()

    def action_decide(self) -> None:
        self.app.open_form("decide", self.selected())

    def action_gauge(self) -> None:
        self.app.open_form("gauge")

    def action_rebaseline(self) -> None:
        self.app.open_form("rebaseline", self.selected())

    def action_handover(self) -> None:
        self.app.open_handover()

    def action_detail(self) -> None:
        if self.selected() is not None:
            self.app.open_detail(self.selected())

    def action_alerts(self) -> None:
        self.app.open_alerts()

    def action_engines(self) -> None:
        self.app.open_engines()

    def action_quit(self) -> None:
        self.app.exit()


