"""The console's fleet screen: one row per craft, sorted by attention, live, Enter opens that craft.

Live without reading every ledger: every ``POLL_S`` the folder is listed and each ledger and its head
record are ``stat``-ed (``FolderSource.stamp``); only a craft whose stamp moved is read again, in a
worker thread (``services.fleet.refresh``), so a write to any craft shows in its row within about a
second. The first load computes the cold rows in a separate ``propledger fleet --json`` process, which
shares them between worker processes (forking worker processes from this one, which runs threads, is not
safe, and spawned ones stalled under the console). An unreadable or broken ledger is a row that says so.
Over a database (``fleetsource.DatabaseSource``) the stamps are the per-craft counts of the server's
notifications, kept by a listener thread: the poll reads no table, and only a notified craft is read again.
"""
from __future__ import annotations

import os
import threading
from typing import Any

from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.widgets import DataTable, Static

from ..services import fleet, fleetsource
from ..services.views import CAUTION
from .widgets.keybar import KeyBar

POLL_S = 0.5
WIDE = 110
KEYS = [("enter", "Open", "app.open_craft"), ("s", "Sort", "app.cycle_sort"),
        ("a", "Attention", "app.toggle_attention"), ("r", "Refresh", "app.refresh_all"),
        ("q", "Quit", "app.quit_fleet")]
SHORT_CAUTION = ("⚠ Decision support only: verify against the mission's flight-dynamics system of record, "
                 "its mission rules and the responsible engineers.")
CSS = """
Screen { layout: vertical; }
#fleet-head { height: auto; background: $primary-darken-2; color: $text; padding: 0 1; }
#fleet-rows { height: 1fr; }
#fleet-why { height: auto; max-height: 4; padding: 0 1; color: $text; }
#caution { height: auto; color: $warning; background: $boost; padding: 0 1; }
"""


NARROW_DROP = 2
"""Below WIDE columns the screen leaves out the mass column (index 2; the line under the table gives the
selected craft's mass) so that every other column fits 80 columns."""
HEADERS = {"mass\nkg": "mass kg", "usable kg\nnom/low": "usable kg", "margin\nlow m/s": "low m/s",
           "runs out\nlow": "runs out", "gauge\ndays": "gauge d", "margin\nnom m/s": "nom m/s",
           "runs out\nnominal": "nominal", "last entry\n(UTC)": "last entry"}


def _cells(row: dict[str, Any], wide: bool) -> list[str]:
    from ..cli.fleet import cells  # noqa: PLC0415 - the same cell text as the command's table
    from rich.text import Text  # noqa: PLC0415

    out = [Text.from_markup(c).plain if c else "" for c in cells(row, wide)]
    out[0] = out[0][:14]
    return out if wide else out[:NARROW_DROP] + out[NARROW_DROP + 1:]


def _headers(wide: bool) -> list[str]:
    from ..cli.fleet import columns  # noqa: PLC0415

    out = [HEADERS.get(c, c) for c in columns(wide)]
    return out if wide else out[:NARROW_DROP] + out[NARROW_DROP + 1:]


def cold_rows(source: fleet.FolderSource) -> list[dict[str, Any]]:
    """Every row: cached ones here, and when several need computing, all of them in a child
    ``propledger fleet --json`` (its processes fill the cores); here, one by one, if that child fails."""
    if len(fleet.stale(source)) >= fleet.SERIAL_BELOW:
        import json  # noqa: PLC0415
        import subprocess  # noqa: PLC0415
        import sys  # noqa: PLC0415

        root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
        env = dict(os.environ, PYTHONPATH=os.pathsep.join(p for p in (root, os.environ.get("PYTHONPATH")) if p))
        env[fleet.ENV] = fleetsource.spec_of(source)  # not on the command line: a database address may hold a password
        proc = subprocess.run([sys.executable, "-m", "ledger", "fleet", "--json", "--sort", "name"],
                              capture_output=True, env=env, stdin=subprocess.DEVNULL)
        if proc.returncode == 0:
            try:
                return json.loads(proc.stdout)["craft"]
            except (ValueError, KeyError):
                pass
    return fleet.rows(source, workers=1)


