"""A progress bar for long computations: shown on a terminal once the work looks like taking over ~1 s.

``with Progress("sampling") as progress: compute(..., progress=progress)`` - the callback receives
(done, total). Nothing is drawn when stderr is not a terminal or when the first chunk shows the whole job
will finish quickly; the bar is transient, so it leaves no trace in the output once done.
"""
from __future__ import annotations

import sys
import time

SHOW_AFTER_S = 1.0


class Progress:
    def __init__(self, label: str, stream=None, show_after: float = SHOW_AFTER_S):
        self.label = label
        self.stream = stream if stream is not None else sys.stderr
        self.show_after = show_after
        self.bar = None
        self.task = None
        self.started = time.monotonic()

    def __enter__(self) -> "Progress":
        self.started = time.monotonic()
        return self

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            elapsed = time.monotonic() - self.started
            expected = elapsed * total / max(done, 1)
            if done >= total or expected < self.show_after or not self._terminal():
                return
            from rich.console import Console  # noqa: PLC0415
            from rich.progress import BarColumn, Progress as Bar, TextColumn, TimeRemainingColumn  # noqa: PLC0415

            self.bar = Bar(TextColumn("{task.description}"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
                           TimeRemainingColumn(), console=Console(file=self.stream), transient=True)
            self.bar.start()
            self.task = self.bar.add_task(self.label, total=total)
        self.bar.update(self.task, completed=done)

    def _terminal(self) -> bool:
        try:
            return self.stream.isatty()
        except (AttributeError, ValueError):
            return False

    def __exit__(self, *exc) -> bool:
        if self.bar is not None:
            self.bar.stop()
        return False
