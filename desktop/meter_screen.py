"""What every screen about one meter of the open project shares: the meter picker, the notice
and task bars, and following the session's project (one worker task at a time)."""

from __future__ import annotations

from PySide6.QtWidgets import QComboBox, QWidget

from desktop.notice import Notice
from desktop.session import Session
from desktop.task_bar import TaskBar
from desktop.workers import SHUTDOWN_SECONDS, Task
from engine.project import Project


class MeterScreen(QWidget):
    """Base of the screens that show one meter; subclasses lay out, refresh and show."""

    #: What the screen says while no project is open.
    NO_PROJECT = "Open a project to see its meters."

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.session = session
        self.task: Task | None = None
        self._wanted = None
        self.meter = QComboBox()
        self.meter.setMinimumContentsLength(18)
        self.meter.activated.connect(self.refresh)
        self.notice = Notice()
        self.task_bar = TaskBar()

    def follow_session(self) -> None:
        """Start following the session's project (call at the end of the subclass's init)."""
        self.session.subscribe(self._project_changed)
        self._project_changed(self.session.project)

    def _project_changed(self, project: Project | None) -> None:
        self.meter.clear()
        if project is None:
            self._wanted = None
            if self.task is not None:
                self.task.cancel()
            self._show_empty(self.NO_PROJECT)
            return
        self.meter.addItems(project.meter_names())
        self.refresh()

    def show_meter(self, name: str) -> None:
        """Show meter ``name`` of the open project."""
        self.meter.setCurrentText(name)
        self.refresh()

    def shutdown(self) -> None:
        """Stop the running work and wait for its thread (before the window closes)."""
        if self.task is not None:
            self._wanted = None
            self.task.cancel()
            self.task.wait(SHUTDOWN_SECONDS)

    def closeEvent(self, event) -> None:
        self.shutdown()
        super().closeEvent(event)

    def refresh(self) -> None:
        raise NotImplementedError

    def _show_empty(self, words: str) -> None:
        raise NotImplementedError
