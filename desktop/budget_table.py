"""The Budget screen's monthly table: a block per campus, utility roll-up and meter.

It lays out the run the way the finance workbook's "Monthly" sheet does, from the same engine
helpers (:func:`engine.export.finance_tables.budgeted` and ``figure_columns``), so the screen
and the workbook always show the same figures under the same headers.
"""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtGui import QBrush, QColor, QFont
from PySide6.QtWidgets import (
    QAbstractItemView,
    QHeaderView,
    QTableWidget,
    QTableWidgetItem,
    QVBoxLayout,
    QWidget,
)

from desktop.number_cells import number_cell
from desktop.understood_view import NUMBER_ROLE
from engine.budget.result import BudgetRun
from engine.export.finance_tables import (
    PRICED_SCOPE,
    READ_UNIT_HEADER,
    TOTAL_LABEL,
    Budgeted,
    budgeted,
    figure_columns,
)
from engine.meter_labels import Labels
from engine.words import counted

HEADING_TINT = "#eef0f2"
#: Data role on a row's first cell: (budgeted name, period) of the row, None on headings.
ROW_ROLE = Qt.ItemDataRole.UserRole + 2


def item_title(item: Budgeted) -> str:
    """How a budgeted thing is named on screen, e.g. "natural gas (roll-up of 2 meters)".

    The campus row adds every utility's energy in kWh (thermal kWh for gas and chilled
    water), and says so; a roll-up's priced meters only say which meters they leave out.
    """
    if item.scope == "meter" and item.source == "bills":
        return f"{item.shown_name} (bill account: budgeted from its bills)"
    if item.scope == "meter":
        read_in = f", read in {item.read_unit}" if item.read_unit else ""
        return f"{item.shown_name} (meter{read_in})"
    if item.scope == "campus":
        return f"Campus, all utilities added ({_members(item)})"
    if item.scope == PRICED_SCOPE:
        where = "Campus" if item.name == "campus" else item.name.replace("_", " ").capitalize()
        return f"{where}, priced meters only: energy and cost of {_members(item)}; " + (
            item.left_out_words
        )
    return f"{item.shown_name} (roll-up of {_members(item)})"


def _members(item: Budgeted) -> str:
    """What a roll-up adds: "8 meters", or "5 meters and 1 bill account" with accounts."""
    words = counted(item.meters - item.accounts, "meter")
    return words + (f" and {counted(item.accounts, 'bill account')}" if item.accounts else "")


def row_key(item: Budgeted) -> str:
    """The name :meth:`BudgetTable.value` finds an item's rows by: its name, or for a
    roll-up's priced meters only, e.g. "campus, priced meters only"."""
    return f"{item.name}, {PRICED_SCOPE}" if item.scope == PRICED_SCOPE else item.name


def _bold(cell: QTableWidgetItem) -> None:
    font = QFont(cell.font())
    font.setBold(True)
    cell.setFont(font)


class BudgetTable(QWidget):
    """Month rows and a total row under a heading row for every budgeted thing."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.table = QTableWidget(0, 0)
        self.table.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.verticalHeader().hide()
        self.table.setWordWrap(False)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.headers: list[str] = []
        layout = QVBoxLayout(self)
        layout.setContentsMargins(0, 0, 0, 0)
        layout.addWidget(self.table)

    def clear(self) -> None:
        self.table.clear()
        self.table.clearSpans()
        self.table.setRowCount(0)
        self.table.setColumnCount(0)
        self.headers = []

    def show_run(self, run: BudgetRun, labels: Labels | None = None) -> None:
        """Lay out every budgeted thing of ``run`` with the workbook's figure headers, meters
        named and shown in the units they were read in by ``labels``."""
        columns = figure_columns(run, labels)
        self.headers = ["month", *columns.shown]
        items = budgeted(run, labels)
        rows = sum(len(item.months) + 2 for item in items)
        self.table.clear()
        self.table.clearSpans()  # clear() keeps the heading spans of the run shown before
        self.table.setColumnCount(len(self.headers))
        self.table.setHorizontalHeaderLabels(self.headers)
        self.table.setRowCount(rows)
        row = 0
        for item in items:
            self._heading(row, item)
            row += 1
            for period in [*item.months, item.total]:
                label = TOTAL_LABEL if period.period == "total" else period.period
                first = QTableWidgetItem(label)
                first.setData(ROW_ROLE, (row_key(item), period.period))
                cells = [first]
                figures = columns.figures(period, item.read_unit)
                for header in self.headers[1:]:
                    cells.append(number_cell(figures.get(header), 0))
                if item.read_unit is not None:  # the unit beside the number: units differ
                    read_in = cells[self.headers.index(READ_UNIT_HEADER)]
                    read_in.setText(f"{read_in.text()} {item.read_unit}")
                for column, cell in enumerate(cells):
                    if period.period == "total":
                        _bold(cell)
                    self.table.setItem(row, column, cell)
                row += 1

    def _heading(self, row: int, item: Budgeted) -> None:
        cell = QTableWidgetItem(item_title(item))
        _bold(cell)
        cell.setBackground(QBrush(QColor(HEADING_TINT)))
        self.table.setSpan(row, 0, 1, len(self.headers))
        self.table.setItem(row, 0, cell)

    def value(self, name: str, period: str, header: str) -> float:
        """The number shown for ``name`` in ``period`` ("YYYY-MM" or "total") under ``header``."""
        column = self.headers.index(header)
        for row in range(self.table.rowCount()):
            first = self.table.item(row, 0)
            if first is not None and first.data(ROW_ROLE) == (name, period):
                return self.table.item(row, column).data(NUMBER_ROLE)
        raise KeyError((name, period))

    def titles(self) -> list[str]:
        """The heading rows' words, top to bottom."""
        return [
            self.table.item(row, 0).text()
            for row in range(self.table.rowCount())
            if self.table.item(row, 0) is not None
            and self.table.item(row, 0).data(ROW_ROLE) is None
        ]
