"""Low bounds for the panels: the Monte Carlo (``uncertainty.confidence_status``) run off the UI thread.

Sampling a long ledger takes seconds, so the console paints the nominal figures first and the low bounds
when the worker is done; each change of the ledger starts a new run and drops the one under way (its
progress callback stops it at the next chunk). Until the run for the snapshot on screen has finished the
panels show '…' and the progress, never the previous snapshot's bounds beside the new nominal figures.
"""
from __future__ import annotations

import os
import threading
import time
from functools import partial
from typing import Any, Callable

from ..errors import LedgerError
from ..services import approvalrule, uncertainty
from ..services.probtext import prob_text
from ..services.forecast import forecast
from ..services.ledger import Snapshot

CONFIDENCE = uncertainty.DEFAULT_CONFIDENCE
SAMPLES = uncertainty.DEFAULT_SAMPLES
SEED = uncertainty.DEFAULT_SEED


NICE = 5
"""Scheduling niceness of the sampling threads: enough for the screen's thread to win a contended core,
not so much that a loaded machine starves the bounds (project choice)."""


class Stale(Exception):
    """The worker was cancelled (the ledger moved on, or the console is closing): stop sampling."""


def cancellable(report: Callable[[int, int], None]) -> Callable[[int, int], None]:
    """A progress callback for ``montecarlo.simulate`` that stops a cancelled worker between chunks."""
    from textual.worker import get_current_worker  # noqa: PLC0415

    worker = get_current_worker()

    def progress(done: int, total: int) -> None:
        if worker.is_cancelled:
            raise Stale()
        report(done, total)
    return progress


def one_line(exc: BaseException) -> str:
    """An error as one line: a LedgerError's own words; anything else with its type (an internal fault)."""
    text = str(exc).splitlines()[0] if str(exc) else ""
    return text if isinstance(exc, LedgerError) and text else f"{type(exc).__name__}: {text}".rstrip(": ")


def post(app, fn, *args) -> None:
    """``call_from_thread`` that does nothing once the app has stopped (a worker may outlive it)."""
    try:
        app.call_from_thread(fn, *args)
    except RuntimeError:
        pass


PROGRESS_EVERY_S = 0.25
"""The sampling percentage is redrawn at most this often: each redraw repaints the state panels."""


class LowBounds:
    """The latest ledger state asked for (its chain head), how far its run has got, its result or error.

    One run at a time: a run cannot be stopped half way (the Monte Carlo's thread pool finishes the chunks
    it was given), so a change during a run only queues the newest state, which runs when that one ends;
    five quick entries cost two runs, not five at once competing with the screen for the processor."""

    def __init__(self, app, on_change: Callable[[], None]) -> None:
        self.app = app
        self.on_change = on_change
        self.key: tuple | None = None
        self.result: dict[str, Any] | None = None
        self.error: str | None = None
        self.fraction: float | None = None
        self.seconds: float | None = None
        self.running = False
        self.queued: Snapshot | None = None
        self.runs = 0
        self._progress_drawn_at = 0.0
        self.asked_at = self.shown_at = 0.0  # perf_counter of the last request and of its bounds shown

    @staticmethod
    def key_of(snap: Snapshot) -> tuple:
        return (snap.path, snap.head, len(snap.entries))

    def request(self, snap: Snapshot) -> bool:
        """Ask for the bounds of ``snap`` unless they are done or under way for the same ledger state."""
        key = self.key_of(snap)
        if key == self.key:
            return False
        self.key, self.result, self.error, self.fraction = key, None, None, 0.0
        self.asked_at = time.perf_counter()
        if self.running:
            self.queued = snap
        else:
            self._start(snap)
        self.on_change()
        return True

    def _start(self, snap: Snapshot) -> None:
        self.running, self.queued = True, None
        self.runs += 1
        # name and description given: Textual would otherwise repr() the snapshot (0.26 s at 20k entries)
        self.app.run_worker(partial(self._run, snap, self.key), name="low bounds", description="low bounds",
                            thread=True, group="low-bounds", exit_on_error=False)

    def _run(self, snap: Snapshot, key: tuple) -> None:
        lower_priority()
        t = time.perf_counter()

        def report(done: int, total: int) -> None:
            if key != self.key:
                raise Stale()  # superseded: stop at this chunk (a single-threaded run stops at once)
            post(self.app, self._progress, key, done / total)
        try:
            res = uncertainty.confidence_status(snap, CONFIDENCE, SAMPLES, SEED, progress=cancellable(report))
        except Stale:
            post(self.app, self._ended, key, None, None, 0.0)
        except Exception as exc:  # noqa: BLE001 - shown in the panel; the console carries on without bounds
            post(self.app, self._ended, key, None, one_line(exc), 0.0)
        else:
            post(self.app, self._ended, key, res, None, time.perf_counter() - t)

    def _progress(self, key: tuple, fraction: float) -> None:
        if key == self.key and self.result is None:
            self.fraction = fraction
            now = time.perf_counter()
            if now - self._progress_drawn_at >= PROGRESS_EVERY_S:  # a redraw per chunk would slow the forms
                self._progress_drawn_at = now
                self.on_change()

    def _ended(self, key: tuple, res: dict[str, Any] | None, error: str | None, seconds: float) -> None:
        self.running = False
        if key == self.key and (res is not None or error is not None):
            self.result, self.error, self.seconds, self.fraction = res, error, seconds, None
            self.on_change()
            self.shown_at = time.perf_counter()
        elif self.queued is not None:
            self._start(self.queued)

    # --- what the panels show ----------------------------------------------------------------------
    @property
    def busy(self) -> bool:
        return self.fraction is not None

    def title(self) -> str:
        pct = f"{CONFIDENCE:.0%}"
        if self.result is not None:
            return f"low = {pct} bound"
        if self.error is not None:
            return "low bounds failed"
        return f"low {pct} ⟳ {100 * (self.fraction or 0.0):.0f}%"

    def summary(self) -> str:
        if self.result is not None:
            r = self.result
            return (f"reserves intact {prob_text(r['reserves_probability'], r['samples'])} · {r['samples']:,} samples, "
                    f"seed {r['seed']}")
        if self.error is not None:
            return f"low bounds not available: {self.error}"
        return f"sampling for the {CONFIDENCE:.0%} low bounds… {100 * (self.fraction or 0.0):.0f}%"

    def marker(self) -> str | None:
        """What a low cell holds when there is no figure: '…' while sampling, '-' after a failure."""
        return "-" if self.error is not None else None


