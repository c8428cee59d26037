"""A small progress display for long work, on standard error.

=============================  ================================================
Name                           What it is
=============================  ================================================
:class:`Progress`              counts steps and redraws one status line
:func:`progress_for`           the display a command uses: silent unless
                               standard error is a terminal and not ``--quiet``
:data:`SHOW_AFTER`             seconds of work before anything is shown
=============================  ================================================

Nothing is written when the stream is not a terminal (a log file, a pipe, a
CI job): a progress line there is only noise. On a terminal the line appears
only once the work has taken :data:`SHOW_AFTER` seconds, so a quick run
prints nothing, and it is redrawn at most every :data:`REDRAW_EVERY` seconds.
The line is cleared when the work is done, so the command's own output (one
line per file written) is all that stays on screen.
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from typing import TextIO

SHOW_AFTER = 0.5
REDRAW_EVERY = 0.1
BAR_WIDTH = 24
LINE_WIDTH = 79  # the step text is cut so the line never wraps on an 80-column terminal


class Progress:
    """Steps of known or unknown number, shown as ``[#####.....] 3/12 describing Ozone``.

    ``enabled=False`` makes every call a no-op. ``clock`` is injectable so
    tests need no sleeping.
    """

    __slots__ = ("_clock", "_done", "_enabled", "_last_draw", "_shown", "_start", "_stream", "total")

    def __init__(
        self,
        total: int | None = None,
        *,
        stream: TextIO | None = None,
        enabled: bool = True,
        clock: Callable[[], float] = time.monotonic,
    ) -> None:
        self.total = total
        self._stream = stream if stream is not None else sys.stderr
        self._enabled = enabled
        self._clock = clock
        self._start = clock()
        self._last_draw = -REDRAW_EVERY
        self._done = 0
        self._shown = False

    def step(self, what: str) -> None:
        """Start the next step, described by ``what`` ("describing Ozone")."""
        if not self._enabled:
            return
        self._done += 1
        now = self._clock()
        if now - self._start < SHOW_AFTER or now - self._last_draw < REDRAW_EVERY:
            return
        self._last_draw = now
        self._draw(what)

    def _draw(self, what: str) -> None:
        if self.total:
            done = min(self._done, self.total)
            filled = round(BAR_WIDTH * (done - 1) / self.total)
            head = f"[{'#' * filled}{'.' * (BAR_WIDTH - filled)}] {done}/{self.total} "
        else:
            head = f"[{self._done}] "
        line = (head + what)[:LINE_WIDTH]
        self._stream.write("\r" + line.ljust(LINE_WIDTH))
        self._stream.flush()
        self._shown = True

    def finish(self) -> None:
        """Clear the line (when one was shown)."""
        if self._shown:
            self._stream.write("\r" + " " * LINE_WIDTH + "\r")
            self._stream.flush()
            self._shown = False


def progress_for(total: int | None, *, quiet: bool, stream: TextIO | None = None) -> Progress:
    """The progress display for a command: silent with ``quiet`` or when ``stream`` is not a terminal."""
    target = stream if stream is not None else sys.stderr
    try:
        terminal = bool(target.isatty())
    except (AttributeError, ValueError):  # a closed or unusual stream is not a terminal
        terminal = False
    return Progress(total, stream=target, enabled=terminal and not quiet)
