"""A one-line progress bar on stderr, drawn only when stderr is a terminal.

It shows the fraction done, the count, the rate and the time left::

    model years [##########··········]  50%  1,500/3,000  812/s  0:02 left

The rate and time left count only the work done in this run (files skipped
because they are already complete do not inflate the rate). A transient build
counts model years once however many products (files) each has: each file of a
range of model years advances the bar by its share of those years. When the stream
is not a terminal (a log file, a pipe, a test) nothing is written at all.
"""

from __future__ import annotations

import sys
import time
from typing import TextIO

#: Seconds between redraws (the bar is redrawn at most this often, and at the end).
REDRAW_INTERVAL_S = 0.2
BAR_WIDTH = 24


def format_duration(seconds: float) -> str:
    """``H:MM:SS`` or ``M:SS`` for a number of seconds (``--:--`` when unknown)."""
    if not seconds >= 0 or seconds == float("inf"):
        return "--:--"
    seconds = int(round(seconds))
    hours, rest = divmod(seconds, 3600)
    minutes, secs = divmod(rest, 60)
    return f"{hours}:{minutes:02d}:{secs:02d}" if hours else f"{minutes}:{secs:02d}"


class Progress:
    """Progress of ``total`` units of work (model years), shown on a terminal.

    Parameters
    ----------
    total : int
        Units of work of the whole task.
    label : str
        Name of the units, shown before the bar.
    done : float
        Units already done before this run (shown, but not counted in the rate).
    stream : file, optional
        Where to draw (default ``sys.stderr``).
    enabled : bool, optional
        Force the bar on or off; default: on only if ``stream.isatty()``.
    """

    def __init__(
        self,
        total: int,
        label: str = "model years",
        *,
        done: float = 0,
        stream: TextIO | None = None,
        enabled: bool | None = None,
        clock=time.monotonic,
    ) -> None:
        self.total = max(int(total), 0)
        self.label = label
        self.done = float(done)
        self.stream = stream if stream is not None else sys.stderr
        if enabled is None:
            isatty = getattr(self.stream, "isatty", None)
            enabled = bool(isatty and isatty())
        self.enabled = enabled
        self._clock = clock
        self._start = clock()
        self._start_done = self.done
        self._last_draw = -float("inf")
        self._width = 0

    def advance(self, n: float) -> None:
        """Count ``n`` more units done (fractions allowed) and redraw if it is time to."""
        self.done += float(n)
        if self.enabled and self._clock() - self._last_draw >= REDRAW_INTERVAL_S:
            self._draw()

    def line(self) -> str:
        """Return the text of the bar as it stands."""
        total = max(self.total, 1)
        fraction = min(self.done / total, 1.0)
        filled = int(round(fraction * BAR_WIDTH))
        elapsed = self._clock() - self._start
        new = self.done - self._start_done
        rate = new / elapsed if elapsed > 0 and new > 0 else 0.0
        left = (self.total - self.done) / rate if rate > 0 else float("nan")
        return (
            f"{self.label} [{'#' * filled}{'.' * (BAR_WIDTH - filled)}] "
            f"{100 * fraction:3.0f}%  {round(self.done):,}/{self.total:,}  "
            f"{rate:,.0f}/s  {format_duration(left)} left"
        )

    def _draw(self) -> None:
        text = self.line()
        pad = max(self._width - len(text), 0)
        self._width = len(text)
        self.stream.write("\r" + text + " " * pad)
        self.stream.flush()
        self._last_draw = self._clock()

    def close(self) -> None:
        """Draw the final state and end the line (nothing if disabled or nothing was drawn)."""
        if not self.enabled:
            return
        self._draw()
        self.stream.write("\n")
        self.stream.flush()

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
