"""Progress display for long steps: shown on a terminal only, silenced by --quiet.

Backed by rich.  Steps are either spinners (``step``) or bars over a known
number of chunks (``track``).
"""

from __future__ import annotations

import os
import sys
import time
from contextlib import contextmanager


class Progress:
    """Progress on stderr.

    Parameters
    ----------
    enabled : bool, optional
        Default: only when stderr is a terminal.
    """

    def __init__(self, enabled: bool | None = None):
        self.enabled = sys.stderr.isatty() if enabled is None else bool(enabled)
        self._console = None
        #: label -> seconds of every finished step; printed to stderr when MESHPRESS_TIMINGS=1.
        self.timings: dict[str, float] = {}
        self._print_timings = os.environ.get("MESHPRESS_TIMINGS") == "1"

    def _get_console(self):
        if self._console is None:
            from rich.console import Console

            self._console = Console(stderr=True)
        return self._console

    @contextmanager
    def step(self, label: str):
        """Spinner around a step of unknown length."""
        t0 = time.perf_counter()
        try:
            if not self.enabled:
                yield
            else:
                with self._get_console().status(label + " ..."):
                    yield
        finally:
            dt = time.perf_counter() - t0
            self.timings[label] = self.timings.get(label, 0.0) + dt
            if self._print_timings:
                sys.stderr.write(f"[timing] {label}: {dt:.3f} s\n")

    def track(self, iterable, total: int, label: str):
        """Iterate with a progress bar over ``total`` items."""
        if not self.enabled:
            yield from iterable
            return
        from rich.progress import BarColumn, Progress as RichProgress, TextColumn, TimeRemainingColumn

        with RichProgress(
            TextColumn("{task.description}"), BarColumn(), TextColumn("{task.percentage:>3.0f}%"),
            TimeRemainingColumn(), console=self._get_console(), transient=True,
        ) as bar:
            task = bar.add_task(label, total=total)
            for item in iterable:
                yield item
                bar.advance(task)
