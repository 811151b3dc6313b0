"""The console app: opens a ledger, keeps it live, and carries out what the screens ask.

Loading and reloading run in a worker thread (a 20k-entry ledger takes a good part of a second to
read the first time); the file is polled with one ``stat`` every 0.3 s (a database ledger: a flag its
LISTEN connection raises on the server's NOTIFY), so another process's append shows within a second. Writes go through ``LiveLedger`` (the services' own ``record``/``correct``), and
the panels are redrawn from the snapshot that write leaves behind.
"""
from __future__ import annotations

import dataclasses
import os
import shutil
import threading
import time
from typing import Any, Iterable

from textual.app import App, SystemCommand
from textual.screen import Screen

from ..errors import LedgerError
from ..services import browse
from ..services.ledger import Snapshot, resolve_path
from ..services.live import LiveLedger
from ..store.seam import is_url
from . import actions, fmt
from .dialogs.check import CheckDialog
from .dialogs.decide import DecideForm
from .dialogs.detail import AlertsDialog, DetailDialog
from .dialogs.entries import BurnForm, CorrectForm, MassForm, PlanForm, UseForm, WithdrawForm
from .dialogs.gauge import GaugeForm, RebaselineForm
from .dialogs.importing import ImportForm
from .lows import LowBounds, shown_warnings
from .screens.main import MainScreen

POLL_S = 0.3
FORMS = {"burn": BurnForm, "plan": PlanForm, "mass": MassForm, "use": UseForm, "withdraw": WithdrawForm,
         "correct": CorrectForm, "decide": DecideForm, "gauge": GaugeForm, "rebaseline": RebaselineForm,
         "import": ImportForm}
NEEDS_PENDING = ("withdraw", "decide")


def warm_up_forms() -> None:
    """Load what the forms and the first write need (pint's unit registry, the lock and TinyDB), off the
    screen's thread, so the first entry is not slower than the next ones."""
    from ..store.ledgerfile import prepare_writes  # noqa: PLC0415
    from ..units import registry  # noqa: PLC0415

    prepare_writes()
    registry()


THEME = "propledger-dark"


def console_theme():
    """Textual's dark theme with one meaning per colour: its accent and warning were the same orange, also
    used for the reserve bars and the marginal verdict. Titles and keys get a teal accent; orange is
    kept for what needs a second look (fmt.COLOUR)."""
    from textual.theme import BUILTIN_THEMES  # noqa: PLC0415

    return dataclasses.replace(BUILTIN_THEMES["textual-dark"], name=THEME, accent=fmt.COLOUR["accent"],
                               warning=fmt.COLOUR["attention"])


FLEET_KEY = "v"
"""Opens the fleet screen when a fleet (folder or database) is configured; a palette command too, not in the key bar
(which holds the single-craft actions on two lines at 80 columns)."""


