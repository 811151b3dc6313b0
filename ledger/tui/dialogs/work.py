"""Long work from a dialog (a Monte Carlo, a gauge estimate, a handover with its backup) in a worker thread.

The dialog stays responsive and shows what is running with a progress bar. Work that only computes is
dropped when its dialog closes or newer work starts; work that writes keeps its dialog open (escape is
refused) until it is done, so a closed dialog never hides a write still under way.
"""
from __future__ import annotations

from functools import partial
from typing import Any, Callable

from rich.text import Text
from textual.widgets import Static

from ..lows import Stale, cancellable, one_line, post

BAR = 20


def progress_text(label: str, fraction: float | None) -> Text:
    """'⟳ label ██████░░░░ 40%' (the percentage says it in words as well as the bar)."""
    out = Text("⟳ ", style="bold yellow")
    out.append(label)
    if fraction is not None:
        n = int(round(BAR * max(0.0, min(1.0, fraction))))
        out.append("  ")
        out.append("█" * n, style="yellow")
        out.append("░" * (BAR - n), style="#6c6c6c")
        out.append(f" {100 * fraction:3.0f}%")
    return out


class WorkMixin:
    """For a Screen with a ``#work`` Static: ``start_work(fn, done, label)`` runs ``fn(progress)`` in a thread."""

    busy: str | None = None
    busy_writes = False

    def start_work(self, fn: Callable[[Callable[[int, int], None]], Any], done: Callable[[Any], None], label: str,
                   *, writes: bool = False, failed: Callable[[str], None] | None = None) -> None:
        self.busy, self.busy_writes = label, writes
        self._work_token = token = object()
        self.show_progress(label, 0.0 if not writes else None)
        self.run_worker(partial(self._work, token, fn, done, failed), name=label, description=label, thread=True,
                        exclusive=True, group="dialog-work", exit_on_error=False)

    def _work(self, token, fn, done, failed) -> None:
        label = self.busy or ""
        progress = cancellable(lambda d, t: post(self.app, self._progress, token, label, d / max(t, 1)))
        try:
            result = fn(progress)
        except Stale:
            return
        except Exception as exc:  # noqa: BLE001 - one line in the dialog, never a traceback over the console
            post(self.app, self._finish, token, failed or self.work_failed, one_line(exc))
            return
        post(self.app, self._finish, token, done, result)

    def _progress(self, token, label: str, fraction: float) -> None:
        if token is getattr(self, "_work_token", None) and self.is_attached:
            self.show_progress(label, fraction)

    def _finish(self, token, then: Callable[[Any], None], value: Any) -> None:
        if token is not getattr(self, "_work_token", None):
            return
        self.busy, self.busy_writes, self._work_token = None, False, None
        if self.is_attached:
            self.show_progress(None, None)
            then(value)

    def stop_work(self) -> bool:
        """Drop computing work (True), or refuse while a write is under way (False)."""
        if self.busy_writes:
            self.app.notify(f"{self.busy}: wait until it is done", severity="warning", timeout=3)
            return False
        if self.busy:
            self.workers.cancel_group(self, "dialog-work")
            self.busy, self._work_token = None, None
            self.show_progress(None, None)
        return True

    def show_progress(self, label: str | None, fraction: float | None) -> None:
        box = self.query("#work")
        if box:
            box.first(Static).update(progress_text(label, fraction) if label else "")
            box.first(Static).display = bool(label)

    def work_failed(self, message: str) -> None:
        box = self.query("#form-error")
        if box:
            box.first(Static).update(f"✗ {message}")
