"""A one-line count of solved frequencies (or sweep points, or Monte Carlo trials) on the terminal, for long runs.

A 100,000-node network takes a minute or more; without a sign of life a
user cannot tell a slow run from a stuck one.  :class:`ProgressLine` is
the ``progress`` callback of :func:`netnoise.analysis.analyze`: it writes
nothing unless its stream is a terminal, nothing during the first second
(most runs are over by then), rewrites one line at most four times a
second, and :meth:`ProgressLine.clear` wipes it before the report.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import TextIO

__all__ = ["ProgressLine"]


class ProgressLine:
    """Counts solved frequencies; shows the count on ``stream`` if it is a terminal."""

    def __init__(
        self,
        stream: TextIO,
        *,
        unit: str = "frequencies",
        total: int | None = None,
        delay_s: float = 1.0,
        interval_s: float = 0.25,
        clock: Callable[[], float] = time.monotonic,
    ) -> None:
        self.stream = stream
        self.unit = unit
        self.total = total
        self.enabled = bool(getattr(stream, "isatty", lambda: False)())
        self.delay_s = delay_s
        self.interval_s = interval_s
        self.clock = clock
        self.solved = 0
        self._start = clock()
        self._last = -math.inf
        self._width = 0  # characters now on the line

    def __call__(self, count: int, total: int | None = None) -> None:
        """``count`` more done; with a total (here or at construction), the time left is estimated."""
        self.solved += count
        total = total if total is not None else self.total
        if not self.enabled:
            return
        now = self.clock()
        if now - self._start < self.delay_s or now - self._last < self.interval_s:
            return
        self._last = now
        elapsed = now - self._start
        if total:
            text = f"netnoise: {self.solved} of {total} {self.unit}"
            if 0 < self.solved < total:
                text += f", about {elapsed * (total - self.solved) / self.solved:.0f} s left"
        else:
            text = f"netnoise: {self.solved} {self.unit} solved, {elapsed:.0f} s"
        self.stream.write("\r" + text.ljust(self._width))
        self.stream.flush()
        self._width = len(text)

    def clear(self) -> None:
        """Wipe the line (if one was written), leaving the cursor at its start."""
        if self._width:
            self.stream.write("\r" + " " * self._width + "\r")
            self.stream.flush()
            self._width = 0