class LedgerConsole(App):
    CSS_PATH = "console.tcss"
    TITLE = "propledger"
    BINDINGS = [(FLEET_KEY, "open_fleet", "Fleet")]

    def __init__(self, path: str, demo: bool = False) -> None:
        super().__init__()
        self.path = path if is_url(path) else os.path.abspath(path)
        self.live = LiveLedger(self.path)
        self.demo = demo                      # invented data: the masthead says DEMO DATA
        self.demo_folder: str | None = None   # a temporary folder this console made, removed on exit
        self.snap: Snapshot | None = None
        self.ix: browse.LogIndex | None = None
        self.main: MainScreen | None = None
        self.timings: dict[str, float] = {}
        self.loaded = threading.Event()      # first snapshot drawn (tests and benchmarks wait on it)
        self._painted_once = threading.Event()
        self._busy = False
        self.store_note: str | None = None    # "disconnected ..." while a database store is unreachable
        self._last_try = 0.0
        self._last_failure = ""
        self.lows = LowBounds(self, self._lows_changed)
        self.register_theme(console_theme())
        self.theme = THEME
        self.fleet_folder: str | None = os.environ.get("PROPLEDGER_FLEET") or None  # the v key's fleet

    # --- opening ------------------------------------------------------------------------------------
    def on_mount(self) -> None:
        self.timings["mounted_at"] = time.perf_counter()
        try:
            found = self.live.file.exists()
        except LedgerError:  # a database that cannot be reached: the main screen shows the error and retries
            found = True
        if found:
            self.start()
        else:
            from .screens.setup import SetupScreen  # noqa: PLC0415 - yaml and scenarios only on first run
            self.push_screen(SetupScreen(self.path))

    def start(self) -> None:
        self.main = MainScreen()
        self.push_screen(self.main)

    def main_ready(self) -> None:
        """The main screen is composed: read the ledger (on this thread: the screen has nothing to show
        before it, and a reader thread would only share the interpreter with the first layout, which made
        the first paint slower), paint, then verify the chain in a worker and watch the file."""
        self.set_interval(POLL_S, self.poll)
        try:
            t = time.perf_counter()
            first = self.live.snapshot(verify=False)
            self.timings["first_read_s"] = time.perf_counter() - t
            self.timings["first_read_done_at"] = time.perf_counter()
            self.apply(first)
        except Exception as exc:  # noqa: BLE001 - shown, never a traceback
            self.failed(exc)
            return
        self._busy = True
        self.run_worker(self._verify_after_paint, thread=True, group="load")

    def ledger_created(self) -> None:
        self.pop_screen()
        self.start()

    def demo_created(self, path: str, folder: str) -> None:
        """A bundled scenario was built in a temporary folder (never at the real ledger's path): open it as
        a demo, and remove the folder when the console exits."""
        self.path, self.live, self.demo, self.demo_folder = path, LiveLedger(path), True, folder
        self.ledger_created()

    def on_unmount(self) -> None:
        if self.demo_folder:
            shutil.rmtree(self.demo_folder, ignore_errors=True)

    def _verify_after_paint(self) -> None:
        """The first paint skipped hashing (big ledgers): verify the chain now and repaint."""
        try:
            self._painted_once.wait(5.0)  # hash after the first paint, not competing with it
            self.call_from_thread(self.apply, self.live.snapshot())
        except Exception as exc:  # noqa: BLE001 - shown, never a traceback
            self.call_from_thread(self.failed, exc)
        finally:
            self._busy = False

    # --- live -----------------------------------------------------------------------------------------
    def poll(self) -> None:
        self._watch_store()
        if self.snap is None and self._last_failure and not self._busy and self.main is not None \
                and time.monotonic() - self._last_try > 2.0:  # the first read failed: try again every 2 s
            self._last_try, self._busy = time.monotonic(), True
            self.run_worker(self._reload, thread=True, group="load")
        elif not self._busy and self.snap is not None and self.live.changed():
            self._busy = True
            self.run_worker(self._reload, thread=True, group="load")

    def _watch_store(self) -> None:
        """Say so while the database cannot be reached (a ledger file has no such state), and when it is back."""
        note = self.live.store_note()
        if note == self.store_note:
            return
        was, self.store_note = self.store_note, note
        if note is not None:
            if was is None:
                self.notify(note, title="disconnected", severity="error", timeout=24 * 3600)
            self.sub_title = "DISCONNECTED: reconnecting"
        else:
            self.clear_notifications()
            self.sub_title = ""
            self.notify("reconnected to the database; entries re-read", timeout=6)

    def _reload(self) -> None:
        try:
            t = time.perf_counter()
            snap = self.live.snapshot()
            self.timings["reload_s"] = time.perf_counter() - t
            self.call_from_thread(self.apply, snap)
        except Exception as exc:  # noqa: BLE001
            self.call_from_thread(self.failed, exc)
        finally:
            self._busy = False

    def failed(self, exc: Exception) -> None:
        if str(exc) == self._last_failure:
            return  # the same failure again (retried while the store is away): already on screen
        self._last_failure = str(exc)
        self.notify(f"cannot read the ledger: {exc}", severity="error", timeout=10)

    def apply(self, snap: Snapshot) -> None:
        """Hand a snapshot to every screen that shows one."""
        if snap is self.snap and self.loaded.is_set() and self.live.verified:
            return
        t = time.perf_counter()
        self.snap, self._last_failure = snap, ""
        self.ix = browse.index(snap, self.ix)
        self.main.show(snap, self.ix, self.live.verified)
        for screen in self.screen_stack:
            if getattr(screen, "IS_TREND", False):
                screen.show(snap)
        if self._painted_once.is_set():  # the first paint never waits for the Monte Carlo
            self.lows.request(snap)
        self.timings["apply_s"] = time.perf_counter() - t
        if not self.loaded.is_set():
            self.timings["first_apply_s"] = self.timings["apply_s"]
            self.call_after_refresh(self._painted)
        self.loaded.set()

    def _painted(self) -> None:
        self.timings.setdefault("first_paint_at", time.perf_counter())
        if not self._painted_once.is_set():  # after the first paint, not competing with it for the processor
            threading.Thread(target=warm_up_forms, daemon=True).start()
        self._painted_once.set()
        self.lows.request(self.snap)

    def _lows_changed(self) -> None:
        if self.main is not None and self.main.snap is not None:
            self.main.lows_changed()

    # --- writing (forms call these; LedgerError goes back to the form) ---------------------------------
    def write(self, kind: str, data: dict[str, Any], *, at=None, by=None, note=None):
        t = time.perf_counter()
        stored, warnings = self.live.record(kind, data, at=at, by=by, note=note)
        self.timings["write_s"] = time.perf_counter() - t
        self._after_write(stored, warnings, t)
        return stored, warnings

    def write_correction(self, target: int, changes: dict[str, Any], *, reason: str, by=None):
        t = time.perf_counter()
        stored, warnings = self.live.correct(target, changes, reason=reason, by=by)
        self.timings["write_s"] = time.perf_counter() - t
        self._after_write(stored, warnings, t)
        return stored, warnings

    def _after_write(self, stored: dict, warnings: list[str], t0: float) -> None:
        self.recorded(stored["seq"], stored["kind"], warnings, t0)

    def recorded(self, seq: int, kind: str, warnings: list[str], t0: float | None = None) -> None:
        """An entry was appended (here or by a service a worker called): show it and say so."""
        window = self.main.window
        window.cursor_seq, window.follow, window.anchor = seq, True, None  # show the new entry
        self.apply(self.live.snapshot())
        if t0 is not None:
            self.timings["record_to_panels_s"] = time.perf_counter() - t0
        self.notify(f"recorded entry #{seq} ({kind})", timeout=4)
        for w in warnings:
            self.notify(w, severity="warning", timeout=12)

    # --- screens the main view opens ---------------------------------------------------------------------
    def open_form(self, kind: str, arg: Any = None) -> None:
        if self.snap is None:
            return
        if kind in NEEDS_PENDING and not self.snap.resolved.pending:
            self.notify(f"no pending plans to {kind}", severity="warning")
            return
        if kind == "rebaseline" and not any(e.kind == "gauge" for e in self.snap.entries):
            self.notify("no gauge readings to adopt: record one with g", severity="warning")
            return
        self.push_screen(FORMS[kind](arg) if kind in ("correct", "decide", "rebaseline") else FORMS[kind]())

    def open_handover(self) -> None:
        if self.snap is not None:
            from .screens.handover import HandoverScreen  # noqa: PLC0415 - the reports load when asked for
            self.push_screen(HandoverScreen())

    def open_check(self, plan: int | None = None) -> None:
        if self.snap is not None:
            self.push_screen(CheckDialog(plan))

    def open_trend(self) -> None:
        if self.snap is not None:
            from .screens.trend import TrendScreen  # noqa: PLC0415 - plotext loads when first asked for
            self.push_screen(TrendScreen())

    def action_open_fleet(self) -> None:
        if self.main is not None and self.screen is self.main:  # never from a form or dialog
            self.open_fleet()

    def open_fleet(self) -> None:
        """Leave this craft for the fleet screen (``run_console`` opens it), when a fleet is configured."""
        if not self.fleet_folder:
            self.notify("no fleet configured: set PROPLEDGER_FLEET to a folder of ledgers or a "
                        "postgresql:// database, or run 'propledger fleet --fleet DIR|URL'", severity="warning", timeout=8)
            return
        self.exit("fleet")

    def open_alerts(self) -> None:
        if self.snap is not None:
            chain = ("intact" if self.live.verified else "being checked") if self.snap.integrity is None \
                else f"BROKEN: {self.snap.integrity}"
            notes = [self.lows.summary()] if self.lows.error else []
            status = self.main.status or {"warnings": list(self.snap.warnings), "pending_plans": []}
            self.push_screen(AlertsDialog(chain, notes + [w for w in shown_warnings(status, self.lows.result)
                                                           if not w.startswith("INTEGRITY")]))

    def open_engines(self) -> None:
        """Engine detail: thruster totals against qualified life (services.pulses)."""
        if self.snap is not None:
            from ..services.pulses import totals  # noqa: PLC0415
            from .dialogs.engines import EnginesDialog  # noqa: PLC0415

            snap = self.snap
            self.push_screen(EnginesDialog(snap.craft, totals(snap.craft, snap.resolved.events, snap.replay)))

    def open_detail(self, seq: int) -> None:
        d = browse.detail(self.snap, self.ix, seq, self.live.record_of(seq))
        plan = seq if d["kind"] == "plan" else d.get("data", {}).get("plan") if d["kind"] in ("approve", "reject") \
            else None
        d["approval_now"] = self.main.approvals.get(plan) if plan is not None else None
        if d["kind"] == "gauge":
            from ..services.records import adopted_by  # noqa: PLC0415
            d["adopted_by"] = adopted_by(self.snap.resolved, seq)
        self.push_screen(DetailDialog(d), callback=self._detail_done)

    def _detail_done(self, result) -> None:
        if result and result[0] == "check":
            self.open_check(result[1])
        elif result:
            self.open_form(result[0], result[1])

    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        # Textual's own screenshot command saves an SVG to a folder the user did not choose: left out
        yield from (c for c in super().get_system_commands(screen) if "screenshot" not in c.title.lower())
        if self.main is None:
            return
        for a in actions.ACTIONS + actions.OFF_BAR:
            yield SystemCommand(f"{a.title}  ({a.key_display or a.key})", a.help, getattr(self.main, f"action_{a.name}"))
        yield SystemCommand(f"Open the fleet screen  ({FLEET_KEY})",
                            "every craft of the fleet ($PROPLEDGER_FLEET: a folder or a database) by attention; Enter opens one",
                            self.open_fleet)


def make_app(path: str, demo: bool = False) -> LedgerConsole:
    """The console on ``path`` (tests build it here and drive it with ``run_test``)."""
    return LedgerConsole(path, demo)


def run_console(args) -> int:
    path = resolve_path(getattr(args, "ledger", None))
    app = make_app(path, bool(getattr(args, "demo", False)))
    app.run()
    if app.return_value == "fleet" and app.fleet_folder:
        from ..services.fleetsource import open_source  # noqa: PLC0415
        from .fleet import run_fleet  # noqa: PLC0415

        return run_fleet(open_source(app.fleet_folder))
    return int(app.return_code or 0)
