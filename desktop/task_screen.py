"""What the screens about the whole project (Budget, Export) share: a notice, a task bar and
one worker task at a time, stopped before the window closes."""

from __future__ import annotations

from collections.abc import Callable
from functools import partial

from PySide6.QtWidgets import QWidget

from desktop.notice import Notice
from desktop.task_bar import TaskBar
from desktop.workers import SHUTDOWN_SECONDS, Task, Work


class TaskScreen(QWidget):
    """Base of a screen that runs one engine call at a time; subclasses lay out and show."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.task: Task | None = None
        self.notice = Notice()
        self.task_bar = TaskBar()

    def start_task(self, work: Work, doing: str, done: Callable[[object], None]) -> bool:
        """Run ``work`` on a worker and hand its result to ``done``; False while busy."""
        if self.task is not None:
            self.notice.say(f"Wait until {self.task.doing} is done.", "info")
            return False
        self.notice.clear()
        task = Task(work, doing)
        task.succeeded.connect(done)
        task.failed.connect(self.notice.show_failure)
        task.cancelled.connect(partial(self.task_cancelled, doing))
        task.ended.connect(self._ended)
        self.task = task
        self.task_bar.follow(task)
        self.set_busy(True)
        task.start()
        return True

    def task_cancelled(self, doing: str) -> None:
        """Say that the work stopped (subclasses may say more)."""
        self.notice.say(f"Stopped {doing}; nothing was kept.", "info")

    def set_busy(self, busy: bool) -> None:
        """Enable or disable the controls that start work (subclasses)."""

    def task_ended(self) -> None:
        """Called once a task has ended and the screen is free again (subclasses)."""

    def _ended(self) -> None:
        self.task = None
        self.set_busy(False)
        self.task_ended()

    def shutdown(self) -> None:
        """Stop the running work and wait for its thread (before the window closes)."""
        if self.task is not None:
            self.task.cancel()
            self.task.wait(SHUTDOWN_SECONDS)

    def closeEvent(self, event) -> None:
        self.shutdown()
        super().closeEvent(event)
