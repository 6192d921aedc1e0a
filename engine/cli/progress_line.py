"""Progress of a long command on one line of a terminal's stderr (nothing when not a terminal)."""

from __future__ import annotations

import time
from typing import TextIO

from engine.progress import Progress

#: Fewest seconds between two redraws of the line.
_REDRAW_SECONDS = 0.2


def terminal_progress(stream: TextIO) -> Progress | None:
    """A progress that redraws ``"  42 %  'Library' done (3 of 8), about 40 s left"`` on
    ``stream`` when it is a terminal; None otherwise, so scripts and pipes see no noise."""
    if not stream.isatty():
        return None
    last = [0.0]

    def show(fraction: float, message: str) -> None:
        now = time.monotonic()
        if now - last[0] < _REDRAW_SECONDS and fraction < 1.0:
            return
        last[0] = now
        line = f"{100 * fraction:4.0f} %  {message}"[:100]
        stream.write("\r" + line.ljust(100) + ("\n" if fraction >= 1.0 else ""))
        stream.flush()

    return Progress(show)
