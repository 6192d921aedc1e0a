"""The Cleaning screen's data-quality summary: the engine's figures for the log as it stands."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QLabel,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.cleaning_words import QUALITY_ROWS, quality_words
from desktop.understood_view import NUMBER_ROLE

QUALITY_HOW = (
    "Coverage is the share of the meter's intervals, first reading to last, that hold a value. "
    "Energy added and removed sum the changes interval by interval, so sharing a catch-up "
    "reading out shows as both."
)


class QualityPanel(QWidget):
    """:meth:`engine.cleaning.MeterReview.quality` as a two-column table.

    Each value cell holds the engine's number (``NUMBER_ROLE``) behind the rounded words.
    """

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.table = QTableWidget(len(QUALITY_ROWS), 2)
        self.table.setHorizontalHeaderLabels(("Data quality", "Value"))
        self.table.verticalHeader().hide()
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionMode(QAbstractItemView.SelectionMode.NoSelection)
        header = self.table.horizontalHeader()
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        header.setSectionResizeMode(1, QHeaderView.ResizeMode.ResizeToContents)
        for row, (_, words, _) in enumerate(QUALITY_ROWS):
            self.table.setItem(row, 0, QTableWidgetItem(words))
            self.table.setItem(row, 1, QTableWidgetItem("–"))
        self.table.resizeRowsToContents()
        height = self.table.horizontalHeader().height() + 2 * self.table.frameWidth()
        height += sum(self.table.rowHeight(row) for row in range(len(QUALITY_ROWS)))
        self.table.setFixedHeight(height)
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.table)
        layout.addWidget(_caption(QUALITY_HOW))

    def show_quality(self, quality: dict) -> None:
        for row, (key, _, _) in enumerate(QUALITY_ROWS):
            value = self.table.item(row, 1)
            value.setText(quality_words(key, quality[key]))
            value.setData(NUMBER_ROLE, float(quality[key]))
            value.setTextAlignment(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)

    def clear(self) -> None:
        for row in range(len(QUALITY_ROWS)):
            value = self.table.item(row, 1)
            value.setText("–")
            value.setData(NUMBER_ROLE, None)

    def value(self, key: str) -> float | None:
        """The number shown for engine key ``key`` (None before a review)."""
        for row, (name, _, _) in enumerate(QUALITY_ROWS):
            if name == key:
                return self.table.item(row, 1).data(NUMBER_ROLE)
        raise KeyError(key)


def _caption(words: str) -> QLabel:
    label = QLabel(words)
    label.setWordWrap(True)
    label.setStyleSheet("color: #5a5f66;")
    return label
