"""The recent projects under the steps while no project is open: double-click one to open it."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import QLabel, QListWidget, QListWidgetItem, QVBoxLayout, QWidget


class RecentList(QWidget):
    """Names the recent project files, newest first; ``chosen`` when one is activated
    (double-click or Enter)."""

    chosen = Signal(Path)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.files = QListWidget()
        self.files.itemActivated.connect(self._activated)
        self.note = QLabel()
        self.note.setWordWrap(True)
        self.note.setStyleSheet("color: #5a5f66;")
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 8, 0, 0)
        layout.addWidget(QLabel("<b>Recent projects</b>"))
        layout.addWidget(self.files, 1)
        layout.addWidget(self.note)

    def show_paths(self, paths: list[Path], note: str) -> None:
        """List ``paths`` (their names; the full path on hover) with ``note`` below."""
        self.files.clear()
        for path in paths:
            item = QListWidgetItem(path.name)
            item.setToolTip(str(path))
            item.setData(Qt.ItemDataRole.UserRole, str(path))
            self.files.addItem(item)
        hint = "Double-click one to open it." if paths else "Projects you open are listed here."
        self.note.setText(f"{note}\n{hint}" if note else hint)

    def names(self) -> list[str]:
        """The names listed, top first."""
        return [self.files.item(row).text() for row in range(self.files.count())]

    def _activated(self, item: QListWidgetItem) -> None:
        self.chosen.emit(Path(item.data(Qt.ItemDataRole.UserRole)))
