"""Plain, Qt-free progress reporting and cancellation for long engine calls.

Engine functions that take a while accept ``progress: Progress | None``. They call
:meth:`Progress.step` now and then; the caller (the window's worker thread, the command line
or a test) observes the fraction and message, and may call :meth:`Progress.cancel` from another
thread, after which the next ``step`` raises :class:`Cancelled`.
"""

from __future__ import annotations

import threading
from collections.abc import Callable

Listener = Callable[[float, str], None]


class Cancelled(Exception):
    """Raised inside engine work after the caller asked to cancel it."""


class Progress:
    """Progress of one piece of work, from 0 to 1, with an optional listener."""

    def __init__(self, listener: Listener | None = None) -> None:
        self._listener = listener
        self._cancel = threading.Event()
        self.fraction = 0.0
        self.message = ""

    def cancel(self) -> None:
        """Ask the work to stop at its next step (safe to call from any thread)."""
        self._cancel.set()

    @property
    def cancelled(self) -> bool:
        return self._cancel.is_set()

    def step(self, fraction: float, message: str = "") -> None:
        """Record progress; raise :class:`Cancelled` if cancellation was asked for."""
        if self._cancel.is_set():
            raise Cancelled(message or "cancelled")
        self.fraction = min(max(float(fraction), 0.0), 1.0)
        self.message = message
        if self._listener is not None:
            self._listener(self.fraction, message)

    def part(self, start: float, stop: float) -> Progress:
        """A child whose 0..1 maps onto ``start..stop`` of this one and shares its cancel flag."""
        child = Progress(lambda f, m: self.step(start + (stop - start) * f, m))
        child._cancel = self._cancel
        return child


def reworded(progress: Progress | None, words: Callable[[str], str]) -> Progress | None:
    """``progress`` with each message put through ``words`` before it is reported (the same
    fractions and cancel flag); None stays None."""
    if progress is None:
        return None
    child = Progress(lambda f, m: progress.step(f, words(m)))
    child._cancel = progress._cancel
    return child


def step(progress: Progress | None, fraction: float, message: str = "") -> None:
    """Report to ``progress`` when there is one; engine code calls this rather than branching."""
    if progress is not None:
        progress.step(fraction, message)
