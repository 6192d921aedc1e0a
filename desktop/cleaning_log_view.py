"""The Cleaning screen's log: a meter's logged steps in order, each with Undo/Redo and Remove."""

from __future__ import annotations

from functools import partial

import pandas as pd
from PySide6.QtCore import Signal
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHBoxLayout,
    QHeaderView,
    QLabel,
    QPushButton,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.cleaning_words import step_meaning, step_name, step_range_words
from desktop.palette import INK

HEADERS = ("#", "Step and site time", "")
UNDONE_INK = QColor(INK)
UNDONE_INK.setAlpha(120)


class CleaningLogView(QWidget):
    """Shows the steps; ``switched`` (step id, active) and ``removal_asked`` (step id) ask for
    changes, which the screen makes through the engine."""

    switched = Signal(int, bool)
    removal_asked = Signal(int)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.steps: list[dict] = []
        self.toggles: list[QPushButton] = []
        self.removers: list[QPushButton] = []
        self.title = QLabel("<b>Cleaning log</b>")
        self.hint = QLabel()
        self.hint.setWordWrap(True)
        self.hint.setStyleSheet("color: #5a5f66;")
        self.table = QTableWidget(0, len(HEADERS))
        self.table.setHorizontalHeaderLabels(HEADERS)
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        self.table.setWordWrap(True)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.Stretch)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.title)
        layout.addWidget(self.table, 1)
        layout.addWidget(self.hint)

    def show_steps(self, steps: list[dict], timezone: str, interval: pd.Timedelta) -> None:
        """List ``steps`` (the project's log of one meter, undone ones included) in order."""
        self.steps = list(steps)
        self.toggles, self.removers = [], []
        self.table.setRowCount(len(self.steps))
        for row, stored in enumerate(self.steps):
            self._fill_row(row, stored, timezone, interval)
        self.table.resizeRowsToContents()
        active = sum(stored["active"] for stored in self.steps)
        self.title.setText(f"<b>Cleaning log</b> ({active} of {len(self.steps)} active)")
        self.hint.setText(
            "Steps apply in this order to the readings as recorded, which are never changed. "
            "Undo switches a step off and keeps it; Remove deletes it from the project."
            if self.steps
            else "No steps logged for this meter yet: apply a fix to log one."
        )

    def _fill_row(self, row: int, stored: dict, timezone: str, interval: pd.Timedelta) -> None:
        active = bool(stored["active"])
        name = step_name(stored["kind"])
        tip = "\n".join(filter(None, (stored.get("note", ""), step_meaning(stored["kind"]))))
        what = name if active else f"{name} (undone)"
        when = step_range_words(stored["params"], timezone, interval)
        for column, words in enumerate((str(row + 1), f"{what}\n{when}")):
            item = QTableWidgetItem(words)
            item.setToolTip(tip)
            if not active:
                item.setForeground(QBrush(UNDONE_INK))
                struck = QFont(item.font())
                struck.setStrikeOut(column == 1)
                item.setFont(struck)
            self.table.setItem(row, column, item)
        toggle = QPushButton("Undo" if active else "Redo")
        toggle.setToolTip(
            "Switch this step off; the readings it changed return to what the log makes of "
            "them without it."
            if active
            else "Switch this step on again."
        )
        toggle.clicked.connect(partial(self._switch, int(stored["id"]), not active))
        remove = QPushButton("Remove")
        remove.setToolTip("Delete this step from the project's log for good.")
        remove.clicked.connect(partial(self._ask_removal, int(stored["id"])))
        buttons = QWidget()
        pair = QHBoxLayout(buttons)
        pair.setContentsMargins(2, 0, 2, 0)
        pair.addWidget(toggle)
        pair.addWidget(remove)
        self.table.setCellWidget(row, 2, buttons)
        self.toggles.append(toggle)
        self.removers.append(remove)

    def _switch(self, step_id: int, active: bool, *_clicked) -> None:
        self.switched.emit(step_id, active)

    def _ask_removal(self, step_id: int, *_clicked) -> None:
        self.removal_asked.emit(step_id)

    def clear(self, words: str = "") -> None:
        self.steps, self.toggles, self.removers = [], [], []
        self.table.setRowCount(0)
        self.title.setText("<b>Cleaning log</b>")
        self.hint.setText(words)

    def set_busy(self, busy: bool) -> None:
        """Refuse changes while the engine is working on the previous one."""
        for button in (*self.toggles, *self.removers):
            button.setEnabled(not busy)
