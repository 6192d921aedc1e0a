"""The Track step's month table: energy on one tab, cost on the other, under the tracking
workbook's own headers (:func:`desktop.tracking_jobs.month_table`).

Months not begun leave the actual and the variance blank; an unknown figure of a month that
has begun shows "–"; an actual outside the adopted range is tinted.
"""

from __future__ import annotations

import math

import pandas as pd
from PySide6.QtGui import QBrush, QColor
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QTableWidget,
    QTableWidgetItem,
    QTabWidget,
    QWidget,
)

from desktop.number_cells import number_cell
from desktop.palette import TONES
from desktop.tracking_jobs import not_begun, split_columns
from desktop.understood_view import NUMBER_ROLE

OUTSIDE_WORD = "outside"
TEXT_COLUMNS = ("month", "status")


def _shown_header(header: str) -> str:
    """A header on two lines so the columns stay narrow ("variance\\n(kWh)")."""
    return header.replace(": ", ":\n", 1).replace(" (", "\n(", 1)


def _table() -> QTableWidget:
    table = QTableWidget(0, 0)
    table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
    table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
    table.verticalHeader().hide()
    table.setWordWrap(False)
    table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
    # rows one line high, so a fiscal year's twelve months fit a laptop screen
    table.verticalHeader().setDefaultSectionSize(table.fontMetrics().height() + 8)
    return table


class TrackingTable(QTabWidget):
    """The months of one tracked thing: budget, actual, variance and its parts."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.energy = _table()
        self.cost = _table()
        self.addTab(self.energy, "Energy (kWh)")
        self.addTab(self.cost, "Cost")
        self.frame = pd.DataFrame()

    def clear(self) -> None:
        for table in (self.energy, self.cost):
            table.clear()
            table.setRowCount(0)
            table.setColumnCount(0)
        self.frame = pd.DataFrame()

    def show_frame(self, frame: pd.DataFrame, currency: str | None) -> None:
        """Show a month table (see :func:`desktop.tracking_jobs.month_table`)."""
        self.frame = frame
        energy, cost = split_columns(frame)
        self._fill(self.energy, frame, energy)
        self._fill(self.cost, frame, cost)
        self.setTabEnabled(1, bool(cost))
        self.setTabText(1, f"Cost ({currency})" if cost and currency else "Cost")
        self.setTabToolTip(1, "" if cost else "The adopted budget was not priced.")
        if not cost:
            self.setCurrentIndex(0)

    def _fill(self, table: QTableWidget, frame: pd.DataFrame, columns: list[str]) -> None:
        table.clear()
        table.setColumnCount(len(columns))
        table.setHorizontalHeaderLabels([_shown_header(column) for column in columns])
        table.setRowCount(len(frame) if columns else 0)
        blank = not_begun(frame).to_numpy()
        for row, values in enumerate(frame[columns].itertuples(index=False)):
            for column, (header, value) in enumerate(zip(columns, values, strict=True)):
                table.setItem(row, column, _cell(header, value, blank[row]))

    def value(self, month: str, header: str) -> float | str | None:
        """What the table shows for ``month`` under the workbook's ``header``: the number
        (NaN where "–", None where blank), or the words of a text column."""
        table = self.cost if header.startswith("cost:") else self.energy
        column = [_shown_header(h) for h in self._headers(table)].index(_shown_header(header))
        row = self.frame["month"].tolist().index(month)
        cell = table.item(row, column)
        if header in TEXT_COLUMNS or header.startswith(OUTSIDE_WORD):
            return cell.text()
        return None if cell.text() == "" else cell.data(NUMBER_ROLE)

    @staticmethod
    def _headers(table: QTableWidget) -> list[str]:
        return [table.horizontalHeaderItem(c).text() for c in range(table.columnCount())]


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def _cell(header: str, value, blank: bool) -> QTableWidgetItem:
    """A text cell for the month, status and range columns, else a number cell (blank in a
    month not begun, "–" where a begun month's figure is unknown)."""
    if header in TEXT_COLUMNS or header.startswith(OUTSIDE_WORD):
        cell = QTableWidgetItem("" if _missing(value) else str(value))
        if value == OUTSIDE_WORD:
            cell.setBackground(QBrush(QColor(TONES["problem"][0])))
        return cell
    if blank and _missing(value):
        return QTableWidgetItem("")
    return number_cell(None if _missing(value) else float(value), 0)
