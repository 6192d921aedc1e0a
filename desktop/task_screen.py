"""What the screens about the whole project (Budget, Export, Track) share: a notice, a task bar
and a runner that does one engine call at a time, refusing another until it is done."""

from __future__ import annotations

from collections.abc import Callable
from functools import partial

from PySide6.QtWidgets import QWidget

from desktop.notice import Notice
from desktop.task_bar import TaskBar
from desktop.task_runner import Job, TaskRunner
from desktop.workers import Work


class TaskScreen(QWidget):
    """Base of a screen that runs one engine call at a time; subclasses lay out and show."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.notice = Notice()
        self.task_bar = TaskBar()
        self.runner = TaskRunner(self, self.notice, self.task_bar)
        self.runner.started.connect(lambda: self.set_busy(True))
        self.runner.ended.connect(self._ended)

    def start_task(self, work: Work, doing: str, done: Callable[[object], None]) -> bool:
        """Run ``work`` on a worker and hand its result to ``done``; False while busy."""
        stopped = partial(self.task_cancelled, doing)
        job = Job(work, doing, done, stopped=stopped, failed=lambda _: self.task_failed())
        return self.runner.start(job)

    def task_cancelled(self, doing: str) -> None:
        """Say that the work stopped (subclasses may say more)."""
        self.notice.say(f"Stopped {doing}; nothing was kept.", "info")

    def task_failed(self) -> None:
        """Called after a task failed, once the notice says why (subclasses tidy up)."""

    def set_busy(self, busy: bool) -> None:
        """Enable or disable the controls that start work (subclasses)."""

    def task_ended(self) -> None:
        """Called once a task has ended and the screen is free again (subclasses)."""

    def _ended(self) -> None:
        self.set_busy(self.runner.busy)
        self.task_ended()