def lower_priority() -> None:
    """Let the screen's thread come first: the Monte Carlo's thread (and the pool threads it starts, which
    inherit it on Linux) run at a lower scheduling priority. Nothing happens where that is not possible."""
    try:
        os.setpriority(os.PRIO_PROCESS, threading.get_native_id(), NICE)
    except (AttributeError, OSError):
        pass


def panel_inputs(snap: Snapshot, status: dict[str, Any], tanks: list[dict[str, Any]], lows: LowBounds
                 ) -> tuple[list[dict], list[dict], list[dict], dict[int, str]]:
    """Tank rows, engine rows and forecast rows with low bounds (when known), and plan approval states."""
    res = lows.result
    miss = lows.marker()
    tank_rows = [dict(t, usable_low_kg=res["tanks"][t["id"]]["usable_low_kg"] if res else miss,
                      gauge=status["tanks"][t["id"]].get("gauge")) for t in tanks]
    engines = {eid: dict(e, engine=eid, dv_free_low_m_s=res["engines"][eid]["dv_free_low_m_s"] if res else miss)
               for eid, e in status["engines"].items()}
    if res:
        fc = forecast(snap, dict(status, engines=engines, confidence=res["confidence"]))
    else:
        fc = status["forecast"]
        if miss:
            fc = dict(fc, engines=[dict(f, low={"runs_out": miss}) for f in fc["engines"]])
    approvals: dict[int, str] = {}
    history = approvalrule.by_plan(snap.entries) if approvalrule.rule(snap.craft) else {}
    for p in snap.resolved.pending:
        if res and str(p.seq) in res["approvals"]:
            a = res["approvals"][str(p.seq)]
            approvals[p.seq] = approvalrule.words(a) if a["approval"] == approvalrule.PARTIAL else a["approval"]
        else:
            d = snap.resolved.decisions.get(p.seq)
            approve = "unchecked" if lows.error is not None else "approved?"
            need = approvalrule.needed(snap.craft, p)
            have = len(approvalrule.current(history.get(p.seq, []))) if need > 1 else need
            if d is not None and d.kind == "approve" and have < need:  # too few names even before any re-check
                approve = approvalrule.words({"approval": approvalrule.PARTIAL, "approvals_counted": have,
                                              "approvals_needed": need})
            approvals[p.seq] = "none" if d is None else approve if d.kind == "approve" else "rejected"
    return tank_rows, list(engines.values()), with_shares(snap, fc["engines"]), approvals


def with_shares(snap: Snapshot, rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Forecast rows with ``shares_with``: the other routine engines drawing on the same tanks (each date
    assumes only its own routine spend, so such dates are optimistic; the command line says the same)."""
    from ..core.forecast import shared_tanks  # noqa: PLC0415

    pairs = shared_tanks(snap.craft, [f["engine"] for f in rows if f.get("dv_per_year_m_s")])
    out = []
    for f in rows:
        others = sorted({b if a == f["engine"] else a for a, b, _ in pairs if f["engine"] in (a, b)})
        out.append(dict(f, shares_with=others) if others else f)
    return out


def plan_verdicts(res: dict[str, Any] | None) -> dict[str, dict[str, Any]]:
    """Plan id (text) -> its check now at the console's confidence, once the low-bound run has finished."""
    if not res:
        return {}
    return {pid: a["verdict_now"] for pid, a in res.get("approvals", {}).items() if a.get("verdict_now")}


def shown_warnings(status: dict[str, Any], res: dict[str, Any] | None) -> list[str]:
    """The one warning list (services.warnings): the replay's warnings plus every failing pending plan."""
    from ..services.warnings import combined  # noqa: PLC0415

    return combined(status["warnings"], status["pending_plans"], plan_verdicts(res))