class FleetApp(App):
    CSS = CSS
    TITLE = "propledger fleet"
    BINDINGS = [Binding("enter", "open_craft", "Open", show=False), Binding("s", "cycle_sort", "Sort", show=False),
                Binding("a", "toggle_attention", "Attention", show=False),
                Binding("r", "refresh_all", "Refresh", show=False), Binding("q", "quit_fleet", "Quit", show=False)]

    def __init__(self, source: fleet.FolderSource, *, margin: float = fleet.DEFAULT_MARGIN_M_S,
                 sort: str = "attention", only_attention: bool = False) -> None:
        super().__init__()
        self.source = source
        self.margin = margin
        self.sort = sort
        self.only_attention = only_attention
        self.rows: dict[str, dict[str, Any]] = {}
        self.shown: list[dict[str, Any]] = []
        self.stamps: dict[str, Any] = {}
        self.loaded = threading.Event()
        self._busy = False
        self._wide: bool | None = None
        self.store_note: str | None = None  # "disconnected ..." while a database fleet's server is away

    def compose(self) -> ComposeResult:
        yield Static("Fleet: reading the ledgers...", id="fleet-head")
        table = DataTable(id="fleet-rows", cursor_type="row", zebra_stripes=True)
        yield table
        yield Static("", id="fleet-why")
        yield KeyBar(KEYS, id="keys")
        yield Static(SHORT_CAUTION, id="caution")

    def on_mount(self) -> None:
        self.query_one(DataTable).focus()
        self._busy = True
        self.run_worker(self._load_all, thread=True, group="fleet")
        self.set_interval(POLL_S, self.poll)

    # --- data in ------------------------------------------------------------------------------------
    def _stamps(self) -> dict[str, Any]:
        live = getattr(self.source, "stamps", None)  # a database: from its notifications, no query
        if live is not None:
            return live()
        return {m: self.source.stamp(m) for m in self.source.members()}

    def _load_all(self) -> None:
        try:
            stamps = self._stamps()  # before reading: a write during the read shows on the next poll
            rows = cold_rows(self.source)
            self.call_from_thread(self._apply, {r["ledger"]: r for r in rows}, stamps, True)
        except Exception as exc:  # noqa: BLE001 - shown, never a traceback
            self.call_from_thread(self.notify, f"cannot read the fleet: {exc}", severity="error", timeout=10)
        finally:
            self._busy = False

    def poll(self) -> None:
        if self._busy or not self.loaded.is_set():
            return
        note = self.source.live_note() if hasattr(self.source, "live_note") else None
        if note != self.store_note:
            self.store_note = note
            self.redraw()
            if note:
                self.notify(note, severity="warning", timeout=8)
        try:
            stamps = self._stamps()
        except Exception:  # noqa: BLE001 - the folder went away for a moment: try again next time
            return
        changed = [m for m, s in stamps.items() if self.stamps.get(m) != s]
        gone = [m for m in self.stamps if m not in stamps]
        if changed or gone:
            self._busy = True
            self.run_worker(lambda: self._refresh(changed, gone, stamps), thread=True, group="fleet")

    def _refresh(self, changed: list[str], gone: list[str], stamps: dict[str, Any]) -> None:
        try:
            rows = dict(self.rows)
            for m in gone:
                rows.pop(m, None)
            for m in changed:
                rows[m] = fleet.refresh(self.source, m)
            self.call_from_thread(self._apply, rows, stamps, False)
        finally:
            self._busy = False

    def _apply(self, rows: dict[str, dict[str, Any]], stamps: dict[str, Any], first: bool) -> None:
        self.rows, self.stamps = rows, stamps
        self.redraw()
        self.loaded.set()

    # --- drawing ------------------------------------------------------------------------------------
    def redraw(self) -> None:
        table = self.query_one(DataTable)
        wide = self.size.width >= WIDE
        keep = self.selected_path()
        self.shown = fleet.view(self.rows.values(), margin=self.margin, sort=self.sort,
                                only_attention=self.only_attention)
        if wide != self._wide:
            table.clear(columns=True)
            table.add_columns(*_headers(wide))
            self._wide = wide
        else:
            table.clear()
        for row in self.shown:
            table.add_row(*_cells(row, wide), key=row["ledger"])
        if keep is not None:
            for i, row in enumerate(self.shown):
                if row["ledger"] == keep:
                    table.move_cursor(row=i)
                    break
        s = fleet.summary(self.shown)
        filt = " · attention only" if self.only_attention else ""
        self.query_one("#fleet-head").update(
            f"Fleet {self.source.label} · {s['craft']} craft · {s['attention']} need attention · "
            f"{s['broken']} broken · {s['unreadable']} unreadable · margin < {self.margin:g} m/s · "
            f"sort {self.sort}{filt}" + (f" · {self.store_note}" if self.store_note else ""))
        self.show_why()

    def selected_row(self) -> dict[str, Any] | None:
        table = self.query_one(DataTable)
        if not self.shown or table.cursor_row is None or not 0 <= table.cursor_row < len(self.shown):
            return None
        return self.shown[table.cursor_row]

    def selected_path(self) -> str | None:
        row = self.selected_row()
        return row["ledger"] if row else None

    def show_why(self) -> None:
        row = self.selected_row()
        text = ""
        if row is not None:
            name = row["craft"] or os.path.basename(row["ledger"])
            if row["state"] == "unreadable":
                text = f"{name}: UNREADABLE: {row['error']}"
            elif row["attention"]:
                text = f"{name}: " + "; ".join(row["attention"])
                if row["warnings"]:
                    text += f" · first warning: {row['warnings'][0]}"
            else:
                text = f"{name}: nothing flagged"
            if row["mass_kg"] is not None:
                text += f" · mass {row['mass_kg']:.1f} kg · usable " + ", ".join(
                    f"{t} {v['usable_kg']:.2f} kg" for t, v in row["tanks"].items())
        self.query_one("#fleet-why").update(text)

    def on_data_table_row_highlighted(self, event) -> None:
        self.show_why()

    def on_data_table_row_selected(self, event) -> None:
        self.action_open_craft()

    def on_resize(self, event) -> None:
        if self.loaded.is_set():
            self.redraw()

    # --- keys ---------------------------------------------------------------------------------------
    def action_open_craft(self) -> None:
        row = self.selected_row()
        if row is None:
            return
        if row["state"] == "unreadable":
            self.notify(f"cannot open it: {row['error']}", severity="error", timeout=10)
            return
        self.exit(("open", fleetsource.address(self.source, row["ledger"])))

    def action_cycle_sort(self) -> None:
        keys = fleet.SORT_KEYS
        self.sort = keys[(keys.index(self.sort) + 1) % len(keys)]
        self.redraw()

    def action_toggle_attention(self) -> None:
        self.only_attention = not self.only_attention
        self.redraw()

    def action_refresh_all(self) -> None:
        if not self._busy:
            self._busy = True
            self.run_worker(self._load_all, thread=True, group="fleet")

    def action_quit_fleet(self) -> None:
        self.exit(None)


def run_fleet(source: fleet.FolderSource, *, margin: float = fleet.DEFAULT_MARGIN_M_S, sort: str = "attention",
              only_attention: bool = False, demo: bool = False) -> int:
    """The fleet screen; Enter opens a craft's console, and leaving that console comes back here."""
    from .app import make_app  # noqa: PLC0415

    while True:
        app = FleetApp(source, margin=margin, sort=sort, only_attention=only_attention)
        app.run()
        choice = app.return_value
        if not choice:
            return 0
        margin, sort, only_attention = app.margin, app.sort, app.only_attention
        craft = make_app(choice[1], demo)
        craft.fleet_folder = fleetsource.spec_of(source)
        craft.run()


__all__ = ["FleetApp", "run_fleet", "CAUTION"]
