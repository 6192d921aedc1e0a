"""What every screen about one meter of the open project shares: the meter picker, the notice
and task bars, following the session's project, and a runner for its work on a worker."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QComboBox, QWidget

from desktop.notice import Notice
from desktop.project_changes import LABELS, Reversible
from desktop.session import Session
from desktop.task_bar import TaskBar
from desktop.task_runner import TaskRunner
from desktop.undo import undo_for
from engine.project import Project
from engine.steps.labels import meter_labels


class MeterBox(QComboBox):
    """The meter picker: shows each meter's display name, answers with its raw name (the key
    the engine knows it by)."""

    def show_meters(self, project: Project) -> None:
        """List the project's meters by display name, keeping the one chosen."""
        chosen = self.currentText()
        self.clear()
        for name, label in meter_labels(project).items():
            self.addItem(label.shown, name)
            if label.shown != name:
                tip = f"column '{name}' in the meter file"
                self.setItemData(self.count() - 1, tip, Qt.ItemDataRole.ToolTipRole)
        self.setCurrentText(chosen)

    def shown(self) -> str:
        """The chosen meter as the person knows it: its display name."""
        return self.itemText(self.currentIndex())

    def shown_as(self, name: str) -> str:
        """How meter ``name`` (raw) is listed: its display name, else ``name``."""
        position = self.findData(name)
        return self.itemText(position) if position >= 0 else name

    def currentText(self) -> str:
        """The raw name of the meter chosen ("" when none)."""
        name = self.currentData()
        return name if isinstance(name, str) else super().currentText()

    def setCurrentText(self, name: str) -> None:
        """Choose the meter whose raw name is ``name``."""
        position = self.findData(name)
        if position >= 0:
            self.setCurrentIndex(position)


class MeterScreen(QWidget):
    """Base of the screens that show one meter; subclasses lay out, refresh and show."""

    #: What the screen says while no project is open.
    NO_PROJECT = "Open a project to see its meters."
    #: Kinds of change (:mod:`desktop.undo`) after whose undo or redo the screen looks again.
    FOLLOWS: tuple[str, ...] = ()

    def __init__(self, session: Session, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.session = session
        self.undo = undo_for(session)
        self.meter = MeterBox()
        self.meter.setMinimumContentsLength(18)
        self.meter.activated.connect(self.refresh)
        self.notice = Notice()
        self.task_bar = TaskBar()
        self.runner = TaskRunner(self, self.notice, self.task_bar)

    def follow_session(self) -> None:
        """Start following the session's project (call at the end of the subclass's init)."""
        self.session.subscribe(self._project_changed)
        self.undo.changed.connect(self._undone_or_redone)
        self._project_changed(self.session.project)

    def _undone_or_redone(self, change: Reversible) -> None:
        """Name meters afresh after a change of names; look again after a change followed."""
        project = self.session.project
        if project is None:
            return
        if change.kind == LABELS:
            self.meter.show_meters(project)
        if change.kind in self.FOLLOWS:
            self.refresh()

    def _project_changed(self, project: Project | None) -> None:
        self.meter.clear()
        if project is None:
            self.runner.cancel()
            self._show_empty(self.NO_PROJECT)
            return
        self.meter.show_meters(project)
        self.refresh()

    def show_meter(self, name: str) -> None:
        """Show meter ``name`` of the open project."""
        self.meter.setCurrentText(name)
        self.refresh()

    def refresh(self) -> None:
        raise NotImplementedError

    def _show_empty(self, words: str) -> None:
        raise NotImplementedError
