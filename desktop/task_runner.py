"""The one runner of a screen's background work: start, cancel, restart-latest and shutdown.

A screen never handles a :class:`~desktop.workers.Task` itself. It hands its runner a
:class:`Job` — the engine call, what it does in words, and what to do with the outcome — and
the runner runs one job at a time on a worker, shows its progress and Cancel button in the
screen's task bar, and says a failure in the screen's notice (an internal error's traceback
only behind the notice's details button). Asked for more work while busy, a screen chooses:

* :meth:`TaskRunner.start` refuses ("Wait until … is done."): for changes that must not overlap;
* :meth:`TaskRunner.request` supersedes: the running job is cancelled, its outcome dropped, and
  the newest request runs once it has stopped (restart-latest: views that follow the controls);
* :meth:`TaskRunner.after` calls back once the running job has ended: for work that waits its
  turn without stopping what runs.

Closing the screen (or :meth:`TaskRunner.shutdown`, which the window calls for every screen)
cancels the work and waits for its thread, so no worker outlives the window.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from functools import partial
from typing import Any

from PySide6.QtCore import QEvent, QObject, Signal
from PySide6.QtWidgets import QWidget

from desktop.notice import Notice
from desktop.task_bar import TaskBar
from desktop.workers import Failure, Task, Work

#: How long closing the window waits for a running job to notice it was cancelled.
SHUTDOWN_SECONDS = 30.0


@dataclass(frozen=True)
class Job:
    """One piece of engine work a screen asks for, and what becomes of its outcome.

    ``work`` is called on a worker as ``work(progress)``; ``doing`` says what it does in a few
    words ("reviewing 'Library'"). ``done`` takes the result. After a cancel the person asked
    for, ``stopped`` is called; after a failure (already said in the notice), ``failed``. None of
    these is called for a job a newer request superseded. ``ended`` is called whatever happened,
    superseded or not (to show what the work may have saved); ``progressed`` takes each step
    besides the task bar.
    """

    work: Work
    doing: str
    done: Callable[[Any], None]
    stopped: Callable[[], None] | None = None
    failed: Callable[[Failure], None] | None = None
    ended: Callable[[], None] | None = None
    progressed: Callable[[float, str], None] | None = None


class TaskRunner(QObject):
    """Runs one :class:`Job` at a time for the screen ``owner``, which it stops on closing.

    ``started`` is emitted when a job starts; ``ended`` when one has ended, after the newest
    waiting request (if any) has started, so :attr:`busy` tells whether work goes on.
    """

    started = Signal()
    ended = Signal()

    def __init__(self, owner: QWidget, notice: Notice, bar: TaskBar) -> None:
        super().__init__(owner)
        self.notice = notice
        self.bar = bar
        self._task: Task | None = None
        self._job: Job | None = None
        self._waiting: Job | None = None
        self._follow_up: Callable[[], None] | None = None
        owner.installEventFilter(self)

    @property
    def task(self) -> Task | None:
        """The task running now, if any."""
        return self._task

    @property
    def busy(self) -> bool:
        """A job is running."""
        return self._task is not None

    def has(self, job: Job) -> bool:
        """``job`` is running or waiting to run."""
        return job is self._job or job is self._waiting

    def refusal(self) -> str | None:
        """Why new work must wait, in words; None when nothing runs."""
        return None if self._task is None else f"Wait until {self._task.doing} is done."

    def start(self, job: Job) -> bool:
        """Run ``job`` now; while busy, say why not in the notice and return False."""
        refusal = self.refusal()
        if refusal is not None:
            self.notice.say(refusal, "info")
            return False
        self._begin(job)
        return True

    def request(self, job: Job) -> None:
        """Run ``job`` now, or once the running job has stopped: that one is cancelled and its
        outcome dropped, as is any request waiting before this one."""
        if self._task is None:
            self._begin(job)
            return
        self._waiting = job
        self._task.cancel()

    def after(self, call: Callable[[], None]) -> None:
        """Call ``call`` once the running job has ended (at once when idle); a later call
        replaces it, and a cancel drops it."""
        if self._task is None:
            call()
        else:
            self._follow_up = call

    def cancel(self) -> None:
        """Stop the running job at its next step; nothing waits to run after it."""
        self._waiting = None
        self._follow_up = None
        if self._task is not None:
            self._task.cancel()

    def shutdown(self) -> None:
        """Cancel the work and wait for its thread (before the window or project closes)."""
        self.cancel()
        if self._task is not None:
            self._task.wait(SHUTDOWN_SECONDS)

    def eventFilter(self, watched: QObject, event: QEvent) -> bool:
        """Shut down when the owner closes; the owner still gets the event."""
        if event.type() == QEvent.Type.Close:
            self.shutdown()
        return False

    def _begin(self, job: Job) -> None:
        self.notice.clear()
        task = Task(job.work, job.doing, self)
        task.succeeded.connect(partial(self._succeeded, job))
        task.failed.connect(partial(self._failed, job))
        task.cancelled.connect(partial(self._cancelled, job))
        task.ended.connect(partial(self._ended, task, job))
        if job.progressed is not None:
            task.progressed.connect(job.progressed)
        self._task, self._job = task, job
        self.bar.follow(task)
        task.start()
        self.started.emit()

    def _succeeded(self, job: Job, result: object) -> None:
        if self._waiting is None:
            job.done(result)

    def _failed(self, job: Job, failure: Failure) -> None:
        if self._waiting is None:
            self.notice.show_failure(failure)
            if job.failed is not None:
                job.failed(failure)

    def _cancelled(self, job: Job) -> None:
        if self._waiting is None:
            self._follow_up = None
            if job.stopped is not None:
                job.stopped()

    def _ended(self, task: Task, job: Job) -> None:
        self._task = self._job = None
        task.deleteLater()
        if job.ended is not None:
            job.ended()
        waiting, self._waiting = self._waiting, None
        if waiting is not None:
            self._begin(waiting)
        elif self._follow_up is not None:
            follow_up, self._follow_up = self._follow_up, None
            follow_up()
        self.ended.emit()
