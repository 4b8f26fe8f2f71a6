"""A one-line count of finished Monte Carlo trials, with the time left, on a terminal.

Like :class:`netnoise.outputs.progress.ProgressLine`: nothing unless the
stream is a terminal, nothing in the first second, at most four rewrites a
second, and :meth:`TrialProgress.clear` wipes the line before the report.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import TextIO

__all__ = ["TrialProgress"]


class TrialProgress:
    """``progress`` callback of :func:`netnoise.montecarlo`: counts finished trials."""

    def __init__(
        self,
        stream: TextIO,
        total: int,
        *,
        delay_s: float = 1.0,
        interval_s: float = 0.25,
        clock: Callable[[], float] = time.monotonic,
    ) -> None:
        self.stream = stream
        self.total = total
        self.enabled = bool(getattr(stream, "isatty", lambda: False)())
        self.delay_s = delay_s
        self.interval_s = interval_s
        self.clock = clock
        self.done = 0
        self._start = clock()
        self._last = -math.inf
        self._width = 0

    def text(self, now: float) -> str:
        elapsed = now - self._start
        line = f"netnoise: {self.done} of {self.total} trials"
        if 0 < self.done < self.total:
            left = elapsed * (self.total - self.done) / self.done
            line += f", about {left:.0f} s left"
        return line

    def __call__(self, count: int) -> None:
        self.done += count
        if not self.enabled:
            return
        now = self.clock()
        if now - self._start < self.delay_s or now - self._last < self.interval_s:
            return
        self._last = now
        text = self.text(now)
        self.stream.write("\r" + text.ljust(self._width))
        self.stream.flush()
        self._width = len(text)

    def clear(self) -> None:
        if self._width:
            self.stream.write("\r" + " " * self._width + "\r")
            self.stream.flush()
            self._width = 0
