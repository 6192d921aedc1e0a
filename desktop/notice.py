"""An inline notice: what happened, in words, with a traceback only behind a button."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QFrame,
    QHBoxLayout,
    QLabel,
    QPlainTextEdit,
    QToolButton,
    QVBoxLayout,
    QWidget,
)

from desktop.palette import TONES
from desktop.workers import Failure


class Notice(QFrame):
    """A banner above a screen's work area; hidden until there is something to say."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("notice")
        self.tone = ""
        self.text = QLabel()
        self.text.setWordWrap(True)
        self.text.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.details_button = QToolButton()
        self.details_button.setText("Details for a report")
        self.details_button.setCheckable(True)
        self.details = QPlainTextEdit()
        self.details.setReadOnly(True)
        self.details.setMaximumHeight(160)
        self.details.hide()
        self.details_button.toggled.connect(self.details.setVisible)
        dismiss = QToolButton()
        dismiss.setText("✕")
        dismiss.setToolTip("Dismiss")
        dismiss.setAutoRaise(True)
        dismiss.clicked.connect(self.clear)
        top = QHBoxLayout()
        top.addWidget(self.text, 1)
        top.addWidget(self.details_button, 0, Qt.AlignmentFlag.AlignTop)
        top.addWidget(dismiss, 0, Qt.AlignmentFlag.AlignTop)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(10, 6, 6, 6)
        layout.addLayout(top)
        layout.addWidget(self.details)
        self.hide()

    def say(self, message: str, tone: str = "info", details: str = "") -> None:
        """Show ``message`` in ``tone`` ("problem", "info" or "done")."""
        background, border = TONES[tone]
        self.tone = tone
        self.setStyleSheet(
            f"QFrame#notice {{ background: {background}; border: 1px solid {border};"
            " border-radius: 4px; }"
        )
        self.text.setText(message)
        self.details.setPlainText(details)
        self.details_button.setChecked(False)
        self.details_button.setVisible(bool(details))
        self.show()

    def show_failure(self, failure: Failure) -> None:
        """A task's failure: the message, and for internal errors the hidden traceback."""
        self.say(failure.message, "problem", failure.details)

    def clear(self) -> None:
        self.tone = ""
        self.text.clear()
        self.details.clear()
        self.hide()
