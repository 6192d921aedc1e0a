"""Run engine calls off the window's thread, with progress, cancel and errors as Qt signals.

A :class:`Task` wraps one engine call ``work(progress)``. The call runs on a pool thread with
a plain :class:`engine.progress.Progress` whose listener hands each step back to the window's
thread; :meth:`Task.cancel` asks the engine to stop at its next step. Whatever happens ends in
exactly one of ``succeeded``, ``failed`` or ``cancelled``, then ``ended``, all emitted on the
window's thread so that slots may touch widgets.
"""

from __future__ import annotations

import threading
import traceback
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from PySide6.QtCore import QObject, Qt, QThreadPool, Signal, Slot

from engine.errors import InputError, ProjectError
from engine.progress import Cancelled, Progress

Work = Callable[[Progress], Any]


@dataclass(frozen=True)
class Failure:
    """Why a task stopped: ``kind`` is "input" (the user can fix it) or "internal" (a bug).

    ``details`` holds the traceback of an internal error, for a report; it is empty otherwise.
    """

    kind: str
    message: str
    details: str = ""

    @classmethod
    def from_exception(cls, error: BaseException, doing: str) -> Failure:
        """A user error keeps its own message; anything else is an internal error."""
        if isinstance(error, InputError | ProjectError):
            return cls("input", str(error))
        details = "".join(traceback.format_exception(error))
        summary = f"{type(error).__name__}: {error}".strip().rstrip(":")
        return cls(
            "internal",
            f"Internal error while {doing} ({summary}). This is a fault in Loadledger, not in "
            "your files; nothing was changed by the step that failed.",
            details,
        )


class Task(QObject):
    """One engine call on a pool thread; start it once, cancel it at any time.

    Parameters
    ----------
    work
        Called on a pool thread as ``work(progress)``; its return value is the result.
    doing
        What the work does, in a few words ("reading files"), for messages.
    """

    progressed = Signal(float, str)
    succeeded = Signal(object)
    failed = Signal(object)
    cancelled = Signal()
    ended = Signal()

    _from_worker = Signal(str, object)

    def __init__(self, work: Work, doing: str, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.doing = doing
        self._work = work
        self._progress = Progress(self._report)
        self._started = False
        self._finished = threading.Event()
        self._from_worker.connect(self._deliver, Qt.ConnectionType.QueuedConnection)

    @property
    def running(self) -> bool:
        """Started and not yet finished on its thread."""
        return self._started and not self._finished.is_set()

    def start(self, pool: QThreadPool | None = None) -> None:
        """Queue the work on ``pool`` (the application's shared pool by default)."""
        if self._started:
            raise RuntimeError("a task runs once; make a new Task to run the work again")
        self._started = True
        (pool or QThreadPool.globalInstance()).start(self._run)

    def cancel(self) -> None:
        """Ask the engine to stop at its next progress step (safe from any thread)."""
        self._progress.cancel()

    def wait(self, seconds: float) -> bool:
        """Block until the work has finished on its thread; False on timeout."""
        return not self._started or self._finished.wait(seconds)

    def _report(self, fraction: float, message: str) -> None:
        self._from_worker.emit("progressed", (fraction, message))

    def _run(self) -> None:
        try:
            outcome = ("succeeded", self._work(self._progress))
        except Cancelled:
            outcome = ("cancelled", None)
        except Exception as error:
            outcome = ("failed", Failure.from_exception(error, self.doing))
        self._from_worker.emit(*outcome)
        self._finished.set()

    @Slot(str, object)
    def _deliver(self, event: str, payload: object) -> None:
        if event == "progressed":
            self.progressed.emit(*payload)
            return
        if event == "cancelled":
            self.cancelled.emit()
        else:
            getattr(self, event).emit(payload)
        self.ended.emit()
