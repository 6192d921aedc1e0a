"""A progress bar with the engine's message and a Cancel button, following one task at a time."""

from __future__ import annotations

from functools import partial

from PySide6.QtWidgets import QHBoxLayout, QLabel, QProgressBar, QPushButton, QWidget

from desktop.workers import Task

_STEPS = 1000


class TaskBar(QWidget):
    """Shows while a task runs; Cancel asks the engine to stop at its next step."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.task: Task | None = None
        self.bar = QProgressBar()
        self.bar.setRange(0, _STEPS)
        self.bar.setTextVisible(False)
        self.bar.setFixedWidth(220)
        self.message = QLabel()
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.clicked.connect(self._cancel)
        layout = QHBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.bar)
        layout.addWidget(self.message, 1)
        layout.addWidget(self.cancel_button)
        self.hide()

    def follow(self, task: Task) -> None:
        """Show ``task``'s progress until it ends."""
        self.task = task
        self.bar.setValue(0)
        self.message.setText(f"{task.doing[:1].upper()}{task.doing[1:]}…")
        self.cancel_button.setEnabled(True)
        task.progressed.connect(self._progressed)
        task.ended.connect(partial(self._ended, task))
        self.show()

    def _progressed(self, fraction: float, message: str) -> None:
        self.bar.setValue(round(fraction * _STEPS))
        if message:
            self.message.setText(message)

    def _cancel(self) -> None:
        if self.task is not None:
            self.task.cancel()
            self.cancel_button.setEnabled(False)
            self.message.setText("Stopping at the next step…")

    def _ended(self, task: Task) -> None:
        if self.task is task:
            self.task = None
            self.hide()
